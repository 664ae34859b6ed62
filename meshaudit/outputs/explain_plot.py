"""Figure of one element: the reference grid mapped onto it, Gauss points, neighbours.

Lines xi = const and eta = const of the reference element are pushed through the element's
own map (bilinear for quads, affine for triangles). Where the map folds (det J <= 0) the
mapped grid cells turn inside out; those cells are hatched, so an inverted or folded
element shows at a glance. Neighbours (elements sharing a node) are drawn in grey.

A solid is drawn by :mod:`meshaudit.outputs.solid_explain`: its reference element beside
it, the reference grid of each face mapped onto it, its neighbours faint.
"""

from __future__ import annotations

import textwrap
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..cells.mapping import map_points
from ..cells.registry import CELL_TYPES, CellType
from ..mesh.scale import length_exponent
from ..results.explain import Explanation
from ..results.inspection import AuditedMesh, corner_table
from .label_layout import freeze_layout, place_labels
from .mpl import drawable, new_figure
from .plot import HALO, OUTLINE, limits_apart, mesh_view, plot_format
from .projection import View, drawing_unit, plane_view, unit_text, with_unit

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Grid lines per reference direction (including the element's own edges).
GRID_LINES = 9
SAMPLES = 41


def _on_square(cell: CellType) -> bool:
    """Whether the cell's reference element is the square [-1, 1]^2 (else the triangle)."""
    return cell.n_corners == 4


def reference_grid(cell: CellType) -> list[np.ndarray]:
    """Polylines (SAMPLES, 2) of the reference grid: xi = const and eta = const
    (and xi + eta = const on the triangle)."""
    square = _on_square(cell)
    t = np.linspace(-1.0, 1.0, SAMPLES) if square else np.linspace(0.0, 1.0, SAMPLES)
    levels = np.linspace(t[0], t[-1], GRID_LINES)
    lines = []
    for c in levels:
        if square:
            lines.append(np.column_stack([np.full_like(t, c), t]))
            lines.append(np.column_stack([t, np.full_like(t, c)]))
        else:
            s = t * (1.0 - c)
            lines.append(np.column_stack([np.full_like(s, c), s]))
            lines.append(np.column_stack([s, np.full_like(s, c)]))
            lines.append(np.column_stack([s, 1.0 - c - s]))
    return lines


def reference_boundary(cell: CellType) -> np.ndarray:
    """Closed polyline (m, 2) around the reference element, finely sampled."""
    t = np.linspace(0.0, 1.0, SAMPLES)[:-1, None]
    corners = cell.corners
    loop = [a + t * (b - a) for a, b in zip(corners, np.roll(corners, -1, axis=0))]
    return np.vstack([*loop, corners[:1]])


def reference_cells(cell: CellType) -> np.ndarray:
    """Small reference cells (m, v, 2) tiling the reference element: squares or triangles."""
    m = GRID_LINES - 1
    if _on_square(cell):
        lv = np.linspace(-1.0, 1.0, GRID_LINES)
        a, b = (g.ravel() for g in np.meshgrid(lv[:-1], lv[:-1], indexing="ij"))
        d = lv[1] - lv[0]
        return np.stack([np.c_[a, b], np.c_[a + d, b], np.c_[a + d, b + d], np.c_[a, b + d]], 1)
    i, j = (g.ravel() for g in np.meshgrid(np.arange(m), np.arange(m), indexing="ij"))
    up = i + j < m
    down = i + j < m - 1
    h = 1.0 / m
    tri_up = np.stack([np.c_[i, j], np.c_[i + 1, j], np.c_[i, j + 1]], 1)[up] * h
    tri_down = np.stack([np.c_[i + 1, j], np.c_[i + 1, j + 1], np.c_[i, j + 1]], 1)[down] * h
    return np.concatenate([tri_up, tri_down]).astype(float)


def folded_cells(cell: CellType, nodes: np.ndarray) -> np.ndarray:
    """Mapped reference cells whose signed area is <= 0: where the map folds over."""
    cells = map_points(cell, nodes, reference_cells(cell))
    exponent = length_exponent(cells)  # the sign of an area at any finite size
    with np.errstate(under="ignore"):
        x, y = (np.ldexp(cells[..., k], -exponent) for k in (0, 1))
    signed = 0.5 * (x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y).sum(axis=1)
    return cells[signed <= 0.0]


def element_view(audited: AuditedMesh, ex: Explanation) -> View:
    """The mesh page for planar meshes; the element's best-fit plane for shells."""
    if audited.report.summary.frame == "planar":
        return mesh_view(audited.report, audited.elements)
    corners = ex.coordinates[: CELL_TYPES[ex.cell_type].n_corners]
    return with_unit(plane_view(corners), drawing_unit(corners))


def draw(audited: AuditedMesh, ex: Explanation) -> Figure:
    """Build the figure of one element (nothing is written)."""
    if CELL_TYPES[ex.cell_type].dimension == 3:
        from .solid_explain import draw as draw_solid

        return draw_solid(audited, ex)
    view = element_view(audited, ex)
    nodes = view.project(ex.coordinates)
    fig = new_figure(figsize=(8.0, 7.0), layout="constrained")
    ax = fig.add_subplot(1, 1, 1)
    _neighbours(ax, audited, ex, view, _window(nodes))
    _grid(ax, ex, nodes)
    _frame(ax, nodes)
    ax.set_title(drawable(_title(ex)), fontsize=9)
    if view.unit != 1.0:
        ax.set_xlabel("coordinates" + unit_text(view), fontsize=8)
    _nodes_and_gauss(ax, ex, nodes, freeze_layout(fig))
    return fig


def _title(ex: Explanation) -> str:
    """Verdict, the rule the element breaks, then its flags and breached limits, each
    under its own level: validity flags are "invalid", warning flags "warn"."""
    from ..metrics import VALIDITY_FLAGS, WARNING_FLAGS
    from .solid_explain import breaches_at_worst
    from .volume_plot import rule_text

    lines = [f"element {ex.id} ({ex.cell_type}, profile {ex.profile}): {ex.verdict}"]
    if ex.verdict != "ok":
        worst = "fail" if any(m.level == "fail" for m in ex.breaches) else "warn"
        lines.append(textwrap.fill(rule_text(ex.flags, breaches_at_worst(ex), worst), 90))
    invalid = [f for f in ex.flags if f in VALIDITY_FLAGS]
    warned = [f for f in ex.flags if f in WARNING_FLAGS]
    if invalid:
        lines.append("invalid (fails): " + ", ".join(invalid))
    if warned:
        lines.append("warning flags (warn): " + ", ".join(warned))
    for level in ("fail", "warn"):
        names = [m.name for m in ex.breaches if m.level == level]
        if names:
            lines.append(textwrap.fill(f"{level} limits breached: " + ", ".join(names), 90))
    lines.append(
        "reference grid lines mapped onto the element; hatched: det J <= 0; grey: neighbours (ids)"
    )
    return "\n".join(lines)


def render(path: Path, audited: AuditedMesh, ex: Explanation) -> None:
    draw(audited, ex).savefig(path, format=plot_format(path), dpi=150)


def _neighbours(ax: Axes, audited: AuditedMesh, ex: Explanation, view: View, window: tuple) -> None:
    from matplotlib.collections import PolyCollection

    table = corner_table(audited.elements)[:, :4]  # surface neighbours: polygons
    surface = np.array([CELL_TYPES[t].dimension == 2 for t in audited.report.cell_types])
    codes = audited.report.type_codes[ex.neighbour_rows]
    drawn = surface[codes] if len(codes) else np.zeros(0, dtype=bool)
    rows, ids = ex.neighbour_rows[drawn], ex.neighbour_ids[drawn]
    verts = view.project(audited.elements.points[table[rows]])
    ax.add_collection(
        PolyCollection(verts, facecolors="#e6e6e6", edgecolors="#8c8c8c", lw=0.8, gid="neighbours")
    )
    lo, hi = window
    inset = 0.04 * (hi - lo)
    for k, v in zip(ids, verts):
        # the id sits at the neighbour's centroid, pulled inside the frame when it is off it
        c = np.clip(v.mean(axis=0), lo + inset, hi - inset)
        ax.text(
            c[0],
            c[1],
            str(int(k)),
            ha="center",
            va="center",
            fontsize=7,
            color="#6e6e6e",
            clip_on=True,
        )


def _grid(ax: Axes, ex: Explanation, nodes: np.ndarray) -> None:
    from matplotlib.collections import LineCollection, PolyCollection

    cell = CELL_TYPES[ex.cell_type]
    folded = folded_cells(cell, nodes)
    if len(folded):
        ax.add_collection(
            PolyCollection(
                folded, facecolors="none", edgecolors=OUTLINE, hatch="////", lw=0.0, gid="folded"
            )
        )
    lines = [map_points(cell, nodes, line) for line in reference_grid(cell)]
    ax.add_collection(LineCollection(lines, colors="#3b528b", linewidths=0.7, gid="grid"))
    edge = map_points(cell, nodes, reference_boundary(cell))
    ax.plot(edge[:, 0], edge[:, 1], color=OUTLINE, lw=1.8, zorder=4, gid="outline")


def _nodes_and_gauss(ax: Axes, ex: Explanation, nodes: np.ndarray, renderer: Any) -> None:
    """Nodes and Gauss points marked; their labels (node number and det J; det J) placed
    by :func:`~meshaudit.outputs.label_layout.place_labels`, so none covers another nor
    any marker; a label with no free place is left out and the corner says how many."""
    from matplotlib import patheffects

    halo = [patheffects.withStroke(linewidth=3, foreground=HALO)]
    cell = CELL_TYPES[ex.cell_type]
    for k, p in enumerate(nodes):
        ax.plot(*p, "o", color=OUTLINE, ms=5 if k < cell.n_corners else 3.5, zorder=5)
    g = map_points(cell, nodes, ex.gauss_points)
    ax.plot(g[:, 0], g[:, 1], "P", color="#fde725", mec=OUTLINE, ms=8, zorder=5, gid="gauss")
    texts, styles = [], []
    for k in range(len(nodes)):
        label = f"{k + 1}: node {int(ex.node_numbers[k])}"
        if k < len(ex.det_j_nodes):
            label += f"\ndet J {ex.det_j_nodes[k]:.4g}"
        texts.append(label)
        styles.append({"fontsize": 8, "path_effects": halo, "zorder": 6, "gid": f"node-{k + 1}"})
    for k, d in enumerate(ex.det_j_gauss):
        texts.append(f"{d:.4g}")
        styles.append({"fontsize": 8, "path_effects": halo, "zorder": 6, "gid": f"gauss-{k + 1}"})
    anchors = np.vstack([nodes, g])
    placed = place_labels(ax, anchors, texts, styles, renderer, keep_clear=anchors)
    if not all(placed):
        ax.text(
            0.01,
            0.01,
            f"{placed.count(False)} labels with no free place left out (see the text form)",
            transform=ax.transAxes,
            fontsize=8,
            gid="unlabelled",
        )


def _window(nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Drawn area: the element's box padded for its neighbours and labels."""
    lo, hi = nodes.min(axis=0), nodes.max(axis=0)
    pad = 0.45 * (float(max(hi - lo)) or 1.0)
    return limits_apart(lo - pad, hi + pad)


def _frame(ax: Axes, nodes: np.ndarray) -> None:
    lo, hi = _window(nodes)
    ax.set_xlim(lo[0], hi[0])
    ax.set_ylim(lo[1], hi[1])
    ax.set_aspect("equal")
    ax.tick_params(labelsize=8)
