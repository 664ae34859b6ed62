"""``meshaudit check``: audit one mesh or several and gate on the result.

Exit status: 0 no element fails, 1 some element fails (or a mesh-level finding fails the
mesh), 2 the input cannot be audited; over several meshes the worst wins (see
:mod:`meshaudit.results.status`). Report files are written all together or not at all.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from ..errors import MeshAuditError
from .options import add_common_options, add_material_option, positive_int

if TYPE_CHECKING:
    from ..outputs.atomic import Renderer
    from ..results.inspection import AuditedMesh
    from ..results.report import Report

#: Report files of the report alone, and the inspection outputs that also need the mesh.
REPORT_KINDS = ("json", "csv", "junit")
INSPECTION_KINDS = ("plot", "annotate", "html")


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    check = sub.add_parser(
        "check",
        help="audit a mesh and gate on the result",
        description="Audit a mesh against a quality profile. Exit status "
        "0: no element fails; 1: some element fails; 2: cannot audit.",
    )
    check.add_argument(
        "mesh",
        nargs="+",
        help="mesh file(s) (any format meshio reads) or glob patterns such as 'meshes/*.msh'",
    )
    add_common_options(check)
    add_material_option(check)
    check.add_argument(
        "-n",
        "--top",
        type=positive_int,
        metavar="N",
        help="how many of the worst elements to list (default 10)",
    )
    check.add_argument("-q", "--quiet", action="store_true", help="print only the verdict line")
    # str, not Path: a trailing "/" marks a directory (see meshaudit.cli.batch)
    check.add_argument("-j", "--json", metavar="FILE", help="write the JSON report")
    check.add_argument("--csv", metavar="FILE", help="write one CSV row per element")
    check.add_argument("--junit", metavar="FILE", help="write JUnit XML for CI")
    check.epilog = (
        "With several meshes, --json/--csv/--junit take a directory or a name containing "
        "{stem} (the mesh file name without extension); --plot/--annotate/--html a name "
        "containing {stem}. Exit status with several meshes: "
        "2 if any input cannot be audited, else 1 if any mesh fails, else 0."
    )
    check.add_argument(
        "--all",
        action="store_true",
        help="list every element in the JSON report, not only those not ok",
    )
    check.add_argument(
        "--plot",
        type=Path,
        metavar="FILE",
        help="draw the mesh with flagged elements outlined (.png, .svg or .pdf)",
    )
    check.add_argument(
        "--color-by",
        metavar="METRIC",
        help="metric that colours the elements in --plot and --html (default: score), or "
        "verdict (ok / warn / fail); an error without one of them",
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
    from . import parts

    parts.add_options(check)
    return check


def run(args: argparse.Namespace) -> int:
    """The ``check`` command; returns the exit status."""
    from ..engine.memory import return_large_blocks
    from . import batch

    check_color_by(args)  # before anything is read
    return_large_blocks()  # resident memory close to the live arrays (glibc)
    from . import parts

    inputs = batch.expand_inputs(args.mesh)
    if parts.wanted(args, inputs):  # one partitioned mesh: .pvtu or --parts
        return parts.run(args)
    if len(inputs) > 1:
        return _check_many(args, inputs)
    path, error = inputs[0]
    if error is not None:
        raise MeshAuditError(error)
    return _check_single(batch.apply_settings(args, Path(path), many=False))


def _check_single(args: argparse.Namespace) -> int:
    from ..outputs.process import terminal_output
    from ..results.status import exit_status
    from .progress import stage_bar, wanted

    with stage_bar(wanted(args.quiet)) as progress:
        args.progress = progress
        report = audit_and_write(args)
    with terminal_output():
        if args.quiet:  # the verdict line alone: no terminal library is loaded
            from ..outputs.verdict_text import print_verdict

            print_verdict(report)
        else:
            from ..outputs import terminal
            from .options import console

            terminal.render(report, console(), top=args.top, quiet=False)
    return exit_status(report.passed)


def _check_many(args: argparse.Namespace, inputs: list[tuple[str, str | None]]) -> int:
    from ..outputs import batch_terminal
    from ..outputs.process import say, terminal_output
    from ..results.status import overall_status
    from .batch import check_many, check_report_options
    from .options import console
    from .progress import stage_bar, wanted

    check_report_options(args)
    args.run_meshes = [path for path, error in inputs if error is None]
    with stage_bar(wanted(args.quiet)) as progress:
        args.progress = progress  # copied into each mesh's settings
        outcomes = check_many(args, inputs, audit_and_write)
    for o in outcomes:
        if o.error is not None:
            say(f"meshaudit: error: {o.error}")
    with terminal_output():
        batch_terminal.render(outcomes, console(), quiet=args.quiet)
    return overall_status(outcomes)


def audit_and_write(args: argparse.Namespace) -> Report:
    """Audit one mesh (options already resolved) and write its report files."""
    from ..api import audit, audit_mesh
    from ..outputs import atomic
    from ..outputs.destinations import check_destinations, protected_inputs

    mesh_path = Path(args.mesh)
    reports = [(getattr(args, k), k) for k in REPORT_KINDS if getattr(args, k) is not None]
    inspection = inspection_outputs(args)
    dests = [p for p, _ in reports + inspection]
    meshes = getattr(args, "run_meshes", None) or [mesh_path]
    protected = protected_inputs(meshes, getattr(args, "config_path", None), args.profile)
    check_destinations(dests, protected)

    progress = getattr(args, "progress", None)
    options = {
        "profile": args.profile,
        "file_format": args.file_format,
        "fail_on": args.fail_on,
        "regions": args.regions,
        "progress": progress,
        "material": getattr(args, "materials", None),
    }
    if inspection:  # plots and annotation need the mesh as well as the report
        audited = audit_mesh(mesh_path, **options)
        report = audited.report
    else:
        report = audit(mesh_path, **options)

    outputs: list[tuple[Path, Renderer]] = []
    for dest, kind in reports:
        outputs.append((dest, _report_renderer(kind, report, args)))
    for dest, kind in inspection:
        outputs.append((dest, _inspection_renderer(kind, audited, args)))
    if progress is not None and outputs:
        progress("write", 0, 0)
    atomic.write_all(outputs, protected)
    return report


def check_color_by(args: argparse.Namespace) -> None:
    """``--color-by`` needs a picture (``--plot`` or ``--html``) and a metric or
    ``verdict``; unset, it is
    the score. MeshAuditError (one line, exit status 2) otherwise."""
    from ..metrics import METRIC_NAMES

    pictures = [k for k in ("plot", "html") if getattr(args, k, None) is not None]
    if getattr(args, "color_by_checked", False):
        return
    args.color_by_checked = True
    if args.color_by is not None and not pictures:
        raise MeshAuditError(
            "--color-by colours the pictures of --plot and --html: give one of them, or "
            "leave --color-by out"
        )
    if args.color_by is None:
        args.color_by = "score"
    if args.color_by not in (*METRIC_NAMES, "verdict"):
        raise MeshAuditError(
            f"--color-by {args.color_by!r} is not a metric nor verdict; choose one of "
            + ", ".join((*METRIC_NAMES, "verdict"))
        )


def inspection_outputs(args: argparse.Namespace) -> list[tuple[Path, str]]:
    """(destination, kind) of the inspection outputs asked for, after validating them."""
    check_color_by(args)
    out = [(getattr(args, k), k) for k in INSPECTION_KINDS if getattr(args, k, None) is not None]
    for dest, kind in out:
        if kind == "plot":
            from ..outputs.plot import plot_format

            plot_format(dest)
        elif kind == "annotate":
            from ..outputs.annotate import annotate_format

            annotate_format(dest)
    return out


def _report_renderer(kind: str, report: Report, args: argparse.Namespace) -> Renderer:
    from ..outputs import atomic

    if kind == "json":
        from ..outputs import json_report

        return lambda p: json_report.write(p, report, args.all)
    if kind == "csv":
        from ..outputs import csv_report

        return lambda p: csv_report.write(p, report)
    from ..outputs import junit_report

    return lambda p: atomic.write_text(p, junit_report.render(report))


def _inspection_renderer(kind: str, audited: AuditedMesh, args: argparse.Namespace) -> Renderer:
    """Renderer writing one inspection output of ``audited`` to a (temporary) path."""
    report, elements = audited.report, audited.elements
    if kind == "plot":
        from ..outputs import plot

        fmt = plot.plot_format(args.plot)
        return lambda p: plot.render(p, report, elements, args.color_by, fmt)
    if kind == "annotate":
        from ..outputs import annotate

        fmt = annotate.annotate_format(args.annotate)
        return lambda p: annotate.render(p, audited.raw, report, fmt)
    from ..outputs import atomic, html_report

    return lambda p: atomic.write_text(p, html_report.render(report, elements, args.color_by))
