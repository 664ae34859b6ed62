"""``meshaudit check`` of a partitioned mesh: a ``.pvtu``, ``--parts PATTERN``, or one
XDMF file read in slices (``--slices N``, see :mod:`meshaudit.mesh.slices`).

The parts are audited as one mesh (:func:`meshaudit.distributed.audit_parts`): one
verdict, one report, the exit statuses of one mesh. Options: ``--cluster ADDRESS`` (or
``cluster`` in the configuration file) submits to a running Dask scheduler;
``--elements DIR`` writes one element report per part plus their index; ``--columnar``
makes those Parquet files. The pictures (--plot, --annotate, --html) need the whole mesh
in one process and are refused, as are --csv and --all (every element in one file):
use --elements.
"""

from __future__ import annotations

import argparse
import os
from pathlib import Path

from ..errors import MeshAuditError

#: Options that need the whole mesh in one process.
WHOLE_MESH_ONLY = ("plot", "annotate", "html", "csv")


def add_options(check: argparse.ArgumentParser) -> None:
    """The options of a partitioned mesh (see the module docstring)."""
    check.add_argument(
        "--parts",
        action="store_true",
        help="the MESH arguments are the part files (or patterns) of ONE partitioned mesh, "
        "audited as one mesh (a .pvtu needs no --parts)",
    )
    check.add_argument(
        "--slices",
        type=int,
        metavar="N",
        help="audit one XDMF file (HDF5 heavy data) as a partitioned mesh of N slices of "
        "contiguous elements, each worker reading only its slice",
    )
    check.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="Dask scheduler to audit a partitioned mesh on (default: a local cluster)",
    )
    check.add_argument(
        "--elements",
        metavar="DIR",
        help="partitioned mesh: write one element report per part and an index in DIR",
    )
    check.add_argument(
        "--columnar",
        action="store_true",
        help="with --elements: Parquet files instead of CSV (needs pyarrow)",
    )


def wanted(args: argparse.Namespace, inputs: list[tuple[str, str | None]]) -> bool:
    """Whether this check is of one partitioned mesh."""
    from ..mesh.parts import is_partitioned

    if getattr(args, "parts", False) or getattr(args, "slices", None) is not None:
        return True
    return len(inputs) == 1 and is_partitioned(inputs[0][0])


def run(args: argparse.Namespace) -> int:
    """Audit the partitioned mesh, write its reports, print the verdict; exit status."""
    from ..mesh.parts import PartSet, is_partitioned, parts_of_pattern, parts_of_pvtu
    from ..mesh.slices import is_xdmf, read_layout, xdmf_slices
    from ..outputs import atomic, terminal
    from ..outputs.destinations import check_destinations, protected_inputs
    from ..outputs.process import terminal_output
    from ..results.status import exit_status
    from . import batch
    from .check import _report_renderer
    from .options import console

    if args.slices is not None:
        if args.parts or len(args.mesh) != 1:
            raise MeshAuditError("--slices takes one XDMF file (and no --parts)")
        if not is_xdmf(args.mesh[0]):
            raise MeshAuditError(f"{args.mesh[0]}: --slices reads an XDMF file (.xdmf)")
        parts = xdmf_slices(args.mesh[0], args.slices)
        heavy = read_layout(args.mesh[0]).heavy_files
    elif args.parts:
        sets = [parts_of_pattern(p) for p in args.mesh]
        files = tuple(dict.fromkeys(f for s in sets for f in s.parts))
        parts = PartSet(" ".join(args.mesh), files)
    elif is_partitioned(args.mesh[0]):
        parts = parts_of_pvtu(args.mesh[0])
    else:
        raise MeshAuditError(f"{args.mesh[0]}: not a partitioned mesh (.pvtu); use --parts")
    if args.slices is None:
        heavy = ()
    if getattr(args, "material", None) is not None:
        raise MeshAuditError("--material: a partitioned mesh is audited without a material")
    for kind in WHOLE_MESH_ONLY:
        if getattr(args, kind, None) is not None:
            raise MeshAuditError(
                f"--{kind} needs the whole mesh in one process; for a partitioned mesh use "
                "--elements DIR (one element report per part)"
            )
    if args.all:
        raise MeshAuditError("--all: for a partitioned mesh use --elements DIR")
    if args.columnar and args.elements is None:
        raise MeshAuditError("--columnar goes with --elements DIR")
    anchor = Path(parts.parts[0]) if args.parts else Path(parts.source)
    resolved = batch.apply_settings(args, anchor, many=False)
    if args.parts:  # report names follow the mesh's stem, not the first part's
        for kind in ("json", "junit"):
            given = getattr(args, kind)
            if given is not None and "{stem}" in str(given):
                setattr(resolved, kind, Path(str(given).replace("{stem}", parts.stem)))
    cluster = args.cluster or resolved_cluster(resolved)
    reports = [(getattr(resolved, k), k) for k in ("json", "junit") if getattr(resolved, k)]
    protected = protected_inputs(
        [Path(p) for p in (parts.source, *parts.parts, *heavy) if _is_file(p)],
        getattr(resolved, "config_path", None),
        resolved.profile,
    )
    check_destinations([p for p, _ in reports], protected)

    from ..distributed import audit_parts
    from ..outputs.part_elements import PartWriter

    writer = None
    if args.elements is not None:
        writer = PartWriter(os.path.abspath(args.elements), parts.stem, args.columnar)
    report = audit_parts(
        parts,
        profile=resolved.profile,
        fail_on=resolved.fail_on,
        regions=resolved.regions,
        cluster=cluster,
        file_format=args.file_format,
        element_writer=writer,
    )
    atomic.write_all(
        [(dest, _report_renderer(kind, report, resolved)) for dest, kind in reports], protected
    )
    with terminal_output():
        terminal.render(report, console(), top=resolved.top, quiet=args.quiet)
    return exit_status(report.passed)


def resolved_cluster(args: argparse.Namespace) -> str | None:
    """The configuration file's ``cluster``, when one applies."""
    from .config import settings_for

    path = getattr(args, "config_path", None)
    if path is None:
        return None
    return settings_for(None, path).cluster


def _is_file(path: object) -> bool:
    """Whether ``path`` is a file name naming a file (an XDMF slice is not a file)."""
    return isinstance(path, str) and Path(path).is_file()
