"""CPU time of the metric kernels, and agreement of their results with another checkout.

``python -m benchmarks.kernels [--elements N] [--repeat R] [--against CHECKOUT]`` builds
four bracket-plate samples from a plate of about N quads (planar quads, the same split
into 2N triangles, quad8 with midside nodes, and the plate bent into a shell), runs
``meshaudit.engine.measure.measure_elements`` over them in chunks as the engine does, and prints
the best-of-R CPU time (``time.process_time``) per sample.

With ``--against`` the same samples are measured again by the kernels of CHECKOUT (a
directory holding another version of the ``meshaudit`` package, e.g. a git worktree of
main), in a child process, and every metric is compared: the largest relative
difference (absolute below 1) and any flag that differs are printed. Use it to check that
a faster kernel still gives the same numbers.
"""

from __future__ import annotations

import argparse
import importlib
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from benchmarks.meshgen import distorted_plate

CHUNK = 32_768
#: Sample name -> (family, cell type, frame kind).
SAMPLES = {
    "quad": ("quad", None, "planar"),
    "triangle": ("triangle", None, "planar"),
    "quad8": ("quad", "quad8", "planar"),
    "shell": ("quad", None, "shell"),
}


def samples(n_elements: int) -> dict[str, np.ndarray]:
    """Node coordinates (n, k, 3) of each sample, all from one invented bracket plate."""
    plate = distorted_plate(n_elements)
    quads = plate.points[plate.cells_dict["quad"]]
    mids = 0.5 * (quads + np.roll(quads, -1, axis=1))
    bent = quads.copy()
    bent[..., 2] = 5.0 * np.sin(bent[..., 0] / 30.0)
    return {
        "quad": quads,
        "triangle": np.concatenate([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]]),
        "quad8": np.concatenate([quads, mids], axis=1),
        "shell": bent,
    }


def _engine():
    """(measure(family, coords, frame, cell_type), Frame) of the meshaudit imported: this
    checkout's, or an older one's (``--against``), laid out without sub-packages."""
    import meshaudit

    if not (Path(meshaudit.__file__).parent / "engine").is_dir():
        old_api = importlib.import_module("meshaudit.api")  # before the table of cell types
        return old_api.measure_elements, importlib.import_module("meshaudit.frames").Frame
    from meshaudit.cells import CELL_TYPES
    from meshaudit.engine.measure import measure_elements
    from meshaudit.mesh.frames import Frame

    def measure(family, coords, frame, cell_type):
        return measure_elements(CELL_TYPES[cell_type or family], coords, frame)

    return measure, Frame


def measure_all(coords: np.ndarray, family: str, cell_type: str | None, kind: str):
    """Metrics and flags of every element, measured chunk by chunk."""
    measure, Frame = _engine()
    frame = Frame("shell") if kind == "shell" else Frame("planar", np.eye(3)[2], np.eye(3)[:2])
    parts = [
        measure(family, coords[s : s + CHUNK], frame, cell_type)
        for s in range(0, len(coords), CHUNK)
    ]
    out = {}
    for i, prefix in ((0, "m"), (1, "f")):
        for key in parts[0][i]:
            out[f"{prefix}/{key}"] = np.concatenate([p[i][key] for p in parts])
    return out


def run(n_elements: int, repeat: int, save: Path | None) -> dict[str, tuple[float, int]]:
    """(best-of-``repeat`` CPU seconds, elements) per sample; results saved to ``save``."""
    times, results = {}, {}
    for name, coords in samples(n_elements).items():
        best = np.inf
        for _ in range(repeat):
            start = time.process_time()
            out = measure_all(coords, *SAMPLES[name])
            best = min(best, time.process_time() - start)
        times[name] = best, len(coords)
        results.update({f"{name}/{k}": v for k, v in out.items()})
    if save is not None:
        np.savez(save, **results)
    return times


def compare(ours: Path, theirs: Path) -> tuple[float, list[str]]:
    """(largest relative difference of any metric, names of arrays that disagree)."""
    a, b = np.load(ours), np.load(theirs)
    worst, problems = 0.0, []
    for key in sorted(set(a) | set(b)):
        if key not in a or key not in b:
            problems.append(f"{key}: missing on one side")
            continue
        x, y = a[key], b[key]
        if x.dtype == bool:
            if not np.array_equal(x, y):
                problems.append(f"{key}: {int((x != y).sum())} flags differ")
            continue
        if not np.array_equal(np.isfinite(x), np.isfinite(y)):
            problems.append(f"{key}: NaN or infinity at different elements")
            continue
        ok = np.isfinite(x)
        diff = np.abs(x[ok] - y[ok]) / np.maximum(np.abs(x[ok]), 1.0)
        worst = max(worst, float(diff.max(initial=0.0)))
    return worst, problems


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=int, default=100_000)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--against", type=Path, help="checkout whose kernels to compare with")
    parser.add_argument("--save", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--kernels-from", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.kernels_from is not None:  # the child: that checkout's meshaudit, our samples
        sys.path.insert(0, str(args.kernels_from))
    with tempfile.TemporaryDirectory() as tmp:
        ours = Path(tmp) / "ours.npz"
        for name, (seconds, count) in run(args.elements, args.repeat, args.save or ours).items():
            print(f"{name:10s} {seconds * 1000:9.1f} ms CPU  ({count} elements)")
        if args.against is None or args.save is not None:
            return
        theirs = Path(tmp) / "theirs.npz"
        cmd = [sys.executable, "-m", "benchmarks.kernels", "--elements", str(args.elements)]
        cmd += ["--repeat", str(args.repeat), "--save", str(theirs)]
        cmd += ["--kernels-from", str(args.against.resolve())]
        print(f"{args.against}:")
        subprocess.run(cmd, cwd=Path(__file__).resolve().parents[1], check=True)
        worst, problems = compare(ours, theirs)
        print(f"largest relative difference: {worst:.3g}")
        print("\n".join(problems) or "every flag the same")


if __name__ == "__main__":
    main()
