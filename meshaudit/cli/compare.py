"""``meshaudit compare OLD NEW``: a regression gate between two revisions of a mesh.

Exit status: 0 NEW is no worse than OLD within the tolerances, 1 NEW regressed, 2 either
input cannot be audited.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import MeshAuditError
from .options import add_common_options, add_material_option


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    cmd = sub.add_parser(
        "compare",
        help="compare two revisions of a mesh and fail when the new one is worse",
        description="Audit OLD and NEW under the same limits and compare them. Exit status "
        "0: NEW is no worse than OLD within the tolerances ([compare] in the configuration "
        "file); 1: NEW regressed; 2: cannot audit.",
    )
    cmd.add_argument("old", metavar="OLD", help="the earlier mesh (baseline)")
    cmd.add_argument("new", metavar="NEW", help="the new mesh; its configuration applies")
    add_common_options(cmd)
    add_material_option(cmd)
    cmd.add_argument(
        "-n",
        "--top",
        type=int,
        default=10,
        metavar="N",
        help="changed elements to list (default 10)",
    )
    cmd.add_argument("-q", "--quiet", action="store_true", help="print only the verdict line")
    cmd.add_argument("-j", "--json", type=Path, metavar="FILE", help="write the comparison as JSON")
    return cmd


def run(args: argparse.Namespace) -> int:
    """The ``compare`` command; returns the exit status."""
    from ..api import audit_mesh
    from ..outputs import atomic, compare_terminal
    from ..outputs.destinations import check_destinations, protected_inputs
    from ..outputs.process import terminal_output
    from ..results import compare
    from ..results.report import json_text
    from ..results.status import exit_status
    from .options import console, materials_of, resolve

    old_path, new_path = Path(args.old), Path(args.new)
    if args.top < 0:
        raise MeshAuditError("--top must be 0 or more")
    resolved = resolve(args, new_path)
    settings, profile = resolved.settings, resolved.profile
    protected = protected_inputs([old_path, new_path], settings.path, profile)
    if args.json is not None:
        check_destinations([args.json], protected)
    material = materials_of(args, settings)
    old, new = (
        audit_mesh(
            p, profile, args.file_format, resolved.fail_on, settings.regions, material=material
        )
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
    with terminal_output():
        compare_terminal.render(result, console(), top=args.top, quiet=args.quiet)
    return exit_status(not result.regressed)
