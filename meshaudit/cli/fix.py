"""``meshaudit fix MESH -o OUT``: repair what the audit finds and audit the result.

Exit status: 0 the repaired mesh passes, 1 failures remain (or the result was refused
because some element got worse: nothing is written), 2 the input cannot be repaired (bad
input, a bad option, ``-o`` naming the input). The input is never written; the output is
written atomically, and only when no element got worse.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import MeshAuditError
from .options import add_config_options, positive_int


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    fix = sub.add_parser(
        "fix",
        help="repair reversed, duplicate, unmerged and tangled elements; audit the result",
        description="Write a repaired copy of a mesh and audit it. Boundary, hole, crack, "
        "region-interface and named nodes never move (outline nodes named with "
        "--restore-outline go back onto the outline). Exit status 0: the result passes; "
        "1: failures remain (listed) or the result was refused; 2: cannot repair.",
    )
    fix.add_argument("mesh", help="mesh file (any format meshio reads)")
    fix.add_argument(
        "-o",
        "--output",
        type=Path,
        metavar="OUT",
        help="write the repaired mesh here (any format meshio writes, by extension; "
        "never the input); without it nothing is written",
    )
    fix.add_argument("--format", dest="file_format", metavar="NAME", help="meshio format of MESH")
    fix.add_argument("--output-format", metavar="NAME", help="meshio format of OUT")
    fix.add_argument(
        "--profile",
        metavar="NAME|FILE",
        help="built-in profile or TOML file (default: as 'check' would choose)",
    )
    fix.add_argument(
        "--fail-on", choices=("fail", "warn"), help="which verdict fails (default: fail)"
    )
    add_config_options(fix, "configuration file (as for 'check')")
    for name, what in (
        ("bowties", "reorder the nodes of bow-tie quads"),
        ("merge", "merge coincident nodes (never done where the profile says a crack is intended)"),
        ("duplicates", "drop exact duplicate elements"),
        ("reverse", "reverse reversed elements"),
        ("orphans", "drop nodes no cell uses"),
        ("move", "move nodes to untangle and improve failing elements"),
    ):
        fix.add_argument(f"--no-{name}", action="store_true", help=f"do not {what}")
    fix.add_argument(
        "--rings",
        type=positive_int,
        default=2,
        metavar="N",
        help="nodes within N rings of the failing elements may move (default 2)",
    )
    fix.add_argument(
        "--all", action="store_true", help="move every node that is not fixed (smooth everything)"
    )
    fix.add_argument(
        "--keep",
        action="append",
        default=[],
        metavar="NAME",
        help="a node set or element region whose nodes must not move (repeatable)",
    )
    fix.add_argument(
        "--restore-outline",
        action="append",
        default=[],
        type=node_numbers,
        metavar="N[,N...]",
        help="put these outline nodes (node numbers as the reports show them) back on the "
        "outline their neighbours continue; the fix names the ones that lie off it",
    )
    fix.add_argument("-q", "--quiet", action="store_true", help="print only the verdict line")
    return fix


def node_numbers(text: str) -> tuple[int, ...]:
    """``12,57`` -> (12, 57): node numbers, comma-separated."""
    try:
        numbers = tuple(int(part) for part in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{text!r}: node numbers separated by commas, such as 12,57"
        ) from None
    return numbers


def output_format(path: Path, given: str | None) -> str:
    """The meshio format the output is written in; bad input when none fits."""
    import meshio

    writers = meshio._helpers._writer_map
    if given is not None:
        if given not in writers:
            raise MeshAuditError(f"--output-format {given!r}: meshio writes no such format")
        return given
    suffix = path.suffix.lower()
    formats = [f for f in meshio.extension_to_filetypes.get(suffix, []) if f in writers]
    if not formats:
        raise MeshAuditError(
            f"{path}: cannot tell the format from {suffix or 'no extension'!r}; "
            "give --output-format"
        )
    return "gmsh" if "gmsh" in formats else formats[0]  # .msh is also ANSYS's extension


def run(args: argparse.Namespace) -> int:
    """The ``fix`` command; returns the exit status."""
    from ..outputs import atomic, fix_terminal
    from ..outputs.destinations import check_destinations, protected_inputs
    from ..outputs.process import terminal_output
    from ..repair.run import RepairOptions, repair
    from ..results.status import exit_status
    from .options import console, resolve
    from .progress import stage_bar, wanted

    mesh_path = Path(args.mesh)
    resolved = resolve(args, mesh_path)
    protected = protected_inputs([mesh_path], resolved.settings.path, resolved.profile)
    fmt = None
    if args.output is not None:
        fmt = output_format(args.output, args.output_format)
        check_destinations([args.output], protected)
    options = RepairOptions(
        bowties=not args.no_bowties,
        merge=not args.no_merge,
        duplicates=not args.no_duplicates,
        reverse=not args.no_reverse,
        orphans=not args.no_orphans,
        move=not args.no_move,
        rings=args.rings,
        everywhere=args.all,
        keep=tuple(args.keep),
        restore=tuple(n for group in args.restore_outline for n in group),
    )
    with stage_bar(wanted(args.quiet)) as progress:
        result = repair(
            mesh_path,
            profile=resolved.profile,
            file_format=args.file_format,
            fail_on=resolved.fail_on,
            regions=resolved.settings.regions,
            options=options,
            progress=progress,
        )
        written = None
        if args.output is not None and result.acceptable:
            atomic.write_all([(args.output, _writer(result.mesh, fmt, args.output))], protected)
            written = str(args.output)
    with terminal_output():
        fix_terminal.render(result, console(), written, args.quiet)
    if not result.acceptable:
        return 1
    return exit_status(result.passed)


def _writer(mesh, fmt: str | None, given: Path):
    """Renderer writing ``mesh`` with meshio; a mesh the format cannot hold is bad input."""
    from ..errors import OutputError

    def write(path: Path) -> None:
        import contextlib
        import io
        import warnings

        import meshio

        with (
            warnings.catch_warnings(),
            contextlib.redirect_stdout(io.StringIO()),
            contextlib.redirect_stderr(io.StringIO()),
        ):
            warnings.simplefilter("ignore")
            try:
                meshio.write(path, mesh, file_format=fmt)
            except OSError:
                raise
            except Exception as exc:  # a writer refusing cell types or data
                detail = " ".join(str(exc).split())[:200] or type(exc).__name__
                raise OutputError(
                    f"{given}: meshio cannot write this mesh as {fmt}: {detail}"
                ) from None

    return write
