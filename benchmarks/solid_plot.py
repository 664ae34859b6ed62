"""Time of the volume plot (``check --plot`` of a mesh of solids) on the bracket plate's
block meshed with distorted hexahedra (:func:`benchmarks.meshgen.distorted_block`, one
element mirrored, one collapsed).

``python -m benchmarks.solid_plot [--elements N] [--cells hexahedron|tetra] [--out FILE]``

Audits the block once (time printed, not counted), then times the plot alone in stages:
the boundary faces (:func:`meshaudit.mesh.faces.boundary_faces`), building the figure
(:func:`meshaudit.outputs.plot.draw`) and writing it as PNG at 150 dpi, as ``--plot`` does.
Wall times of one run each, in seconds.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from .meshgen import distorted_block


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=float, default=1e6)
    parser.add_argument("--cells", default="hexahedron", choices=("hexahedron", "tetra"))
    parser.add_argument(
        "--out", type=Path, default=None, help="PNG to write (default: a temporary file)"
    )
    args = parser.parse_args(argv)

    from meshaudit import audit_mesh
    from meshaudit.mesh.faces import boundary_faces
    from meshaudit.outputs import plot

    mesh = distorted_block(int(args.elements), args.cells)
    start = time.perf_counter()
    audited = audit_mesh(mesh)
    print(f"{len(audited.report):,} {args.cells}: audit {time.perf_counter() - start:.1f} s")
    start = time.perf_counter()
    faces, _ = boundary_faces(audited.elements)
    print(f"boundary faces ({len(faces):,}): {time.perf_counter() - start:.2f} s")
    start = time.perf_counter()
    fig = plot.draw(audited.report, audited.elements)
    built = time.perf_counter() - start
    with tempfile.TemporaryDirectory() as tmp:
        out = args.out or Path(tmp) / "plot.png"
        fig.savefig(out, format="png", dpi=150)
        total = time.perf_counter() - start
    print(f"plot: figure {built:.2f} s, with the PNG written {total:.2f} s")


if __name__ == "__main__":
    main()
