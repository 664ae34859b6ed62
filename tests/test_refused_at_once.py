"""Bad input is refused at once, with one clear line: coordinates that are not real
numbers, limits no audit could apply, profile files with a bad ``extends`` or tolerance.

References: Python's own types (complex, bool, object) and numpy's dtype kinds; the
README's contract that bad input gives one ``meshaudit: error:`` line and exit status 2.
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest
from conftest import SAMPLES

import meshaudit
from meshaudit.errors import InputError, ProfileError

SQUARE = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
CELLS = [("quad", np.array([[0, 1, 2, 3]]))]


@pytest.mark.parametrize(
    "points, words",
    [
        (SQUARE + 0j, "complex"),  # the imaginary part would be dropped
        (SQUARE + 1e-3j, "complex"),
        (SQUARE.astype(bool), "not real numbers"),
        (SQUARE.astype(object), "not real numbers"),
        (SQUARE.astype(str), "not real numbers"),
    ],
    ids=["complex, zero imaginary part", "complex", "bool", "object", "str"],
)
def test_coordinates_that_are_not_real_numbers_are_refused(points, words) -> None:
    with pytest.raises(InputError) as caught:
        meshaudit.audit(meshio.Mesh(points, CELLS))
    message = str(caught.value)
    assert words in message and "\n" not in message


def test_real_coordinates_of_any_width_are_audited() -> None:
    for dtype in (np.int32, np.uint16, np.float32, np.float64):
        report = meshaudit.audit(meshio.Mesh(SQUARE.astype(dtype), CELLS))
        assert report.metrics["area"][0] == 1.0  # the unit square (closed form)


STANDARD = meshaudit.BUILTIN_PROFILES["standard"]


@pytest.mark.parametrize(
    "family, metric, limit",
    [
        ("quad", "aspect_rato", meshaudit.Limit(4.0, 8.0)),  # a typo
        ("polyhedron", "aspect_ratio", meshaudit.Limit(4.0, 8.0)),  # no such family
        ("quad", "score", meshaudit.Limit(0.5, 0.3)),  # the score follows the verdict
        ("quad", "det_j_max", meshaudit.Limit(None, 1.0)),  # reported, never judged
        ("quad", "aspect_ratio", meshaudit.Limit(8.0, 4.0)),  # warn past fail
        ("quad", "aspect_ratio", meshaudit.Limit(math.nan, 8.0)),
        ("quad", "aspect_ratio", meshaudit.Limit("4", 8.0)),
        ("quad", "aspect_ratio", (4.0, 8.0)),  # not a Limit
    ],
)
def test_with_limit_refuses_at_once(family, metric, limit) -> None:
    with pytest.raises(ProfileError) as caught:
        meshaudit.with_limit(STANDARD, family, metric, limit)
    assert "\n" not in str(caught.value)


def test_with_limit_still_replaces_and_removes() -> None:
    tight = meshaudit.with_limit(STANDARD, "quad", "aspect_ratio", meshaudit.Limit(3.0, 5.0))
    assert tight.limit("quad", "aspect_ratio") == meshaudit.Limit(3.0, 5.0)
    gone = meshaudit.with_limit(STANDARD, "quad", "aspect_ratio", None)
    assert gone.limit("quad", "aspect_ratio") is None


def test_a_profile_built_by_hand_is_checked_when_built() -> None:
    with pytest.raises(ProfileError):
        meshaudit.Profile("x", "typo", {"quad": {"aspect_rato": meshaudit.Limit(4.0, 8.0)}})
    with pytest.raises(ProfileError):
        meshaudit.Profile("x", "score", {"triangle": {"score": meshaudit.Limit(0.5, 0.2)}})


PROFILE_TEXTS = {
    "extends a list": 'extends = ["standard"]',
    "extends a table": "extends = { name = 'standard' }",
    "extends a number": "extends = 3",
    "extends an unknown built-in": 'extends = "stricter"',
    "extends itself": 'extends = "self.toml"',
    "extends another file": 'extends = "other.toml"',
    "name not a string": 'name = ["plate"]',
    "source not a string": "[quad]\naspect_ratio = { warn = 4, fail = 8, source = 3 }",
    "nan coincident tolerance": "[findings]\ncoincident_tolerance = nan",
    "negative coincident tolerance": "[findings]\ncoincident_tolerance = -1e-6",
    "text coincident tolerance": '[findings]\ncoincident_tolerance = "small"',
    "nan overlap fraction": "[findings]\noverlap_fraction = nan",
    "negative overlap fraction": "[findings]\noverlap_fraction = -0.1",
    "boolean overlap fraction": "[findings]\noverlap_fraction = true",
    "infinite overlap fraction": "[findings]\noverlap_fraction = inf",
}


def _one_error_line(done) -> None:
    assert done.returncode == 2, done.stdout + done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("meshaudit: error:"), done.stderr
    assert "internal error" not in done.stderr and "Traceback" not in done.stderr


@pytest.mark.parametrize("text", PROFILE_TEXTS.values(), ids=PROFILE_TEXTS.keys())
def test_bad_profile_file_gives_one_line_and_exit_2(text, tmp_path, run_cli) -> None:
    profile = tmp_path / "self.toml"
    profile.write_text(text + "\n", encoding="utf-8")
    (tmp_path / "other.toml").write_text('extends = "self.toml"\n', encoding="utf-8")
    mesh = SAMPLES / "bracket_plate.msh"
    _one_error_line(run_cli("check", mesh, "--profile", profile, "--no-config", cwd=tmp_path))


@pytest.mark.parametrize(
    "text",
    [
        '[limits]\nextends = ["standard"]',
        '[regions.web]\nextends = ["strict"]',
        '[regions.web]\nextends = "meshaudit.toml"',
        "[limits.findings]\ncoincident_tolerance = nan",
        "[regions.web.findings]\noverlap_fraction = -1",
        "[compare]\nmedian_score_drop = nan",
    ],
    ids=["limits", "region", "region extends the file", "limits nan", "region neg", "compare"],
)
def test_bad_configuration_file_gives_one_line_and_exit_2(text, tmp_path, run_cli) -> None:
    (tmp_path / "meshaudit.toml").write_text(text + "\n", encoding="utf-8")
    mesh = tmp_path / "plate.msh"
    mesh.write_bytes((SAMPLES / "bracket_plate.msh").read_bytes())
    _one_error_line(run_cli("check", mesh, cwd=tmp_path))
