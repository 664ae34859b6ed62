"""JSON element records at scale: the column-wise builder against the user's own limits.

The limit a record names must be the one the user set for that element's region (a
TOML-style profile given here, not a value taken from our code), and the rest of the
elements must name the main profile's limit.
"""

from __future__ import annotations

import json

import numpy as np

from benchmarks.meshgen import distorted_plate
from meshaudit import BUILTIN_PROFILES, Limit, api, with_limit
from meshaudit.outputs import json_report


def test_breach_limits_follow_the_region_profile():
    mesh = distorted_plate(6000, seed=11)
    in_region = np.arange(0, 6000, 2)
    mesh.cell_sets = {"rim": [in_region]}
    # user limits, chosen here: max_angle warn at 100 deg in the region, 170 elsewhere
    standard = BUILTIN_PROFILES["standard"]
    rim = with_limit(standard, "quad", "max_angle", Limit(100.0, 175.0, "this test"))
    main = with_limit(standard, "quad", "max_angle", Limit(170.0, 175.0, "this test"))
    report = api.audit(mesh, profile=main, regions={"rim": rim})
    doc = json.loads(json_report.render(report))
    seen = {True: 0, False: 0}
    region_rows = set(in_region.tolist())
    for rec in doc["elements"]:
        breach = rec["breaches"].get("max_angle")
        if breach is None or breach["level"] != "warn":
            continue
        region = rec["index"] in region_rows
        assert breach["limit"] == (100.0 if region else 170.0)
        assert breach["value"] > breach["limit"]
        seen[region] += 1
    assert seen[True] > 0
