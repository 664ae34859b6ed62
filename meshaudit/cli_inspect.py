"""Command-line side of the inspection outputs: ``check --plot/--annotate/--html`` and the
``explain`` command. Kept apart from :mod:`meshaudit.cli` so that module stays a thin
dispatcher; everything heavy (matplotlib, meshio writers) is imported on use only.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import MeshAuditError

if TYPE_CHECKING:
    from .outputs.atomic import Renderer
    from .results.inspection import AuditedMesh

INSPECTION_KINDS = ("plot", "annotate", "html")


def add_check_options(check: argparse.ArgumentParser) -> None:
    """Add --plot, --color-by, --annotate and --html to the ``check`` parser."""
    check.add_argument(
        "--plot",
        type=Path,
        metavar="FILE",
        help="draw the mesh with flagged elements outlined (.png, .svg or .pdf)",
    )
    check.add_argument(
        "--color-by",
        default="score",
        metavar="METRIC",
        help="metric that colours the elements in --plot and --html (default: score)",
    )
    check.add_argument(
        "--annotate",
        type=Path,
        metavar="FILE",
        help="write the mesh with every metric, verdict and flag as cell data (.vtu or .vtk)",
    )
    check.add_argument(
        "--html", type=Path, metavar="FILE", help="write a self-contained HTML report"
    )


def wanted(args: argparse.Namespace) -> list[tuple[Path, str]]:
    """(destination, kind) of the inspection outputs asked for, after validating them."""
    from .metrics import METRIC_NAMES

    if args.color_by not in METRIC_NAMES:
        raise MeshAuditError(
            f"--color-by {args.color_by!r} is not a metric; choose one of "
            + ", ".join(METRIC_NAMES)
        )
    out = [(getattr(args, k), k) for k in INSPECTION_KINDS if getattr(args, k, None) is not None]
    for dest, kind in out:
        if kind == "plot":
            from .outputs.plot import plot_format

            plot_format(dest)
        elif kind == "annotate":
            from .outputs.annotate import annotate_format

            annotate_format(dest)
    return out


def renderer(kind: str, audited: AuditedMesh, args: argparse.Namespace) -> Renderer:
    """Renderer writing one inspection output of ``audited`` to a (temporary) path."""
    report, elements = audited.report, audited.elements
    if kind == "plot":
        from .outputs import plot

        fmt = plot.plot_format(args.plot)
        return lambda p: plot.render(p, report, elements, args.color_by, fmt)
    if kind == "annotate":
        from .outputs import annotate

        fmt = annotate.annotate_format(args.annotate)
        return lambda p: annotate.render(p, audited.raw, report, fmt)
    from .outputs import atomic, html_report

    return lambda p: atomic.write_text(p, html_report.render(report, elements, args.color_by))


# -- explain ------------------------------------------------------------------------------------
def add_explain_command(sub: argparse._SubParsersAction) -> None:
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
        "--profile",
        metavar="NAME|FILE",
        help="built-in profile (standard, strict, lenient) or a TOML file (default: as "
        "'check' would choose: the configuration file's limits, else standard)",
    )
    explain.add_argument(
        "--config", type=Path, metavar="FILE", help="configuration file (as for 'check')"
    )
    explain.add_argument("--no-config", action="store_true", help="ignore configuration files")
    explain.add_argument(
        "--plot", type=Path, metavar="FILE", help="draw the element (.png, .svg or .pdf)"
    )
    explain.add_argument("--json", type=Path, metavar="FILE", help="write the explanation as JSON")


def run_explain(args: argparse.Namespace) -> int:
    """The ``explain`` command; returns the exit status."""
    from .api import audit_mesh
    from .config import settings_for
    from .outputs import atomic, explain_text
    from .outputs.console import terminal_console
    from .outputs.destinations import check_destinations, protected_inputs
    from .outputs.plot import plot_format
    from .outputs.process import terminal_output
    from .results.explain import explain

    mesh_path = Path(args.mesh)
    dests = [p for p in (args.plot, args.json) if p is not None]
    if args.plot is not None:
        plot_format(args.plot)
    settings = settings_for(mesh_path, args.config, not args.no_config)
    profile = args.profile or settings.profile or "standard"
    protected = protected_inputs([mesh_path], settings.path, profile)
    check_destinations(dests, protected)
    audited = audit_mesh(
        mesh_path,
        profile=profile,
        file_format=args.file_format,
        fail_on=settings.fail_on or "fail",
        regions=settings.regions,
    )
    ex = explain(audited, args.element_id)
    outputs: list[tuple[Path, Renderer]] = []
    if args.plot is not None:
        from .outputs import explain_plot

        outputs.append((args.plot, lambda p: explain_plot.render(p, audited, ex)))
    if args.json is not None:
        outputs.append((args.json, lambda p: atomic.write_text(p, explain_text.render_json(ex))))
    atomic.write_all(outputs, protected)
    console = terminal_console(140)
    with terminal_output():
        explain_text.render(ex, console)
    return 1 if audited.report.failing[ex.index] else 0
