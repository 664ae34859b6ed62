"""``meshaudit compare`` and ``meshaudit init``: argument definitions and runners.

compare exit status: 0 NEW is no worse than OLD within the tolerances, 1 NEW regressed,
2 either input cannot be audited. init: 0 written, 2 the file exists or cannot be written.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from pathlib import Path

from .errors import MeshAuditError

EXIT_OK, EXIT_WORSE = 0, 1


def add_compare(sub, add_common: Callable[[argparse.ArgumentParser], None]) -> None:
    cmd = sub.add_parser(
        "compare",
        help="compare two revisions of a mesh and fail when the new one is worse",
        description="Audit OLD and NEW under the same limits and compare them. Exit status "
        "0: NEW is no worse than OLD within the tolerances ([compare] in the configuration "
        "file); 1: NEW regressed; 2: cannot audit.",
    )
    cmd.add_argument("old", metavar="OLD", help="the earlier mesh (baseline)")
    cmd.add_argument("new", metavar="NEW", help="the new mesh; its configuration applies")
    add_common(cmd)
    cmd.add_argument(
        "--top", type=int, default=10, metavar="N", help="changed elements to list (default 10)"
    )
    cmd.add_argument("--quiet", action="store_true", help="print only the verdict line")
    cmd.add_argument("--json", type=Path, metavar="FILE", help="write the comparison as JSON")
    cmd.set_defaults(run=run_compare)


def add_init(sub) -> None:
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
    cmd.set_defaults(run=run_init)


def run_init(args: argparse.Namespace) -> int:
    from .outputs.process import terminal_output
    from .starter import write_starter

    dest = write_starter(args.target)
    with terminal_output():
        print(f"wrote {dest}")
    return EXIT_OK


def run_compare(args: argparse.Namespace) -> int:
    from .api import audit_mesh
    from .config import settings_for
    from .outputs import atomic, compare_terminal
    from .outputs.destinations import check_destinations, protected_inputs
    from .outputs.process import terminal_output
    from .results import compare
    from .results.report import json_text

    old_path, new_path = Path(args.old), Path(args.new)
    if args.top < 0:
        raise MeshAuditError("--top must be 0 or more")
    settings = settings_for(new_path, args.config, not args.no_config)
    profile = args.profile or settings.profile or "standard"
    protected = protected_inputs([old_path, new_path], settings.path, profile)
    if args.json is not None:
        check_destinations([args.json], protected)
    fail_on = args.fail_on or settings.fail_on or "fail"
    old, new = (
        audit_mesh(p, profile, args.file_format, fail_on, settings.regions)
        for p in (old_path, new_path)
    )
    result = compare.compare(
        old.report, new.report, settings.tolerances, old.elements, new.elements
    )
    if args.json is not None:
        source = str(settings.path) if settings.path is not None else None
        data = compare.to_dict(result, tolerance_source=source)
        text = json_text(data, indent=1) + "\n"
        atomic.write_all([(args.json, lambda p: atomic.write_text(p, text))], protected)
    from .cli import _console

    with terminal_output():
        compare_terminal.render(result, _console(), top=args.top, quiet=args.quiet)
    return EXIT_WORSE if result.regressed else EXIT_OK
