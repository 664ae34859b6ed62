"""A partitioned bracket plate audited on a local Dask cluster, against one process.

Writes the benchmark's distorted bracket-plate quad mesh (:mod:`benchmarks.meshgen`) cut
into ``--parts`` strips of columns, each a binary VTU piece carrying ``GlobalNodeId``,
with a ``.pvtu`` naming them, and (unless ``--no-single``) the same mesh as one VTU file
(cells in piece order, so element numbers agree). Then, each command in a fresh
process:

- *partitioned*: ``meshaudit check plate.pvtu --cluster ADDRESS --json OUT --quiet`` on a
  LocalCluster started here with ``--workers`` worker processes of one thread, each held
  to ``--memory-limit`` (Dask pauses a worker past 80 % of it and restarts it past 95 %);
  wall time, the driver's peak resident memory and each worker's (``ru_maxrss`` of the
  worker process, asked through the client after the run);
- *single*: ``meshaudit check plate_merged.vtu --json OUT --quiet``: wall time and peak.

and checks that both JSON reports have the same verdict, counts and findings.

``--xdmf``: the same mesh as ONE XDMF file with HDF5 heavy data (cells in piece order),
audited as ``meshaudit check plate.xdmf --slices PARTS`` against
``meshaudit check plate.xdmf`` (meshio reading it whole).

    python -m benchmarks.bench_distributed --elements 4e6 --parts 16
    python -m benchmarks.bench_distributed --elements 4e7 --parts 160 --no-single
    python -m benchmarks.bench_distributed --elements 1e6 --parts 8 --xdmf
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

import meshio
import numpy as np

from .meshgen import distorted_plate
from .run import run_child


def write_parts(n_elements: int, parts: int, out: Path, single: bool, xdmf: bool = False) -> Path:
    """Write the pieces, the .pvtu and (``single``) the merged VTU; returns the .pvtu.
    ``xdmf``: only the merged mesh, as one XDMF file with HDF5 heavy data; returns it."""
    mesh = distorted_plate(n_elements)
    nx, _ = mesh.info["grid"]
    cells = mesh.cells[0].data
    points = mesh.points
    owner = (np.arange(cells.shape[0]) % nx) * parts // nx
    order = np.argsort(owner, kind="stable")
    if xdmf:
        path = out / "plate.xdmf"
        meshio.write(path, meshio.Mesh(points, [("quad", cells[order])]), file_format="xdmf")
        return path
    names = []
    for k in range(parts):
        mine = cells[owner == k]
        used = np.unique(mine)
        local = np.searchsorted(used, mine)
        piece = meshio.Mesh(
            points[used], [("quad", local)], point_data={"GlobalNodeId": used.astype(np.int64)}
        )
        name = f"plate_{k:04d}.vtu"
        meshio.write(out / name, piece, binary=True)
        names.append(name)
        del mine, used, local, piece
    pvtu = out / "plate.pvtu"
    listed = "".join(f'    <Piece Source="{n}"/>\n' for n in names)
    pvtu.write_text(
        '<?xml version="1.0"?>\n<VTKFile type="PUnstructuredGrid" version="0.1">\n'
        '  <PUnstructuredGrid GhostLevel="0">\n'
        '    <PPoints><PDataArray type="Float64" NumberOfComponents="3"/></PPoints>\n'
        f"{listed}  </PUnstructuredGrid>\n</VTKFile>\n"
    )
    if single:
        merged = meshio.Mesh(points, [("quad", cells[order])])
        meshio.write(out / "plate_merged.vtu", merged, binary=True)
    return pvtu


def _peak_mb() -> float:
    """This process's peak resident memory, MB (run on each worker)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=float, default=4e6)
    parser.add_argument("--parts", type=int, default=16)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--memory-limit", default="1.5GB")
    parser.add_argument("--no-single", action="store_true", help="skip the one-process audit")
    parser.add_argument("--out", type=Path, help="keep the files here (default: a temporary)")
    parser.add_argument("--xdmf", action="store_true", help="one XDMF file read in slices")
    parser.add_argument("--write-only", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    out = args.out or Path(tempfile.mkdtemp(prefix="meshaudit-dist-"))
    out.mkdir(parents=True, exist_ok=True)
    n = int(args.elements)
    if args.write_only:
        write_parts(n, args.parts, out, not args.no_single, args.xdmf)
        return 0
    from distributed import Client, LocalCluster

    # written by a child: Linux passes a process's peak resident size on to the processes
    # it starts (through fork and exec), so this process stays small for the peaks below
    start = time.perf_counter()
    argv_write = [
        sys.executable,
        "-m",
        "benchmarks.bench_distributed",
        "--write-only",
        "--elements",
        str(n),
        "--parts",
        str(args.parts),
        "--out",
        str(out),
    ]
    run_child(
        argv_write
        + (["--no-single"] if args.no_single else [])
        + (["--xdmf"] if args.xdmf else []),
        Path.cwd(),
    )
    pvtu = out / ("plate.xdmf" if args.xdmf else "plate.pvtu")
    slices = ["--slices", str(args.parts)] if args.xdmf else []
    written = time.perf_counter() - start
    pieces = out.glob("plate.h5") if args.xdmf else out.glob("plate_0*.vtu")
    size_mb = sum(p.stat().st_size for p in pieces) / 1e6
    print(
        f"{n:,} quads in {args.parts} {'slices' if args.xdmf else 'parts'} "
        f"({size_mb:.0f} MB of {'HDF5' if args.xdmf else 'pieces'}), written in {written:.1f} s",
        flush=True,
    )
    rows = []
    with (
        LocalCluster(
            n_workers=args.workers,
            threads_per_worker=1,
            processes=True,
            memory_limit=args.memory_limit,
            dashboard_address=":0",
            silence_logs=50,
        ) as cluster,
        Client(cluster) as client,
    ):
        report = out / "partitioned.json"
        run = run_child(
            [
                sys.executable,
                "-m",
                "meshaudit",
                "check",
                str(pvtu),
                *slices,
                "--cluster",
                cluster.scheduler_address,
                "--json",
                str(report),
                "--quiet",
                "--no-config",
            ],
            out,
        )
        workers = client.run(_peak_mb)
        rows.append(("partitioned", run, max(workers.values())))
    doc = json.loads(report.read_text())
    if not args.no_single:
        single_report = out / "single.json"
        one = run_child(
            [
                sys.executable,
                "-m",
                "meshaudit",
                "check",
                str(pvtu if args.xdmf else out / "plate_merged.vtu"),
                "--json",
                str(single_report),
                "--quiet",
                "--no-config",
            ],
            out,
        )
        rows.append(("single", one, None))
        ref = json.loads(single_report.read_text())
        same = (
            doc["verdict"] == ref["verdict"]
            and doc["counts"] == ref["counts"]
            and [(f["kind"], f["count"]) for f in doc["findings"]]
            == [(f["kind"], f["count"]) for f in ref["findings"]]
        )
        print(f"same verdict, counts and findings: {same}")
    print()
    print("| audit | elements | parts | workers | wall s | driver peak MB | worker peak MB |")
    print("|---|---|---|---|---|---|---|")
    for name, r, worker in rows:
        w = "-" if worker is None else f"{worker:.0f}"
        print(
            f"| {name} | {n:,} | {args.parts if name != 'single' else 1} | "
            f"{args.workers if name != 'single' else 1} | {r.seconds:.1f} | "
            f"{r.peak_mb:.0f} | {w} |"
        )
    print(
        f"\nverdict {doc['verdict']}, counts {doc['counts']}, "
        f"findings {[(f['kind'], f['count']) for f in doc['findings']]}"
    )
    if args.out is None:
        shutil.rmtree(out, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
