"""``meshaudit init [DIR|FILE]``: write a commented starter ``meshaudit.toml``.

Exit status: 0 written, 2 the file exists (it is never overwritten) or cannot be written.
"""

from __future__ import annotations

import argparse
import os
from pathlib import Path

STARTER = """\
# meshaudit configuration.
# `meshaudit check` and `meshaudit compare` use the first meshaudit.toml (or pyproject.toml
# with a [tool.meshaudit] table) found upward from the mesh file, then from the working
# directory. Options given on the command line override this file.

# Which element verdict fails a mesh: "fail" or "warn".
fail_on = "fail"

# How many of the worst elements the terminal report lists.
top = 10

# Report files, relative to this file. {stem} is the mesh file name without extension.
# json = "mesh-reports/{stem}.json"
# csv = "mesh-reports/{stem}.csv"
# junit = "mesh-reports/{stem}.xml"

# Limits for every element: a built-in profile (standard, strict, lenient) to start from,
# then per-metric overrides. `meshaudit profiles` lists every limit and its source.
[limits]
extends = "standard"

# [limits.quad]
# aspect_ratio = { warn = 4, fail = 8, source = "our own practice" }
# skew = {}                       # an empty table switches a limit off

# [limits.triangle]
# min_angle = { warn = 25, fail = 15 }

# Stricter limits where the mesh file names a region: a gmsh physical group or an
# element set. Without `extends`, a region starts from [limits] above.
# [regions.fillet]
# extends = "strict"
# [regions.fillet.quad]
# skew = { warn = 15, fail = 25 }

# How much worse NEW may be than OLD before `meshaudit compare OLD NEW` fails.
# Defaults shown (meshaudit defaults, no published source).
[compare]
new_failing = 0              # more failing elements allowed
median_score_drop = 0.02     # drop of the median element score (score 0..1)
worst_score_drop = 0.05      # drop of the worst element score
element_score_change = 0.05  # a shared element changing more is listed as worse/better
"""


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
        type=Path,
        help="directory to write meshaudit.toml in, or a file name (default: .)",
    )
    return cmd


def run(args: argparse.Namespace) -> int:
    """The ``init`` command; returns the exit status."""
    from ..outputs.process import terminal_output
    from ..results.status import EXIT_PASS

    dest = write_starter(args.target)
    with terminal_output():
        print(f"wrote {dest}")
    return EXIT_PASS


def write_starter(target: Path) -> Path:
    """Write the starter file to ``target`` (a directory or a file path); never overwrite."""
    from ..errors import OutputError
    from ..outputs import atomic
    from .config import CONFIG_NAME

    dest = target / CONFIG_NAME if os.path.isdir(target) else target
    if os.path.lexists(dest):
        raise OutputError(f"{dest}: already exists; not overwriting it")
    atomic.check_destination(dest)
    atomic.write_all([(dest, lambda p: atomic.write_text(p, STARTER))])
    return dest
