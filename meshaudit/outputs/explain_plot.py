"""Figure of one element: the reference grid mapped onto it, Gauss points, neighbours.

Lines xi = const and eta = const of the reference element are pushed through the element's
own map (bilinear for quads, affine for triangles). Where the map folds (det J <= 0) the
mapped grid cells turn inside out; those cells are hatched, so an inverted or folded
element shows at a glance. Neighbours (elements sharing a node) are drawn in grey.
"""

from __future__ import annotations

import textwrap
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..explain import Explanation
from ..inspection import AuditedMesh, corner_table
from ..reference import quad_shape_functions
from .plot import HALO, OUTLINE, mesh_view, plot_format
from .projection import View, plane_view

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Grid lines per reference direction (including the element's own edges).
GRID_LINES = 9
SAMPLES = 41


def reference_map(family: str, corners: np.ndarray, ref: np.ndarray) -> np.ndarray:
    """Map reference points ``ref`` (..., 2) through the element's corners (c, d)."""
    if family == "quad":
        return quad_shape_functions(ref[..., 0], ref[..., 1]) @ corners
    xi, eta = ref[..., 0:1], ref[..., 1:2]
    return corners[0] + xi * (corners[1] - corners[0]) + eta * (corners[2] - corners[0])


def reference_grid(family: str) -> list[np.ndarray]:
    """Polylines (SAMPLES, 2) of the reference grid: xi = const and eta = const."""
    t = np.linspace(-1.0, 1.0, SAMPLES) if family == "quad" else np.linspace(0.0, 1.0, SAMPLES)
    levels = np.linspace(t[0], t[-1], GRID_LINES)
    lines = []
    for c in levels:
        if family == "quad":
            lines.append(np.column_stack([np.full_like(t, c), t]))
            lines.append(np.column_stack([t, np.full_like(t, c)]))
        else:
            s = t * (1.0 - c)
            lines.append(np.column_stack([np.full_like(s, c), s]))
            lines.append(np.column_stack([s, np.full_like(s, c)]))
            lines.append(np.column_stack([s, 1.0 - c - s]))
    return lines


def folded_cells(family: str, corners: np.ndarray) -> list[np.ndarray]:
    """Mapped grid cells (4, 2) whose signed area is <= 0: where the map folds over."""
    if family != "quad":
        return []
    levels = np.linspace(-1.0, 1.0, GRID_LINES)
    a, b = np.meshgrid(levels[:-1], levels[:-1], indexing="ij")
    da = levels[1] - levels[0]
    ref = np.stack(
        [
            np.stack([a, b], -1),
            np.stack([a + da, b], -1),
            np.stack([a + da, b + da], -1),
            np.stack([a, b + da], -1),
        ],
        axis=-2,
    ).reshape(-1, 4, 2)
    cells = reference_map(family, corners, ref)
    x, y = cells[..., 0], cells[..., 1]
    signed = 0.5 * (x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y).sum(axis=1)
    return list(cells[signed <= 0.0])


def element_view(audited: AuditedMesh, ex: Explanation) -> View:
    """The mesh page for planar meshes; the element's best-fit plane for shells."""
    if audited.report.summary.frame == "planar":
        return mesh_view(audited.report, audited.elements)
    return plane_view(ex.coordinates[: len(ex.det_j_nodes)])


def draw(audited: AuditedMesh, ex: Explanation) -> Figure:
    """Build the figure of one element (nothing is written)."""
    from matplotlib.figure import Figure

    view = element_view(audited, ex)
    corners = view.project(ex.coordinates[: len(ex.det_j_nodes)])
    fig = Figure(figsize=(8.0, 7.0), layout="constrained")
    ax = fig.add_subplot(1, 1, 1)
    _neighbours(ax, audited, ex, view)
    _grid(ax, ex.family, corners)
    _nodes_and_gauss(ax, ex, corners)
    _frame(ax, corners)
    ax.set_title(_title(ex), fontsize=9)
    return fig


def _title(ex: Explanation) -> str:
    breached = [m.name for m in ex.breaches]
    validity = [f for f in ex.flags if f not in breached]
    lines = [f"element {ex.id} ({ex.cell_type}, profile {ex.profile}): {ex.verdict}"]
    if validity:
        lines.append("invalid: " + ", ".join(validity))
    if breached:
        lines.append(textwrap.fill("limits breached: " + ", ".join(breached), 90))
    lines.append(
        "reference grid lines mapped onto the element; hatched: det J <= 0; grey: neighbours (ids)"
    )
    return "\n".join(lines)


def render(path: Path, audited: AuditedMesh, ex: Explanation) -> None:
    draw(audited, ex).savefig(path, format=plot_format(path), dpi=150)


def _neighbours(ax: Axes, audited: AuditedMesh, ex: Explanation, view: View) -> None:
    from matplotlib.collections import PolyCollection

    table = corner_table(audited.elements)
    verts = view.project(audited.elements.points[table[ex.neighbour_rows]])
    ax.add_collection(
        PolyCollection(verts, facecolors="#e6e6e6", edgecolors="#8c8c8c", lw=0.8, gid="neighbours")
    )
    for k, v in zip(ex.neighbour_ids, verts):
        c = v.mean(axis=0)
        ax.text(c[0], c[1], str(int(k)), ha="center", va="center", fontsize=7, color="#6e6e6e")


def _grid(ax: Axes, family: str, corners: np.ndarray) -> None:
    from matplotlib.collections import LineCollection, PolyCollection

    folded = folded_cells(family, corners)
    if folded:
        ax.add_collection(
            PolyCollection(
                folded, facecolors="none", edgecolors=OUTLINE, hatch="////", lw=0.0, gid="folded"
            )
        )
    lines = [reference_map(family, corners, line) for line in reference_grid(family)]
    ax.add_collection(LineCollection(lines, colors="#3b528b", linewidths=0.7, gid="grid"))
    closed = np.vstack([corners, corners[:1]])
    ax.plot(closed[:, 0], closed[:, 1], color=OUTLINE, lw=1.8, zorder=4)


def _nodes_and_gauss(ax: Axes, ex: Explanation, corners: np.ndarray) -> None:
    from matplotlib import patheffects

    halo = [patheffects.withStroke(linewidth=3, foreground=HALO)]
    centre = corners.mean(axis=0)
    for k, (p, d) in enumerate(zip(corners, ex.det_j_nodes)):
        ax.plot(*p, "o", color=OUTLINE, ms=5, zorder=5)
        out = p + 0.12 * (p - centre)
        ax.annotate(
            f"{k + 1}: node {int(ex.node_indices[k])}\ndet J {d:.4g}",
            xy=out,
            ha="center",
            va="center",
            fontsize=8,
            path_effects=halo,
            zorder=6,
        )
    g = reference_map(ex.family, corners, ex.gauss_points)
    ax.plot(g[:, 0], g[:, 1], "P", color="#fde725", mec=OUTLINE, ms=8, zorder=5, gid="gauss")
    for p, d in zip(g, ex.det_j_gauss):
        ax.annotate(
            f"{d:.4g}",
            xy=p,
            xytext=(6, 6),
            textcoords="offset points",
            fontsize=8,
            path_effects=halo,
            zorder=6,
        )


def _frame(ax: Axes, corners: np.ndarray) -> None:
    lo, hi = corners.min(axis=0), corners.max(axis=0)
    size = float(max(hi - lo)) or 1.0
    centre = (lo + hi) / 2.0
    ax.set_xlim(centre[0] - 1.1 * size, centre[0] + 1.1 * size)
    ax.set_ylim(centre[1] - 1.1 * size, centre[1] + 1.1 * size)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=8)
