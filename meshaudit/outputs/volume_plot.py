"""The plot of a mesh with solids: a see-through skin and the flagged elements inside.

- the outer boundary (faces of exactly one solid, :func:`meshaudit.mesh.faces.
  boundary_faces`) and any surface elements, each face coloured by the metric of the
  element behind it on the same colour scale as the surface plot, drawn see-through
  (alpha :data:`SKIN_ALPHA`) back to front; a face of a quadratic element is drawn
  through the element's own map, so a curved boundary is drawn curved;
- every flagged element (fail, warn) drawn opaque with all its faces, back to front,
  on top of the skin, so an element deep inside shows: failing ones with the solid black
  outline and white halo of the surface plot (the halo round the element's silhouette),
  warn ones dashed; failing ids labelled
  (the file's element numbers), warn ids too where room is left;
- close-ups of the worst flagged elements with their neighbours (elements sharing a
  node, faint), each seen along the direction that shows it best
  (:func:`meshaudit.outputs.solid_views.element_view`), titled with the rule it breaks.

The view is oblique (:func:`meshaudit.outputs.solid_views.volume_view`). Only the
boundary and the flagged elements are drawn, so the work grows with the boundary and the
flagged count, not with the interior.
"""

from __future__ import annotations

import textwrap
from typing import TYPE_CHECKING, Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..mesh.elements import ElementMesh
from ..mesh.faces import boundary_face_uses
from ..metrics import METRIC_INFO, VALIDITY_FLAGS, WARNING_FLAGS
from ..results.report import Report
from .label_layout import freeze_layout, label_elements, unlabelled_failing
from .mpl import drawable
from .projection import View, unit_text
from .solid_views import element_view, face_outlines, volume_view

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Opacity of the skin faces and of a close-up's neighbours.
SKIN_ALPHA = 0.22
NEIGHBOUR_ALPHA = 0.12
SKIN_EDGE = (0.45, 0.45, 0.45, 0.45)
#: At most this many flagged elements are drawn with all their faces (worst first); the
#: rest are marked by a dot at their centre ...
MAX_OPAQUE = 5_000
#: ... and at most this many more by a dot each (the next worst); any others not at all.
MAX_DOTS = 100_000
MAX_LABELS = 40

#: What each flag means, in a few words, for picture titles.
FLAG_RULES = {
    "inverted": "det J < 0",
    "reversed": "mirrored node order",
    "nonconvex": "re-entrant corner",
    "self_intersecting": "faces cross",
    "degenerate": "no volume",
    "undecided": "sign of det J unknown",
    "quarter_point": "midside node at the quarter point",
    "flipped_normal": "normal against its patch",
}


def _degrees(unit: str) -> str:
    return "°" if unit == "deg" else ""


def rule_text(
    flags: list[str], breaches: list[tuple[str, float, float | None]], level: str = ""
) -> str:
    """The rule an element breaks, in one line: its first validity or warning flag with
    what it means ("inverted: det J < 0"), else the breached metric furthest past its
    limit relative to the limit ("min_dihedral 4.1° < 10°", followed by " (warn)" or
    " (fail)" when ``level`` is given); "+k more" when there are other breaches.
    ``breaches``: (metric, value, limit) at the element's worst level."""
    named = [f for f in flags if f in FLAG_RULES and f in (*VALIDITY_FLAGS, *WARNING_FLAGS)]
    if named:
        rest = len(named) - 1 + len(breaches)
        more = f" (+{rest} more)" if rest else ""
        return f"{named[0]}: {FLAG_RULES[named[0]]}{more}"
    if not breaches:
        return "no limit breached"

    def past(item: tuple[str, float, float | None]) -> float:
        _, value, limit = item
        if limit is None or not np.isfinite(value):
            return np.inf
        return abs(value - limit) / (abs(limit) or 1.0)

    name, value, limit = max(breaches, key=past)
    info = METRIC_INFO[name]
    sign = "<" if info.worse == "low" else ">"
    deg = _degrees(info.unit)
    more = f" (+{len(breaches) - 1} more)" if len(breaches) > 1 else ""
    bound = "" if limit is None else f" {sign} {limit:g}{deg}"
    tag = f" ({level})" if level else ""
    return f"{name} {value:.3g}{deg}{bound}{tag}{more}"


def report_rule(report: Report, i: int, level: bool = False) -> str:
    """:func:`rule_text` of report row ``i`` (with its breach's level when ``level``)."""
    breached = report.breached(i)
    worst = max((lvl for _, lvl, _ in breached.values()), default="", key=["warn", "fail"].index)
    items = [(m, v, lim) for m, (v, lvl, lim) in breached.items() if lvl == worst]
    return rule_text(report.flags_of(i), items, worst if level else "")


# -- geometry of the drawn faces -----------------------------------------------------------
def skin(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The faces the see-through skin is made of: the boundary faces of the solids and
    the surface elements: (corners (F, 4) node indices, triangles repeating their last
    corner; owner (F,) report index; local (F,) the face's number in its owner's cell
    type, 0 for a surface element)."""
    corners, owners, local = boundary_face_uses(elements)
    parts, rows, locals_ = [corners], [owners], [local]
    for block in elements.blocks:
        if block.cell.dimension == 2 and len(block):
            k = block.cell.n_corners
            cols = list(range(k)) + [k - 1] * (4 - k)
            parts.append(block.connectivity[:, cols].astype(np.int64))
            rows.append(block.index)
            locals_.append(np.zeros(len(block), dtype=np.int64))
    return np.concatenate(parts), np.concatenate(rows), np.concatenate(locals_)


#: Points per edge where a skin face of a quadratic element is drawn through its map.
SKIN_PER_EDGE = 4


def skin_polygons(
    elements: ElementMesh, view: View, faces: np.ndarray, owner: np.ndarray, local: np.ndarray
) -> np.ndarray:
    """Page polygons (F, m, 2) of the skin faces: the corners of a linear element's face
    (m = 4), the face of a quadratic element through its own map, its edges sampled
    :data:`SKIN_PER_EDGE` times (m = 4 x that; linear faces repeat their last corner), so
    a curved boundary is drawn curved."""
    xy = view.project(elements.points)[faces]
    curved = [b for b in elements.blocks if b.cell.is_quadratic and len(b)]
    if not curved or not len(faces):
        return xy
    m = 4 * SKIN_PER_EDGE
    out = np.concatenate([xy, np.repeat(xy[:, -1:], m - xy.shape[1], axis=1)], axis=1)
    for block in curved:
        hit = np.flatnonzero((owner >= block.index[0]) & (owner <= block.index[-1]))
        if not hit.size:
            continue
        rows = np.searchsorted(block.index, owner[hit])
        coords = elements.points[block.connectivity[rows]]
        loops = face_outlines(block.cell, coords, SKIN_PER_EDGE)  # (n, f, m, 3)
        out[hit] = view.project(loops[np.arange(len(hit)), local[hit]])
    return out


def element_faces(elements: ElementMesh, wanted: np.ndarray) -> tuple[list[np.ndarray], np.ndarray]:
    """Every face of the elements at report rows where ``wanted`` (n,) is True, as closed
    polygons in space (curved edges sampled for quadratic elements): (one (F_b, m_b, 3)
    array per block, owner (F,) report index, in the same order)."""
    polys, owners = [], []
    for block in elements.blocks:
        sel = wanted[block.index]
        if not sel.any():
            continue
        coords = elements.points[block.connectivity[sel]]
        outlines = face_outlines(block.cell, coords)  # (n, f, m, 3)
        n, f, m, _ = outlines.shape
        polys.append(outlines.reshape(n * f, m, 3))
        owners.append(np.repeat(block.index[sel], f))
    owner = np.concatenate(owners) if owners else np.zeros(0, dtype=np.int64)
    return polys, owner


def _projected(view: View, polys: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Page polygons (F, m, 2), blocks with fewer vertices per face padded by repeating
    their last one (one array: matplotlib builds its paths at once), and the depth of
    each face (mean of its vertices; larger is nearer)."""
    if not polys:
        return np.zeros((0, 4, 2)), np.zeros(0)
    m = max(p.shape[1] for p in polys)
    padded = [
        p if p.shape[1] == m else np.concatenate([p, np.repeat(p[:, -1:], m - p.shape[1], 1)], 1)
        for p in polys
    ]
    depth = np.concatenate([view.depth(p).mean(axis=1) for p in polys])
    return view.project(np.concatenate(padded)), depth


def touching(elements: ElementMesh, nodes: np.ndarray) -> np.ndarray:
    """Boolean (n,) over report rows: elements using any of ``nodes``."""
    mark = np.zeros(elements.n_points, dtype=bool)
    mark[nodes] = True
    hit = np.zeros(elements.n_elements, dtype=bool)
    for block in elements.blocks:
        hit[block.index] = mark[block.connectivity].any(axis=1)
    return hit


def _rgba(values: np.ndarray, cmap: Any, norm: Any) -> np.ndarray:
    return np.asarray(cmap(norm(values)), dtype=float)


# -- drawing -------------------------------------------------------------------------------
def draw_volume(report: Report, elements: ElementMesh, color_by: str, insets: int) -> Figure:
    """The figure of a mesh with solids (see the module docstring)."""
    from . import plot

    values, cmap, norm, label, extend = plot.colour_scale(report, color_by)
    colours = _rgba(values, cmap, norm)
    used = elements.points[elements.used_nodes()]
    view = volume_view(used)
    flagged = report.worst()  # flagged rows, worst first
    worst = flagged[: max(insets, 0)]
    faces, owner, local = skin(elements)
    skin_xy = skin_polygons(elements, view, faces, owner, local)
    drawn = skin_xy.reshape(-1, 2) if len(skin_xy) else view.project(elements.points)
    fig, ax, inset_axes = plot.content_figure(plot.part_aspect(drawn, 0.06), len(worst))
    ax.set_gid("mesh")

    depth = view.depth(elements.points)[faces].mean(axis=1)

    opaque, dotted = flagged[:MAX_OPAQUE], flagged[MAX_OPAQUE : MAX_OPAQUE + MAX_DOTS]
    wanted = np.zeros(len(report), dtype=bool)
    wanted[opaque] = True
    _frame(ax, drawn)

    plot.colour_bar(fig, ax, report, (cmap, norm, extend), label, color_by)
    _legend(ax, values)
    for sub, i in zip(inset_axes, worst):
        _close_up(sub, report, elements, colours, int(i), color_by)
    fig.suptitle(drawable(plot.title(report)), fontsize=12, fontweight="bold")
    n = ", ".join(f"{c:.2f}" for c in view.normal)
    ax.set_title(
        f"coloured by {color_by}; solids seen from direction ({n}), oblique; boundary "
        "faces see-through, flagged elements opaque",
        fontsize=9,
    )
    unit = unit_text(view)
    ax.set_xlabel("u (along the first view axis)" + unit, fontsize=8)
    ax.set_ylabel("v (along the second view axis)" + unit, fontsize=8)
    # the layout does not depend on the faces (limits are set, autolim off): laid out
    # before they are added, so that the many faces are drawn once, when saved
    plot.fit_to_part(fig, ax, plot.part_aspect(drawn, 0.06))
    renderer = freeze_layout(fig)
    _skin(ax, skin_xy, colours[owner], np.argsort(depth, kind="stable"))
    polys, poly_owner = element_faces(elements, wanted)
    xy, poly_depth = _projected(view, polys)
    _flagged(ax, xy, poly_owner, poly_depth, report, colours)
    if len(dotted):  # beyond MAX_OPAQUE: a dot at the centre of each
        dots = view.project(report.centroids[dotted])
        ax.plot(*dots.T, ".", ms=2.0, color=plot.OUTLINE, ls="none", gid="flagged-dots", zorder=2)
    _labels(ax, report, view, flagged, renderer)
    return fig


def _skin(ax: Axes, xy: np.ndarray, rgba: np.ndarray, order: np.ndarray) -> None:
    from matplotlib.collections import PolyCollection

    faces = rgba[order].copy()
    faces[:, 3] = SKIN_ALPHA
    ax.add_collection(
        PolyCollection(
            xy[order],
            facecolors=faces,
            edgecolors=SKIN_EDGE,
            linewidths=0.3,
            gid="skin",
            zorder=1,
            rasterized=len(order) > 20_000,
        ),
        autolim=False,
    )


def _flagged(
    ax: Axes,
    xy: list[np.ndarray],
    owner: np.ndarray,
    depth: np.ndarray,
    report: Report,
    colours: np.ndarray,
    gid: str = "flagged",
) -> None:
    """Faces of flagged elements, opaque, back to front, outlined by their verdict."""
    from matplotlib.collections import PolyCollection

    from .plot import FAIL_WIDTH, HALO, OUTLINE, WARN_DASH, WARN_WIDTH

    if not len(owner):
        return
    order = np.argsort(depth, kind="stable")
    fails = report.failing[owner[order]]
    # the white halo of the project's outline: wide white edges under all the opaque
    # faces, so it shows around each element's silhouette only, not across its faces
    ax.add_collection(
        PolyCollection(
            xy,
            facecolors="none",
            edgecolors=HALO,
            linewidths=np.where(report.failing[owner], FAIL_WIDTH, WARN_WIDTH) + 1.6,
            gid=f"{gid}-halo",
            zorder=2.9,
        ),
        autolim=False,
    )
    ax.add_collection(
        PolyCollection(
            xy[order],
            facecolors=colours[owner[order]],
            edgecolors=OUTLINE,
            linewidths=np.where(fails, FAIL_WIDTH, WARN_WIDTH),
            linestyles="solid" if fails.all() else ["solid" if f else WARN_DASH for f in fails],
            gid=gid,
            zorder=3,
        ),
        autolim=False,
    )


def _frame(ax: Axes, xy: np.ndarray, pad: float = 0.06) -> None:
    finite = xy[np.isfinite(xy).all(axis=1)]
    lo, hi = finite.min(axis=0), finite.max(axis=0)
    size = float(max(hi - lo)) or 1.0
    ax.set_xlim(lo[0] - pad * size, hi[0] + pad * size)
    ax.set_ylim(lo[1] - pad * size, hi[1] + pad * size)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=8)


def _legend(ax: Axes, values: np.ndarray) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from .plot import FAIL_WIDTH, NOT_DEFINED, OUTLINE, WARN_DASH, WARN_WIDTH, figure_legend

    handles = [
        Line2D([], [], color=OUTLINE, lw=FAIL_WIDTH, label="fails (opaque, id labelled)"),
        Line2D([], [], color=OUTLINE, lw=WARN_WIDTH, ls=WARN_DASH, label="warn (opaque)"),
        Patch(fc=(0.5, 0.5, 0.5, SKIN_ALPHA), ec=SKIN_EDGE, label="boundary faces (see-through)"),
    ]
    if np.ma.count_masked(values):
        handles.append(Patch(fc=NOT_DEFINED, label="metric not defined"))
    figure_legend(ax.figure, handles)


def _labels(ax: Axes, report: Report, view: View, flagged: np.ndarray, renderer: Any) -> None:
    """Ids of the failing elements, worst first, then of warn elements, where room
    allows; at most MAX_LABELS; none covering another."""
    rows = flagged[: 4 * MAX_LABELS]
    anchors = view.project(report.centroids[rows])
    placed = label_elements(ax, report, rows, anchors, renderer, MAX_LABELS)
    hidden = unlabelled_failing(report, rows, placed)
    if hidden > 0:
        ax.text(
            0.01,
            0.01,
            f"{hidden} more failing elements not labelled (see the reports)",
            transform=ax.transAxes,
            fontsize=8,
            gid="unlabelled",
        )
    if len(flagged) > MAX_OPAQUE:
        dots = min(len(flagged) - MAX_OPAQUE, MAX_DOTS)
        rest = len(flagged) - MAX_OPAQUE - dots
        ax.text(
            0.01,
            0.045,
            f"the worst {MAX_OPAQUE:,} flagged elements drawn with their faces, the next "
            f"{dots:,} as dots" + (f", {rest:,} more not drawn" if rest else ""),
            transform=ax.transAxes,
            fontsize=8,
            gid="flagged-drawn",
        )


def _close_up(
    ax: Axes,
    report: Report,
    elements: ElementMesh,
    colours: np.ndarray,
    i: int,
    color_by: str,
) -> None:
    """Element ``i`` with its neighbours (faint), seen along its best direction."""
    from matplotlib.collections import PolyCollection

    from ..results.inspection import element_nodes
    from .plot import OUTLINE

    nodes = element_nodes(elements, i)
    cell = CELL_TYPES[report.cell_types[int(report.type_codes[i])]]
    coords = elements.points[nodes]
    view = element_view(cell, coords) if cell.dimension == 3 else volume_view(coords)
    near = touching(elements, nodes[: cell.n_corners])
    near[i] = False
    polys, owner = element_faces(elements, near)
    xy, depth = _projected(view, polys)
    if len(owner):
        order = np.argsort(depth, kind="stable")
        faint = colours[owner[order]].copy()
        faint[:, 3] = NEIGHBOUR_ALPHA
        ax.add_collection(
            PolyCollection(
                xy[order],
                facecolors=faint,
                edgecolors=(0.4, 0.4, 0.4, 0.5),
                linewidths=0.5,
                gid="close-up-neighbours",
                zorder=1,
            )
        )
    mine = np.zeros(len(report), dtype=bool)
    mine[i] = True
    polys, owner = element_faces(elements, mine)
    xy, depth = _projected(view, polys)
    _flagged(ax, xy, owner, depth, report, colours, gid="close-up-element")
    corners = view.project(coords[: cell.n_corners])
    ax.plot(*corners.T, "o", ms=2.5, color=OUTLINE, zorder=5, ls="none")
    lo, hi = corners.min(axis=0), corners.max(axis=0)
    half = 0.75 * (float(max(hi - lo)) or 1.0)
    centre = (lo + hi) / 2.0
    ax.set_xlim(centre[0] - half, centre[0] + half)
    ax.set_ylim(centre[1] - half, centre[1] + half)
    ax.set_aspect("equal")
    ax.set_xticks([])
    ax.set_yticks([])
    from .plot import colour_value

    rule = textwrap.fill(report_rule(report, i, level=True), 34)
    ax.set_title(
        drawable(
            f"id {int(report.ids[i])} ({cell.name}): {report.verdict_names[i]}\n"
            f"{rule}\n" + colour_value(report, color_by, i)
        ),
        fontsize=8,
        gid=f"close-up-{int(report.ids[i])}",
    )
