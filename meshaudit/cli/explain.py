"""``meshaudit explain MESH ID``: everything about one element.

Exit status: 0 the element does not fail, 1 it fails, 2 cannot audit or no such id.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from .options import add_config_options, add_material_option

if TYPE_CHECKING:
    from ..outputs.atomic import Renderer


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    explain = sub.add_parser(
        "explain",
        help="everything about one element: nodes, det J, metrics against limits",
        description="Explain one element by its id as reported by 'check'. Exit status "
        "0: it does not fail; 1: it fails; 2: cannot audit or no such id.",
    )
    explain.add_argument("mesh", help="mesh file (any format meshio reads)")
    explain.add_argument("element_id", type=int, metavar="ID", help="element id as reported")
    explain.add_argument("--format", dest="file_format", metavar="NAME", help="meshio format")
    explain.add_argument(
        "-p",
        "--profile",
        metavar="NAME|FILE",
        help="built-in profile (standard, strict, lenient) or a TOML file (default: as "
        "'check' would choose: the configuration file's limits, else standard)",
    )
    add_config_options(explain, "configuration file (as for 'check')")
    add_material_option(explain)
    explain.add_argument(
        "--plot", type=Path, metavar="FILE", help="draw the element (.png, .svg or .pdf)"
    )
    explain.add_argument(
        "-j", "--json", type=Path, metavar="FILE", help="write the explanation as JSON"
    )
    return explain


def run(args: argparse.Namespace) -> int:
    """The ``explain`` command; returns the exit status."""
    from ..api import audit_mesh
    from ..outputs import atomic, explain_text
    from ..outputs.destinations import check_destinations, protected_inputs
    from ..outputs.plot import plot_format
    from ..outputs.process import terminal_output
    from ..results.explain import explain
    from ..results.status import exit_status
    from .options import console, materials_of, resolve

    mesh_path = Path(args.mesh)
    dests = [p for p in (args.plot, args.json) if p is not None]
    if args.plot is not None:
        plot_format(args.plot)
    resolved = resolve(args, mesh_path)
    protected = protected_inputs([mesh_path], resolved.settings.path, resolved.profile)
    check_destinations(dests, protected)
    audited = audit_mesh(
        mesh_path,
        profile=resolved.profile,
        file_format=args.file_format,
        fail_on=resolved.fail_on,
        regions=resolved.settings.regions,
        material=materials_of(args, resolved.settings),
    )
    ex = explain(audited, args.element_id)
    outputs: list[tuple[Path, Renderer]] = []
    if args.plot is not None:
        from ..outputs import explain_plot

        outputs.append((args.plot, lambda p: explain_plot.render(p, audited, ex)))
    if args.json is not None:
        outputs.append((args.json, lambda p: atomic.write_text(p, explain_text.render_json(ex))))
    atomic.write_all(outputs, protected)
    with terminal_output():
        explain_text.render(ex, console(140))
    return exit_status(not audited.report.failing[ex.index])
