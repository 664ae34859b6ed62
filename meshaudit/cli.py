"""Command line: a thin layer over :func:`meshaudit.audit` and the output modules.

Exit status: 0 no element fails, 1 some element fails, 2 the input cannot be audited
(one line on stderr, nothing written), 128 + N stopped by signal N (temporary files removed;
see :mod:`meshaudit.outputs.process`).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from . import __version__, cli_inspect
from .errors import MeshAuditError

if TYPE_CHECKING:
    from .outputs.atomic import Renderer
    from .results.report import Report

EXIT_PASS, EXIT_FAIL, EXIT_UNUSABLE = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports a bad option in one line (and exit status 2)."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise MeshAuditError(f"{message} (see '{self.prog} --help')")


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"expected 0 or more, got {value}")
    return value


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="meshaudit",
        description="Audit the element quality of a 2-D or shell finite-element mesh.",
    )
    parser.add_argument("--version", action="version", version=f"meshaudit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

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
    _add_common_options(check)
    check.add_argument(
        "--top",
        type=_positive_int,
        metavar="N",
        help="how many of the worst elements to list (default 10)",
    )
    check.add_argument("--quiet", action="store_true", help="print only the verdict line")
    # str, not Path: a trailing "/" marks a directory (see meshaudit.pipeline)
    check.add_argument("--json", metavar="FILE", help="write the JSON report")
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

    cli_inspect.add_check_options(check)
    cli_inspect.add_explain_command(sub)

    from . import profiles_view

    profiles_view.add_arguments(
        sub.add_parser(
            "profiles", help="list the built-in profiles with every limit and its source"
        )
    )
    from .subcommands import add_compare, add_init

    add_compare(sub, _add_common_options)
    add_init(sub)
    return parser


def _add_common_options(cmd: argparse.ArgumentParser) -> None:
    """Options shared by check and compare; unset ones come from the configuration file."""
    cmd.add_argument(
        "--format",
        dest="file_format",
        metavar="NAME",
        help="meshio format name, when the extension does not tell it",
    )
    cmd.add_argument(
        "--profile",
        metavar="NAME|FILE",
        help="built-in profile (standard, strict, lenient) or a TOML file (default: the "
        "configuration file's limits, else standard)",
    )
    cmd.add_argument(
        "--fail-on",
        choices=("fail", "warn"),
        help="which element verdict fails the mesh (default: fail)",
    )
    cmd.add_argument(
        "--config",
        type=Path,
        metavar="FILE",
        help="configuration file (default: meshaudit.toml or pyproject.toml [tool.meshaudit] "
        "found upward from the mesh, then from the working directory)",
    )
    cmd.add_argument("--no-config", action="store_true", help="ignore configuration files")


def _check(args: argparse.Namespace) -> int:
    from . import pipeline

    inputs = pipeline.expand_inputs(args.mesh)
    if len(inputs) > 1:
        return _check_many(args, inputs)
    path, error = inputs[0]
    if error is not None:
        raise MeshAuditError(error)
    return _check_single(pipeline.apply_settings(args, Path(path), many=False))


def _check_many(args: argparse.Namespace, inputs: list[tuple[str, str | None]]) -> int:
    from .outputs import batch_terminal
    from .pipeline import check_many, check_report_options, overall_status

    check_report_options(args)
    args.run_meshes = [path for path, error in inputs if error is None]
    from .outputs.process import say, terminal_output
    from .progress_bar import stage_bar, wanted

    with stage_bar(wanted(args.quiet)) as progress:
        args.progress = progress  # copied into each mesh's settings
        outcomes = check_many(args, inputs, _audit_and_write)
    for o in outcomes:
        if o.error is not None:
            say(f"meshaudit: error: {o.error}")
    with terminal_output():
        batch_terminal.render(outcomes, _console(), quiet=args.quiet)
    return overall_status(outcomes)


def _console():
    from .outputs.console import terminal_console

    return terminal_console(120)


def _check_single(args: argparse.Namespace) -> int:
    from .progress_bar import stage_bar, wanted

    with stage_bar(wanted(args.quiet)) as progress:
        args.progress = progress
        report = _audit_and_write(args)
    from .outputs import terminal
    from .outputs.process import terminal_output

    with terminal_output():
        terminal.render(report, _console(), top=args.top, quiet=args.quiet)
    return EXIT_PASS if report.passed else EXIT_FAIL


def _audit_and_write(args: argparse.Namespace) -> Report:
    """Audit one mesh (options already resolved) and write its report files."""
    from .api import audit
    from .outputs import atomic

    mesh_path = Path(args.mesh)
    wanted = [
        (p, kind)
        for p, kind in ((args.json, "json"), (args.csv, "csv"), (args.junit, "junit"))
        if p is not None
    ]
    inspection = cli_inspect.wanted(args)
    dests = [p for p, _ in wanted + inspection]
    from .outputs.destinations import check_destinations, protected_inputs

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
    }
    if inspection:  # plots and annotation need the mesh as well as the report
        from .api import audit_mesh

        audited = audit_mesh(mesh_path, **options)
        report = audited.report
    else:
        report = audit(mesh_path, **options)

    outputs: list[tuple[Path, atomic.Renderer]] = []
    for dest, kind in wanted:
        outputs.append((dest, _renderer(kind, report, args)))
    for dest, kind in inspection:
        outputs.append((dest, cli_inspect.renderer(kind, audited, args)))
    if progress is not None and outputs:
        progress("write", 0, 0)
    atomic.write_all(outputs, protected)
    return report


def _renderer(kind: str, report: Report, args: argparse.Namespace) -> Renderer:
    from .outputs import atomic

    if kind == "json":
        from .outputs import json_report

        return lambda p: json_report.write(p, report, args.all)
    if kind == "csv":
        from .outputs import csv_report

        return lambda p: csv_report.write(p, report)
    from .outputs import junit_report

    return lambda p: atomic.write_text(p, junit_report.render(report))


def _profiles(args: argparse.Namespace) -> int:
    from . import profiles_view

    return profiles_view.run(args, _console())


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``meshaudit`` console script; returns the exit status.

    SIGINT, SIGTERM and SIGHUP stop it cleanly (temporary files removed) with exit status
    128 + the signal number; see :mod:`meshaudit.outputs.process`.
    """
    from .outputs.process import stopping_signals_raise

    with stopping_signals_raise():
        return _main(argv)


def _main(argv: Sequence[str] | None) -> int:
    from .outputs.process import Interrupted, say, silence_stdout, terminal_output

    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if args.command == "check":
            from .engine.memory import return_large_blocks

            return_large_blocks()  # resident memory close to the live arrays (glibc)
            return _check(args)
        if args.command == "profiles":
            with terminal_output():
                return _profiles(args)
            return EXIT_PASS
        if args.command == "explain":
            return cli_inspect.run_explain(args)
        if args.command in ("compare", "init"):
            return args.run(args)
        parser.print_usage(sys.stderr)
        raise MeshAuditError(
            "a command is required: check, explain, profiles, compare or init "
            "(see 'meshaudit --help')"
        )
    except MeshAuditError as exc:
        say(f"meshaudit: error: {exc}")
        return EXIT_UNUSABLE
    except KeyboardInterrupt as exc:
        signum = exc.signum if isinstance(exc, Interrupted) else 2
        name = exc.name if isinstance(exc, Interrupted) else "SIGINT"
        say(f"meshaudit: interrupted by {name}")
        return 128 + signum
    except BrokenPipeError:
        silence_stdout()
        return EXIT_UNUSABLE
    except Exception as exc:  # never show a traceback to a user
        say(f"meshaudit: internal error: {type(exc).__name__}: {exc}")
        return EXIT_UNUSABLE


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
