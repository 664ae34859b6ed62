"""The explain picture of one solid: its reference element beside the element itself.

Left, the reference element (the cube [-1, 1]^3, the unit tetrahedron, the wedge's
triangle x [-1, 1], the pyramid) in a fixed oblique view, z up: its faces, the grid lines
of each face, its corners numbered by their position in the element and its Gauss points
numbered g1, g2, ... in the order of the rule.

Right, the element, seen along the direction that shows it best
(:func:`meshaudit.outputs.solid_views.element_view`): the same face grid lines pushed
through the element's own map (curved for a quadratic element), the Gauss points mapped
and labelled with det J, the corners labelled with their node numbers and det J there;
patches of a face where det J <= 0 are hatched and points with det J < 0 drawn as black
crosses, as the 2-D picture hatches a folded cell; the neighbours (elements sharing a
node) faint grey. Labels are placed so that none covers another; one with no room left
is left out and the figure says how many were (the text and JSON forms list them all).
"""

from __future__ import annotations

import textwrap
from typing import TYPE_CHECKING, Any

import numpy as np

from ..cells.mapping import map_points
from ..cells.registry import CELL_TYPES, CellType
from ..results.explain import Explanation
from ..results.inspection import AuditedMesh
from .label_layout import freeze_layout, place_labels
from .mpl import drawable, new_figure
from .plot import HALO, OUTLINE
from .projection import View, drawing_unit, unit_text, with_unit
from .solid_views import (
    det_j_signs,
    element_view,
    face_cells,
    face_grid,
    face_outlines,
    mapped,
)
from .volume_plot import element_faces, rule_text

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: The direction the reference element is seen from (towards the viewer): above, in
#: front, to the right.
REFERENCE_VIEW = np.array([1.0, -1.6, 1.2]) / np.linalg.norm([1.0, -1.6, 1.2])
GRID = "#3b528b"
FACE_FILL = (0.23, 0.32, 0.55, 0.10)
GAUSS = "#fde725"
NEIGHBOUR_FILL = (0.55, 0.55, 0.55, 0.08)
NEIGHBOUR_EDGE = (0.45, 0.45, 0.45, 0.45)


def oblique_view(coords: np.ndarray) -> View:
    """Nodes ``coords`` (k, 3) seen from :data:`REFERENCE_VIEW`, z up."""
    right = np.cross([0.0, 0.0, 1.0], REFERENCE_VIEW)
    right /= np.linalg.norm(right)
    up = np.cross(REFERENCE_VIEW, right)
    view = View(coords.mean(axis=0), np.stack([right, up]), REFERENCE_VIEW)
    return with_unit(view, drawing_unit(coords))


def breaches_at_worst(ex: Explanation) -> list[tuple[str, float, float | None]]:
    """(metric, value, limit) of the breaches at the element's worst level."""
    lines = ex.breaches
    worst = "fail" if any(m.level == "fail" for m in lines) else "warn"
    return [
        (m.name, m.value, m.fail if worst == "fail" else m.warn) for m in lines if m.level == worst
    ]


def draw(audited: AuditedMesh, ex: Explanation) -> Figure:
    """Build the two-panel figure of solid ``ex`` (nothing is written)."""
    cell = CELL_TYPES[ex.cell_type]
    fig = new_figure(figsize=(14.0, 7.5), layout="constrained")
    ref_ax, el_ax = fig.subplots(1, 2, gridspec_kw={"width_ratios": (1.0, 1.3)})
    ref_ax.set_gid("reference-panel")
    el_ax.set_gid("element-panel")
    ref_view = oblique_view(cell.reference_nodes)
    view = element_view(cell, ex.coordinates)
    ref_labels = _panel(ref_ax, cell, cell.reference_nodes, ref_view, ex, reference=True)
    el_labels = _panel(el_ax, cell, ex.coordinates, view, ex, reference=False)
    neighbour_labels = _neighbours(el_ax, audited, ex, view)
    lines = [f"element {ex.id} ({ex.cell_type}, profile {ex.profile}): {ex.verdict}"]
    if ex.verdict != "ok":
        lines.append(textwrap.fill(rule_text(ex.flags, breaches_at_worst(ex)), 110))
    fig.suptitle(drawable("\n".join(lines)), fontsize=11, fontweight="bold")
    ref_ax.set_title("reference element: corners and Gauss points numbered", fontsize=9)
    el_ax.set_title(
        drawable(
            "the element: reference grid lines mapped through its own map; Gauss points "
            "with det J,\ncorners with node number and det J; hatched / black cross: "
            "det J <= 0 / < 0; grey: neighbours (ids)"
        ),
        fontsize=9,
    )
    if view.unit != 1.0:
        el_ax.set_xlabel("coordinates" + unit_text(view), fontsize=8)
    renderer = freeze_layout(fig)
    missing = 0
    for ax, labels, faint in ((ref_ax, ref_labels, []), (el_ax, el_labels, neighbour_labels)):
        taken: list[Any] = []
        placed = place_labels(
            ax, _anchors(labels), [t for _, t, _ in labels], [s for _, _, s in labels],
            renderer, taken, keep_clear=_anchors(labels),
        )  # fmt: skip
        missing += placed.count(False)
        place_labels(  # neighbour ids: where room is left, no leader lines
            ax, _anchors(faint), [t for _, t, _ in faint], [s for _, _, s in faint],
            renderer, taken, arrows=False, keep_clear=_anchors(labels),
        )  # fmt: skip
    if missing:
        el_ax.text(
            0.01,
            0.01,
            f"{missing} labels left out for lack of room (see the text or JSON output)",
            transform=el_ax.transAxes,
            fontsize=8,
            gid="labels-left-out",
        )
    return fig


def _anchors(labels: list[tuple[np.ndarray, str, dict[str, Any]]]) -> np.ndarray:
    return np.array([a for a, _, _ in labels], dtype=float).reshape(-1, 2)


def _panel(
    ax: Axes, cell: CellType, coords: np.ndarray, view: View, ex: Explanation, reference: bool
) -> list[tuple[np.ndarray, str, dict[str, Any]]]:
    """Faces, mapped grid, folded patches, corners and Gauss points of one panel; returns
    the labels to place: (anchor, text, style), most important first."""
    from matplotlib.collections import LineCollection, PolyCollection

    outlines = face_outlines(cell, coords[None])[0]  # (f, m, 3)
    depth = view.depth(outlines).mean(axis=1)
    order = np.argsort(depth, kind="stable")
    page = view.project(outlines)[order]
    ax.add_collection(
        PolyCollection(page, facecolors=FACE_FILL, edgecolors="none", gid="faces", zorder=1)
    )
    lines = [view.project(map_points(cell, coords, line)) for line in face_grid(cell)]
    ax.add_collection(LineCollection(lines, colors=GRID, linewidths=0.6, gid="grid", zorder=2))
    if not reference:
        _folded(ax, cell, coords, view)
    edge = [view.project(o) for o in outlines]
    ax.add_collection(
        LineCollection(
            [np.vstack([e, e[:1]]) for e in edge],
            colors=OUTLINE,
            linewidths=1.6,
            gid="outline",
            zorder=4,
        )
    )
    nodes = view.project(coords)
    c = cell.n_corners
    det_nodes = np.asarray(ex.det_j_nodes, dtype=float)
    # signs worked out at a power-of-two scale: right at any element size (the pyramid's
    # apex, where det J has no value, is never marked)
    negative_node = np.zeros(len(coords), dtype=bool)
    negative_gauss = np.zeros(len(cell.gauss_points), dtype=bool)
    if not reference:
        at_nodes = det_j_signs(cell, coords, cell.reference_nodes[: len(det_nodes)])
        negative_node[: len(det_nodes)] = (at_nodes < 0.0) & ~np.isnan(det_nodes)
        negative_gauss = det_j_signs(cell, coords, cell.gauss_points) < 0.0
    corner = np.arange(len(coords)) < c
    ax.plot(*nodes[corner & ~negative_node].T, "o", color=OUTLINE, ms=5, ls="none", zorder=5)
    ax.plot(*nodes[~corner & ~negative_node].T, "o", color=OUTLINE, ms=3, ls="none", zorder=5)
    gauss = view.project(map_points(cell, coords, cell.gauss_points))
    det_gauss = np.asarray(ex.det_j_gauss, dtype=float)
    ax.plot(
        *gauss[~negative_gauss].T, "P", color=GAUSS, mec=OUTLINE, ms=7, ls="none",
        gid="reference-gauss" if reference else "gauss", zorder=5,
    )  # fmt: skip
    if negative_node.any() or negative_gauss.any():
        bad = np.vstack([nodes[negative_node], gauss[negative_gauss]])
        ax.plot(
            *bad.T, "X", color=OUTLINE, mec=HALO, mew=0.8, ms=10, ls="none",
            gid="negative-det-j", zorder=6,
        )  # fmt: skip
    _frame(ax, np.vstack([e for e in edge]))

    labels: list[tuple[np.ndarray, str, dict[str, Any]]] = []
    box = {"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.85}
    for k in range(c):
        if reference:
            text = str(k + 1)
        else:
            text = f"{k + 1}: node {int(ex.node_numbers[k])}"
            d = det_nodes[k] if k < len(det_nodes) else np.nan
            text += f"\ndet J {d:.4g}" if np.isfinite(d) else "\ndet J undefined"
        labels.append(
            (nodes[k], text, {"fontsize": 8, "gid": f"corner-{k + 1}", "bbox": box, "zorder": 7})
        )
    for k, p in enumerate(gauss):
        text = f"g{k + 1}" if reference else f"g{k + 1}: {det_gauss[k]:.4g}"
        labels.append((p, text, {"fontsize": 7, "gid": f"gauss-{k + 1}", "bbox": box, "zorder": 7}))
    return labels


def _folded(ax: Axes, cell: CellType, coords: np.ndarray, view: View) -> None:
    """Hatch the face patches where det J <= 0 at the patch centre."""
    from matplotlib.collections import PolyCollection

    patches, centres = face_cells(cell)
    bad = det_j_signs(cell, coords, centres) <= 0.0
    if not bad.any():
        return
    patches = mapped(cell, coords, patches[bad])  # (m, 4, 3)
    ax.add_collection(
        PolyCollection(
            view.project(patches),
            facecolors="none",
            edgecolors=OUTLINE,
            hatch="////",
            lw=0.0,
            gid="folded",
            zorder=3,
        )
    )


def _neighbours(
    ax: Axes, audited: AuditedMesh, ex: Explanation, view: View
) -> list[tuple[np.ndarray, str, dict[str, Any]]]:
    """Neighbours faint, back to front; their ids as labels placed where room is left."""
    from matplotlib.collections import PolyCollection

    report = audited.report
    wanted = np.zeros(len(report), dtype=bool)
    wanted[ex.neighbour_rows] = True
    polys, owner = element_faces(audited.elements, wanted)
    if not len(owner):
        return []
    flat = [view.project(p) for block in polys for p in block]
    depth = np.concatenate([view.depth(block).mean(axis=1) for block in polys])
    order = np.argsort(depth, kind="stable")
    ax.add_collection(
        PolyCollection(
            [flat[k] for k in order],
            facecolors=NEIGHBOUR_FILL,
            edgecolors=NEIGHBOUR_EDGE,
            linewidths=0.6,
            gid="neighbours",
            zorder=0.5,
        )
    )
    anchors = view.project(report.centroids[ex.neighbour_rows])
    style = {"fontsize": 6.5, "color": "#6e6e6e", "gid": "neighbour", "zorder": 1}
    return [(a, str(int(i)), dict(style)) for a, i in zip(anchors, ex.neighbour_ids)]


def _frame(ax: Axes, xy: np.ndarray) -> None:
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    size = float(max(hi - lo)) or 1.0
    centre = (lo + hi) / 2.0
    half = 0.5 * size + 0.3 * size
    ax.set_xlim(centre[0] - half, centre[0] + half)
    ax.set_ylim(centre[1] - half, centre[1] + half)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=8)
