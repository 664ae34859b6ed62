"""The README's table of bending error and time step against distortion.

    python -m benchmarks.bending_table

Single elements of side 2 (aspect: 2r x 2), plane stress, nu = 0.3, measured by
:mod:`meshaudit.metrics.stiffness`: the parallelogram (angle between its sides), the
symmetric trapezoid (taper t: top corners moved in by t), the rectangle (aspect ratio r).
Quadratic elements have their midside nodes at the middle of straight sides. Columns:
the bilinear quad's bending error and the part its distortion adds, the eight- and
nine-node quads' bending error, and the bilinear quad's stable time step over the unit
square's.
"""

from __future__ import annotations

import math

import numpy as np

NU = 0.3
SHAPES: tuple[tuple[str, np.ndarray], ...] = (
    *(
        (
            f"parallelogram {a}°",
            np.array(
                [
                    [0, 0],
                    [2, 0],
                    [2 + 2 * math.cos(math.radians(a)), 2 * math.sin(math.radians(a))],
                    [2 * math.cos(math.radians(a)), 2 * math.sin(math.radians(a))],
                ]
            ),
        )
        for a in (90, 75, 60, 45, 30)
    ),
    *(
        (f"trapezoid, taper {t}", np.array([[0, 0], [2, 0], [2 - t, 2], [t, 2]]))
        for t in (0.2, 0.4, 0.6)
    ),
    *((f"rectangle {r}:1", np.array([[0, 0], [2 * r, 0], [2 * r, 2], [0, 2]])) for r in (2, 4, 8)),
)


def measure(cell_type: str, corners: np.ndarray) -> dict[str, float]:
    """The stiffness metrics of one element with these corners (midside nodes straight)."""
    from meshaudit.cells.registry import CELL_TYPES
    from meshaudit.metrics import stiffness

    cell = CELL_TYPES[cell_type]
    nodes = CELL_TYPES["quad"].shape_functions(cell.reference_nodes) @ corners
    lam, mu = NU / (1 - NU**2), 1 / (2 * (1 + NU))
    out, _ = stiffness.measure_nodes(
        cell,
        nodes[None].astype(float),
        np.array([False]),
        np.array([lam]),
        np.array([mu]),
        np.array([1.0]),
    )
    return {k: float(v[0]) for k, v in out.items()}


def table() -> str:
    """The Markdown table."""
    square = measure("quad", SHAPES[0][1])["stable_time_step"]
    lines = [
        "| element shape | quad `bending_error` | quad `bending_error_distortion` "
        "| quad8 `bending_error` | quad9 `bending_error` | quad step / square's |",
        "| --- | ---: | ---: | ---: | ---: | ---: |",
    ]
    for name, corners in SHAPES:
        q, q8, q9 = (measure(t, corners) for t in ("quad", "quad8", "quad9"))
        cells = [
            q["bending_error"],
            q["bending_error_distortion"],
            q8["bending_error"],
            q9["bending_error"],
            q["stable_time_step"] / square,
        ]
        text = ["0" if abs(c) < 1e-9 else f"{c:.3g}" for c in cells]  # rounding: 0
        lines.append(f"| {name} | " + " | ".join(text) + " |")
    return "\n".join(lines)


if __name__ == "__main__":
    print(table())
