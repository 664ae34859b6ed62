"""``meshaudit init [DIR|FILE]``: write a commented starter ``meshaudit.toml``.

Exit status: 0 written, 2 the file exists (it is never overwritten) or cannot be written.
"""

from __future__ import annotations

import argparse
import os
from pathlib import Path

_TEMPLATE = """\
# meshaudit configuration.
# `meshaudit check` and `meshaudit compare` use the first meshaudit.toml (or pyproject.toml
# with a [tool.meshaudit] table) found upward from the mesh file, then from the working
# directory. Options given on the command line override this file.

# Which element verdict fails a mesh: "fail" or "warn".
fail_on = "fail"

# How many of the worst elements the terminal report lists.
top = 10

# Report files, relative to this file. {{stem}} is the mesh file name without extension.
# json = "mesh-reports/{{stem}}.json"
# csv = "mesh-reports/{{stem}}.csv"
# junit = "mesh-reports/{{stem}}.xml"

# Limits for every element: a built-in profile (standard, strict, lenient) to start from,
# then per-metric overrides. `meshaudit profiles` lists every limit and its source.
[limits]
extends = "standard"

# [limits.quad]
# aspect_ratio = {{ warn = 4, fail = 8, source = "our own practice" }}
# skew = {{}}                       # an empty table switches a limit off

# [limits.triangle]
# min_angle = {{ warn = 25, fail = 15 }}

# [limits.hexahedron]              # solid families: tetra, hexahedron, wedge, pyramid
# size_ratio = {{ warn = 1.5, fail = 3 }}

# Mesh-level findings: "off", "info" (reported, never fails), "warn" or "fail".
# Every kind with its default severity:
{findings}
# coincident_tolerance = {coincident:g}   # relative to the shortest adjacent edge
# overlap_fraction = {overlap:g}       # of the smaller element's area

# Stricter limits where the mesh file names a region: a gmsh physical group (by name or
# number), an element set, a medit reference or a material number of VTK cell data
# (mat_id, MaterialIds, ...; by number, "7", or as "mat_id=7"). Without `extends`, a
# region starts from [limits] above.
# [regions.fillet]
# extends = "strict"
# [regions.fillet.quad]
# skew = {{ warn = 15, fail = 25 }}

# How much worse NEW may be than OLD before `meshaudit compare OLD NEW` fails.
# Defaults shown (meshaudit defaults, no published source).
[compare]
new_failing = 0              # more failing elements allowed
median_score_drop = 0.02     # drop of the median element score (score 0..1)
worst_score_drop = 0.05      # drop of the worst element score
element_score_change = 0.05  # a shared element changing more is listed as worse/better

# A material switches on the stable time step, the bending error and the constant-strain
# check (`--material E=..,nu=..,rho=..` overrides the default entry). Linear elastic,
# isotropic, any consistent units: N/mm^2, tonne/mm^3, mm give the time step in seconds.
# [materials.default]            # every element no region entry covers
# E = 210000.0                   # Young's modulus
# nu = 0.3                       # Poisson's ratio
# rho = 7.85e-9                  # density
# t = 2.0                        # thickness of surface elements (default 1)
# [materials.web]                # the elements of a region, named as in [regions]
# E = 70000.0
# nu = 0.33
# rho = 2.7e-9
# plane = "strain"               # surface elements in plane strain (default "stress")
"""


def starter_text() -> str:
    """The starter file: every section, [limits.findings] listing every finding kind with
    its default severity (commented, so the defaults stay in force until edited)."""
    from ..judge.finding_kinds import COINCIDENT_TOLERANCE, KINDS, OVERLAP_FRACTION

    width = max(len(k.name) for k in KINDS)
    lines = ["# [limits.findings]"]
    lines += [f'# {k.name:<{width}} = "{k.severity}"' for k in KINDS]
    return _TEMPLATE.format(
        findings="\n".join(lines),
        coincident=COINCIDENT_TOLERANCE,
        overlap=OVERLAP_FRACTION,
    )


#: The starter file's text.
STARTER = starter_text()


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    cmd = sub.add_parser(
        "init",
        help="write a commented starter meshaudit.toml",
        description="Write a commented starter meshaudit.toml (never overwrites a file).",
    )
    cmd.add_argument(
        "target",
        nargs="?",
        default=".",
        help="directory to write meshaudit.toml in (created when it ends with / and is "
        "missing), or a file name (default: .)",
    )
    cmd.add_argument(
        "-f",
        "--force",
        action="store_true",
        help="replace an existing file (without it, an existing file is never touched)",
    )
    return cmd


def run(args: argparse.Namespace) -> int:
    """The ``init`` command; returns the exit status."""
    from ..outputs.process import terminal_output
    from ..results.status import EXIT_PASS

    dest = write_starter(args.target, force=args.force)
    with terminal_output():
        print(f"wrote {dest}")
    return EXIT_PASS


def write_starter(target: str | os.PathLike[str], force: bool = False) -> Path:
    """Write the starter file to ``target``: into it when it is a directory (one ending
    with a path separator is created, parents too, when missing), else to that file name.
    An existing file is replaced only with ``force``."""
    from ..errors import OutputError
    from ..outputs import atomic
    from .config import CONFIG_NAME

    text = os.fspath(target)
    as_dir = text.endswith(("/", os.sep)) or os.path.isdir(text)
    dest = Path(text) / CONFIG_NAME if as_dir else Path(text)
    if as_dir and not os.path.isdir(text):
        try:
            os.makedirs(text, exist_ok=True)
        except OSError as exc:
            raise OutputError(f"{text}: cannot create directory: {exc.strerror}") from None
    if os.path.lexists(dest) and not force:
        raise OutputError(f"{dest}: already exists; not overwriting it (--force replaces it)")
    atomic.check_destination(dest)
    atomic.write_all([(dest, lambda p: atomic.write_text(p, STARTER))])
    return dest
