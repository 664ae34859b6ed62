"""Benchmark: audit time against a bare ``meshio.read`` of the same file, at several sizes.

    python -m benchmarks.run                       # 10^4, 10^5 and 10^6 quads
    python -m benchmarks.run --sizes 1e7 --no-plot # ten million (about 3 GB of files)
    python -m benchmarks.run --sizes 1000 --out /tmp/bench   # a smoke run
    python -m benchmarks.run --cells tetra,hexahedron --sizes 1e5,1e6 --no-plot

For each size a distorted bracket-plate mesh (see :mod:`benchmarks.meshgen`) is written as
binary gmsh msh 4.1 and as VTU: quads (the default), or with ``--cells`` tetrahedra and
hexahedra filling the plate's block. For each file, in the same run:

- bare read: ``python -c "meshio.read(FILE)"`` in a fresh interpreter, wall time;
- audit: ``python -m meshaudit check FILE --json OUT --quiet`` from this checkout (no
  plot), wall time and peak resident memory (``ru_maxrss`` of that child, from wait4);
- audit on the numpy kernels: the same audit with ``MESHAUDIT_KERNEL=numpy``, which
  turns the compiled element pass off (see :mod:`meshaudit.metrics.fused`); the table
  says which pass the plain audit took (``kernel``: compiled or numpy, from its JSON
  report) and both ratios to the bare read;
- element audit alone: the same with a profile that turns every mesh-level finding
  kind off (written next to the meshes as ``elements_only.toml``), which leaves the
  element metrics, verdicts and reports;
- stages: one more child (:mod:`benchmarks.stages`) that times read, the label pass
  (the file's own element and node numbers, :mod:`meshaudit.mesh.labels`), element arrays,
  metrics, verdicts, the rest of the engine, reports (statistics and JSON) and the plot.

Both wall times include starting Python and importing what the command needs, so the
ratio audit / bare read is what a user sees. The table is printed and written as
Markdown (``--markdown``). Timings are the best of ``--repeat`` runs, the two commands
alternating so that both see the same load on a shared machine.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

from .meshgen import distorted_block, distorted_plate, write_mesh

REPO = Path(__file__).resolve().parents[1]
STAGES = (
    "read",
    "labels",
    "elements",
    "metrics",
    "verdicts",
    "mesh checks",
    "size ratio",
    "engine other",
    "reports",
    "plot",
)
BARE_READ = "import sys, meshio; meshio.read(sys.argv[1])"


@dataclass
class Run:
    """Wall time (s), peak resident memory (MB) and exit status of one child process."""

    seconds: float
    peak_mb: float
    status: int
    stdout: str = ""


@dataclass
class Row:
    size: int
    fmt: str
    cell: str
    file_mb: float
    bare: Run
    audit: Run
    elements_only: Run
    audit_numpy: Run  # the audit with the compiled pass turned off
    kernel: str = "-"  # the pass the plain audit took: "compiled" or "numpy"
    stages: dict[str, float] = field(default_factory=dict)
    not_ok: int | None = None  # elements listed in the JSON report (warn or fail)

    @property
    def ratio(self) -> float:
        return self.audit.seconds / self.bare.seconds

    @property
    def numpy_ratio(self) -> float:
        return self.audit_numpy.seconds / self.bare.seconds

    @property
    def elements_ratio(self) -> float:
        return self.elements_only.seconds / self.bare.seconds


def elements_only_profile(outdir: Path) -> Path:
    """A profile file: the standard limits with every mesh-level finding kind off."""
    from meshaudit.judge.finding_kinds import KIND_NAMES

    path = outdir / "elements_only.toml"
    lines = ['name = "elements-only"', 'extends = "standard"', "", "[findings]"]
    lines += [f'{kind} = "off"' for kind in KIND_NAMES]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def child_env(**extra: str) -> dict[str, str]:
    env = dict(os.environ, **extra)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    # cached bytecode, as an installed package has: without it every run recompiles the
    # checkout's modules (about 30 ms here), which no user of an installed copy pays
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    return env


def run_child(
    argv: list[str], cwd: Path, timeout: float = 3600.0, env: dict[str, str] | None = None
) -> Run:
    """Run ``argv`` (in ``env``, default :func:`child_env`); wall time and the child's own
    peak RSS (Linux reports KiB)."""
    start = time.perf_counter()
    proc = subprocess.Popen(
        argv, cwd=cwd, env=env or child_env(), stdout=subprocess.PIPE, stderr=subprocess.DEVNULL
    )
    out = proc.stdout.read() if proc.stdout else b""
    _, status, usage = os.wait4(proc.pid, 0)
    seconds = time.perf_counter() - start
    proc.returncode = os.waitstatus_to_exitcode(status)  # already reaped by wait4
    if seconds > timeout:
        raise RuntimeError(f"{argv[:4]} took {seconds:.0f} s")
    return Run(seconds, usage.ru_maxrss / 1024.0, proc.returncode, out.decode())


def best_of(repeat: int, argv: list[str], cwd: Path) -> Run:
    runs = [run_child(argv, cwd) for _ in range(max(1, repeat))]
    return min(runs, key=lambda r: r.seconds)


#: Cell types the benchmark meshes: quads on the plate, solids in its block.
CELLS = ("quad", "tetra", "hexahedron")


def prepare(size: int, formats: list[str], outdir: Path, cell: str = "quad") -> dict[str, Path]:
    """Mesh files of ``size`` elements of ``cell`` type, generated once and reused if
    already there."""
    stem = f"plate_{size}" if cell == "quad" else f"block_{cell}_{size}"
    paths = {fmt: outdir / f"{stem}.{fmt}" for fmt in formats}
    missing = [fmt for fmt, p in paths.items() if not p.exists()]
    if missing:
        mesh = distorted_plate(size) if cell == "quad" else distorted_block(size, cell)
        for fmt in missing:
            write_mesh(mesh, paths[fmt])
        del mesh
    return paths


def measure(path: Path, size: int, outdir: Path, repeat: int, plot: bool, cell: str) -> Row:
    py = sys.executable
    bare_argv = [py, "-c", BARE_READ, str(path)]
    json_out = outdir / f"{path.name}.report.json"
    audit_argv = [py, "-m", "meshaudit", "check", str(path), "--json", str(json_out), "--quiet"]
    numpy_argv = [*audit_argv[:6], str(outdir / f"{path.name}.numpy.json"), "--quiet"]
    numpy_env = child_env(MESHAUDIT_KERNEL="numpy")
    elements_argv = [*audit_argv, "--profile", str(elements_only_profile(outdir))]
    # alternate the commands so that all see the same load on a shared machine
    bare_runs, audit_runs, numpy_runs, elements_runs = [], [], [], []
    for _ in range(max(1, repeat)):
        bare_runs.append(run_child(bare_argv, outdir))
        audit_runs.append(run_child(audit_argv, outdir))
        numpy_runs.append(run_child(numpy_argv, outdir, env=numpy_env))
        elements_runs.append(run_child(elements_argv, outdir))
    bare = min(bare_runs, key=lambda r: r.seconds)
    audit = min(audit_runs, key=lambda r: r.seconds)
    audit_numpy = min(numpy_runs, key=lambda r: r.seconds)
    elements_only = min(elements_runs, key=lambda r: r.seconds)
    kernel = json.loads(json_out.read_text(encoding="utf-8"))["summary"].get("kernel", "-")
    for run in (audit, audit_numpy, elements_only):
        if run.status not in (0, 1):
            raise RuntimeError(f"meshaudit check {path} exited {run.status}")
    stage_argv = [py, "-m", "benchmarks.stages", str(path), str(outdir)]
    if plot:
        stage_argv.append("--plot")
    stage_run = run_child(stage_argv, outdir)
    stages: dict[str, float] = {}
    not_ok = None
    if stage_run.status == 0:
        result = json.loads(stage_run.stdout)
        stages = result["times"]
        not_ok = result["verdicts"]["warn"] + result["verdicts"]["fail"]
    file_mb = path.stat().st_size / 1e6
    fmt = path.suffix.lstrip(".")
    return Row(
        size, fmt, cell, file_mb, bare, audit, elements_only, audit_numpy, kernel, stages, not_ok
    )


def help_time(repeat: int) -> float:
    """Wall time of ``python -m meshaudit --help`` (start-up cost of the command)."""
    return best_of(repeat, [sys.executable, "-m", "meshaudit", "--help"], REPO).seconds


def markdown(rows: list[Row], help_seconds: float) -> str:
    head = [
        "elements",
        "not ok",
        "format",
        "cells",
        "file MB",
        "bare read s",
        "kernel",
        "audit s",
        "ratio",
        "peak MB",
        "numpy kernels audit s",
        "numpy ratio",
        "no mesh checks s",
        "ratio",
        "peak MB",
        *(f"{s} s" for s in STAGES),
    ]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        cells = [
            f"{r.size:,}",
            "-" if r.not_ok is None else f"{r.not_ok:,}",
            r.fmt,
            r.cell,
            f"{r.file_mb:.1f}",
            f"{r.bare.seconds:.2f}",
            r.kernel,
            f"{r.audit.seconds:.2f}",
            f"{r.ratio:.2f}",
            f"{r.audit.peak_mb:.0f}",
            f"{r.audit_numpy.seconds:.2f}",
            f"{r.numpy_ratio:.2f}",
            f"{r.elements_only.seconds:.2f}",
            f"{r.elements_ratio:.2f}",
            f"{r.elements_only.peak_mb:.0f}",
            *(f"{r.stages[s]:.2f}" if s in r.stages else "-" for s in STAGES),
        ]
        lines.append("| " + " | ".join(cells) + " |")
    lines.append("")
    lines.append(f"`python -m meshaudit --help`: {help_seconds:.2f} s.")
    return "\n".join(lines) + "\n"


def machine() -> str:
    """One line describing this machine: cores, CPU model, RAM, Python and numpy."""
    import numpy

    cpu = "unknown CPU"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
        mem_kb = next(
            int(line.split()[1])
            for line in Path("/proc/meminfo").read_text().splitlines()
            if line.startswith("MemTotal")
        )
        ram = f"{mem_kb / 1024**2:.0f} GiB RAM"
    except (OSError, StopIteration, ValueError):
        ram = "RAM unknown"
    return (
        f"{os.cpu_count()} cores ({cpu}), {ram}, Python {platform.python_version()}, "
        f"numpy {numpy.__version__}"
    )


def parse_sizes(text: str) -> list[int]:
    return [int(float(s)) for s in text.split(",") if s.strip()]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.run", description=__doc__)
    parser.add_argument("--sizes", default="1e4,1e5,1e6", help="element counts, comma-separated")
    parser.add_argument("--formats", default="msh,vtu", help="msh and/or vtu")
    parser.add_argument(
        "--cells",
        default="quad",
        help=f"cell types, comma-separated: {', '.join(CELLS)} (solids fill the plate's block)",
    )
    parser.add_argument("--out", type=Path, default=REPO / "benchmarks" / "out")
    parser.add_argument("--markdown", type=Path, help="Markdown table (default OUT/results.md)")
    parser.add_argument("--repeat", type=int, default=1, help="best of N timed runs")
    parser.add_argument(
        "--plot-up-to",
        type=float,
        default=1e6,
        help="time the plot stage for sizes up to this (default 1e6)",
    )
    parser.add_argument("--no-plot", action="store_true", help="never time the plot stage")
    args = parser.parse_args(argv)

    args.out.mkdir(parents=True, exist_ok=True)
    formats = [f.strip() for f in args.formats.split(",") if f.strip()]
    cells = [c.strip() for c in args.cells.split(",") if c.strip()]
    unknown = sorted(set(cells) - set(CELLS))
    if unknown:
        parser.error(f"--cells: not a benchmark cell type: {', '.join(unknown)}")
    rows: list[Row] = []
    for cell in cells:
        for size in parse_sizes(args.sizes):
            paths = prepare(size, formats, args.out, cell)
            plot = not args.no_plot and size <= args.plot_up_to
            for fmt in formats:
                row = measure(paths[fmt], size, args.out, args.repeat, plot, cell)
                rows.append(row)
                _progress(row)
    text = f"Machine: {machine()}.\n\n" + markdown(rows, help_time(args.repeat))
    dest = args.markdown or args.out / "results.md"
    dest.write_text(text, encoding="utf-8")
    print()
    print(text, end="")
    print(f"(written to {dest})")
    return 0


def _progress(row: Row) -> None:
    print(
        f"{row.size:>10,} {row.cell} {row.fmt}: bare read {row.bare.seconds:.2f} s, "
        f"audit ({row.kernel}) {row.audit.seconds:.2f} s (x{row.ratio:.2f}), "
        f"peak {row.audit.peak_mb:.0f} MB; numpy kernels {row.audit_numpy.seconds:.2f} s "
        f"(x{row.numpy_ratio:.2f}); without mesh checks "
        f"{row.elements_only.seconds:.2f} s (x{row.elements_ratio:.2f})",
        flush=True,
    )


if __name__ == "__main__":
    sys.exit(main())
