"""The mesh drawn with every element coloured by one metric and the flagged ones outlined.

- faces: one collection, coloured on viridis (darker is always worse: the map is reversed
  for metrics where a high value is worse), with a labelled colourbar; NaN (metric not
  defined for that element type) is light grey, an infinite value takes the worst end;
- failing elements: one solid black outline with a white halo, labelled with their ids;
- warn elements: a thinner dashed outline, not labelled;
- insets: close-ups of the worst few flagged elements and their surroundings;
- mesh-level findings (when the report carries any): dash-dot polylines and node crosses.

A mesh with solids (alone or beside surface elements) is drawn by
:mod:`meshaudit.outputs.volume_plot`: its boundary see-through, its flagged elements opaque.

matplotlib is imported here only, so the command line starts fast without it. Figures are
built on ``matplotlib.figure.Figure`` directly (no pyplot state, Agg-family canvases), and
large meshes are drawn with a handful of collections whatever their size.
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import OutputError
from ..judge.score import BAND_EDGES
from ..judge.verdicts import FAIL, WARN
from ..mesh.elements import ElementMesh
from ..mesh.frames import area_vectors
from ..mesh.scale import length_exponent, scaled_lengths
from ..metrics import METRIC_INFO, METRIC_NAMES, unit_of
from ..results.inspection import corner_table, has_curved_cells, outline_points
from ..results.report import Report
from . import raster
from .label_layout import freeze_layout, label_elements, unlabelled_failing
from .mpl import drawable, new_figure, prepare
from .projection import (
    View,
    best_fit_view,
    drawing_unit,
    flatness,
    tilted,
    unit_text,
    with_unit,
)
from .ranges import clipped_for_colour, drawable_range, too_narrow
from .safe_text import one_line

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Above this many elements faces lose their edge lines and are painted into one image
#: (see :mod:`meshaudit.outputs.raster`), RASTER_WIDTH pixels across.
LARGE_MESH = 20_000
RASTER_WIDTH = 1600
#: At most this many failing elements get an id label (the rest are outlined only).
MAX_LABELS = 40
#: Close-ups of the worst flagged elements.
DEFAULT_INSETS = 6
FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}

OUTLINE = "black"
HALO = "white"
FAIL_WIDTH, WARN_WIDTH = 1.6, 0.9
WARN_DASH = (0, (3.0, 2.0))
FINDING_DASH = (0, (6.0, 2.0, 1.5, 2.0))
NOT_DEFINED = "#d9d9d9"
#: Legend text size (points): readable at the printed size of the figure.
LEGEND_SIZE = 10.0


def plot_format(path: Path) -> str:
    """matplotlib format name from the file extension; OutputError for anything else."""
    fmt = FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise OutputError(f"{path}: plot file must end in .png, .svg or .pdf")
    return fmt


#: A shell deeper than this fraction of its size is drawn in an oblique view, not flat.
CURVED_SHELL = 0.1
OBLIQUE = (30.0, 25.0)  # elevation, azimuth in degrees


def mesh_view(report: Report, elements: ElementMesh) -> View:
    """The page a whole mesh is drawn on: its plane if planar; a shell on its best-fit
    plane, tilted to an oblique view when it is markedly curved (so its shape shows)."""
    table = corner_table(elements)
    used = elements.points[elements.used_nodes()]
    view = best_fit_view(used)
    normal = report.summary.normal
    if report.summary.frame == "planar" and normal is not None:
        facing = float(np.dot(view.normal, normal))
    else:  # shell: look from the side most element normals point to
        corners = elements.points[table]
        k = length_exponent(corners)  # only the signs count: at a scale with no overflow
        if k:
            corners = scaled_lengths(corners, -k, 1)
        facing = float(np.sign(area_vectors(corners) @ view.normal).sum())
    if facing < 0.0:
        view = View(view.origin, np.stack([view.axes[0], -view.axes[1]]), -view.normal)
    if report.summary.frame != "planar" and flatness(used, view) > CURVED_SHELL:
        view = tilted(view, *OBLIQUE)
    return with_unit(view, drawing_unit(used))


def metric_limits(report: Report, metric: str) -> list[tuple[str, str, float]]:
    """(family, 'warn'|'fail', value) of every limit on ``metric`` for the families present
    (none for the verdict, which is not a metric).

    The score has no limits but its verdict bands: its marks are their edges (family
    "all"), below 2/3 warn and below 1/3 fail (see :mod:`meshaudit.judge.score`).
    """
    if metric == "score":
        return [("all", kind, edge) for kind, edge in BAND_EDGES]
    if metric == VERDICT:
        return []
    out = []
    for family in report.cell_families:
        lim = report.profile.limit(family, metric)
        if lim is not None:
            out += [
                (family, k, v) for k, v in (("warn", lim.warn), ("fail", lim.fail)) if v is not None
            ]
    return out


def colour_range(report: Report, color_by: str) -> tuple[float, float, str]:
    """(low, high, colourbar extend) of the colour scale.

    The scale runs from the best value present to the worst fail limit when values go
    past it: elements beyond the fail limit all take the darkest colour, so one extreme
    element does not wash out the differences among the rest. The score spans 0..1.
    """
    info = METRIC_INFO[color_by]
    values = np.asarray(report.metrics[color_by], dtype=float)
    finite = values[np.isfinite(values)]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    extend = "neither"
    fails = [v for _, kind, v in metric_limits(report, color_by) if kind == "fail"]
    if color_by == "score":
        lo, hi = 0.0, 1.0
    elif fails and info.worse == "high" and hi > max(fails) > lo:
        hi, extend = max(fails), "max"
    elif fails and info.worse == "low" and lo < min(fails) < hi:
        lo, extend = min(fails), "min"
    if np.isinf(values).any() and extend == "neither":
        extend = "max" if info.worse == "high" else "min"
    if too_narrow(lo, hi):  # one value everywhere: stretch towards the warn limit if any
        warns = [v for _, kind, v in metric_limits(report, color_by) if kind == "warn"]
        if warns and info.worse == "high" and max(warns) > lo:
            hi = max(warns)
        elif warns and info.worse == "low" and min(warns) < lo:
            lo = min(warns)
    # one value everywhere (no limit to stretch to), values apart by round-off only,
    # values near the largest float: widened or clipped to a range colours can span
    lo, hi = drawable_range(lo, hi)
    return lo, hi, extend


#: The colourbar's label is wrapped at this many characters (it fits under a narrow view).
LABEL_WIDTH = 72

#: ``--color-by verdict``: the three verdicts as three levels of viridis (ok light, fail
#: darkest, as "darker is worse" everywhere else), never a traffic-light set of colours.
VERDICT = "verdict"
VERDICT_LEVELS = (0.95, 0.5, 0.0)  # ok, warn, fail: positions on viridis


def verdict_scale() -> tuple[Any, Any]:
    """(colormap, norm) of the verdict: three colours, for the values 0, 1 and 2."""
    from matplotlib import colormaps
    from matplotlib.colors import BoundaryNorm, ListedColormap

    colours = colormaps["viridis"](np.asarray(VERDICT_LEVELS))
    return ListedColormap(colours, name="viridis-verdict"), BoundaryNorm([-0.5, 0.5, 1.5, 2.5], 3)


def colour_scale(report: Report, color_by: str) -> tuple[np.ndarray, Any, Any, str, str]:
    """(values to draw, colormap, norm, colourbar label, extend) for metric ``color_by``
    (or the verdict: 0 ok, 1 warn, 2 fail)."""
    prepare()
    from matplotlib import colormaps
    from matplotlib.colors import Normalize

    if color_by == VERDICT:
        cmap, norm = verdict_scale()
        label = "verdict under the profile: ok, warn or fail (darker is worse)"
        return np.ma.masked_invalid(report.verdict.astype(float)), cmap, norm, label, "neither"

    info = METRIC_INFO[color_by]
    values = np.asarray(report.metrics[color_by], dtype=float)
    lo, hi, extend = colour_range(report, color_by)
    drawn = clipped_for_colour(values, lo, hi)  # infinities take the end colours
    cmap = colormaps["viridis_r" if info.worse == "high" else "viridis"].with_extremes(
        bad=NOT_DEFINED
    )
    unit = "" if info.unit == "1" else f" [{unit_of(color_by, report.dimensions)}]"
    direction = {"high": "larger is worse", "low": "smaller is worse"}.get(info.worse, "")
    label = f"{color_by}{unit}: {info.meaning}" + (f" ({direction}; darker)" if direction else "")
    limits = metric_limits(report, color_by)
    if color_by == "score":
        label += "\nmarks on the bar: warn below the dashed mark (2/3), fail below the solid (1/3)"
    elif limits:
        per_family = {}
        for family, _kind, v in limits:
            per_family.setdefault(family, []).append(f"{v:g}")
        listed = ", ".join(f"{f} {' / '.join(v)}" for f, v in per_family.items())
        label += f"\nmarks on the bar: warn limit dashed, fail limit solid ({listed})"
    label = "\n".join(textwrap.fill(line, LABEL_WIDTH) for line in label.split("\n"))
    return np.ma.masked_invalid(drawn), cmap, Normalize(lo, hi), label, extend


def draw(
    report: Report,
    elements: ElementMesh,
    color_by: str = "score",
    insets: int = DEFAULT_INSETS,
) -> Figure:
    """Build the figure (nothing is written).

    Each id label is a text artist with gid ``fail-id-<id>`` (kept as the element id in
    SVG output), so callers and tests can read back which elements were labelled.
    """
    if color_by not in METRIC_NAMES and color_by != VERDICT:
        raise OutputError(f"cannot colour by {color_by!r}: not a metric nor verdict")
    if elements.has_solids:
        from .volume_plot import draw_volume

        return draw_volume(report, elements, color_by, insets)
    view = mesh_view(report, elements)
    table = corner_table(elements)
    xy = view.project(elements.points)
    verts = outline_points(elements, xy) if has_curved_cells(elements) else xy[table]
    values, cmap, norm, label, extend = colour_scale(report, color_by)
    order = _draw_order(report, elements, table, view)
    worst = report.worst(insets) if insets > 0 else np.empty(0, dtype=np.int64)

    fig, ax, inset_axes = content_figure(part_aspect(verts.reshape(-1, 2)), len(worst))
    ax.set_gid("mesh")
    has_findings = draw_findings(ax, report, view, elements.points, verts)
    _frame(ax, verts)
    colour_bar(fig, ax, report, (cmap, norm, extend), label, color_by)
    back = back_faces(report, elements, table, view)
    _legend(ax, values, has_findings, back.any(), has_orphans(report))
    boxes = (verts.min(axis=1), verts.max(axis=1)) if len(worst) else None
    for sub, i in zip(inset_axes, worst):
        if report.summary.frame == "planar":
            _inset(sub, report, verts, boxes, values, cmap, norm, int(i), color_by)
            sub.plot(*xy[table[int(i)]].T, "o", ms=2.5, color=OUTLINE, zorder=5)
            continue
        # a shell: the close-up looks along the element's own normal, never edge-on
        near, local, corners = shell_close_up(report, elements, table, int(i))
        mine = (local.min(axis=1), local.max(axis=1))
        at = len(near) - 1
        _inset(sub, report, local, mine, values[near], cmap, norm, int(i), color_by, at=at)
        sub.plot(*corners.T, "o", ms=2.5, color=OUTLINE, zorder=5)
    fig.suptitle(drawable(title(report)), fontsize=12, fontweight="bold")
    ax.set_title(_subtitle(report, color_by, view), fontsize=9)
    flat_xy = report.summary.frame == "planar" and np.allclose(view.axes, np.eye(3)[:2])
    unit = unit_text(view)
    ax.set_xlabel(("x" if flat_xy else "u (along the first view axis)") + unit, fontsize=8)
    ax.set_ylabel(("y" if flat_xy else "v (along the second view axis)") + unit, fontsize=8)
    # the layout does not depend on the faces (limits are set, autolim off): laid out
    # before they are added, so the many faces are drawn once, when saved; labels are
    # measured against that final layout
    fit_to_part(fig, ax, part_aspect(verts.reshape(-1, 2)))
    renderer = freeze_layout(fig)
    _faces(ax, verts, values, cmap, norm, order)
    _hatch_back_faces(ax, verts, back)
    _outlines(ax, report, verts)
    if len(verts) > LARGE_MESH:  # elements of a pixel or two: ring the flagged ones too
        _rings(ax, report, verts)
    _label_elements(ax, report, verts, renderer)
    return fig


def render(
    path: Path,
    report: Report,
    elements: ElementMesh,
    color_by: str = "score",
    fmt: str | None = None,
) -> None:
    """Draw and save to ``path`` in ``fmt`` (default: from ``path``'s extension)."""
    fig = draw(report, elements, color_by)
    fig.savefig(path, format=fmt or plot_format(path), dpi=150)


def verdict_ticks(bar: Any, color_by: str) -> None:
    """The verdict's colourbar: one tick per verdict, named."""
    if color_by == VERDICT:
        bar.set_ticks([0, 1, 2], labels=["ok", "warn", "fail"])


def colour_value(report: Report, color_by: str, i: int) -> str:
    """The colouring value of report row ``i``, as a close-up shows it ("skew 52.4°")."""
    if color_by == VERDICT:
        return f"verdict {report.verdict_names[i]}"
    value = float(report.metrics[color_by][i])
    unit = unit_of(color_by, report.dimensions)
    unit = {"1": "", "deg": "°"}.get(unit, f" {unit}")
    return f"{color_by} {value:.3g}{unit}"


def _limit_marks(bar: Any, report: Report, color_by: str, norm: Any) -> None:
    """Warn (dashed) and fail (solid) limits as lines across the colourbar, each named
    with the element families it holds for ("quad warn", "triangle fail"): families'
    limits differ, and one unnamed set of marks would mix them. Labels of marks close
    together are stacked above the bar."""
    marks: dict[tuple[float, str], list[str]] = {}
    for family, kind, value in metric_limits(report, color_by):
        if norm.vmin <= value <= norm.vmax:
            marks.setdefault((value, kind), []).append(family)
    stacked: list[tuple[float, int]] = []  # (position 0..1 along the bar, level)
    span = float(norm.vmax - norm.vmin) or 1.0
    for (value, kind), families in sorted(marks.items()):
        bar.ax.axvline(value, color=OUTLINE, lw=1.2, ls="--" if kind == "warn" else "-")
        if families == ["all"]:  # the score's bands: the bar's label says what they are
            continue
        at = (value - norm.vmin) / span
        busy = {lvl for x, lvl in stacked if abs(x - at) < LABEL_GAP}
        level = min(k for k in range(len(stacked) + 1) if k not in busy)
        stacked.append((at, level))
        bar.ax.annotate(
            f"{'/'.join(families)} {kind}",
            xy=(value, 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(0.0, 2.0 + 10.0 * level),
            textcoords="offset points",
            ha="center",
            va="bottom",
            fontsize=7.5,
            gid=f"limit-{kind}-{'-'.join(families)}",
        )


#: Marks closer than this fraction of the colourbar have their labels stacked.
LABEL_GAP = 0.22


def title(report: Report) -> str:
    c = report.verdict_counts()
    word = "PASS" if report.passed else "FAIL"
    name = one_line(Path(report.summary.source).name)  # an SVG title is XML text
    findings = getattr(report, "findings", None) or []
    extra = f"; {len(findings)} mesh-level finding kind(s)" if findings else ""
    return (
        f"{word}: {name}: {c['fail']} of {len(report)} elements fail, {c['warn']} warn, "
        f"{c['ok']} ok{extra} (profile {report.profile.name})"
    )


def _subtitle(report: Report, color_by: str, view: View) -> str:
    if report.summary.frame == "planar":
        where = "drawn in the mesh plane"
    else:
        n = ", ".join(f"{c:.2f}" for c in view.normal)
        where = f"shell seen from direction ({n})"
    return f"coloured by {color_by}; {where}"


#: Figure width (inches) of a wide part; height of the main view of a tall one.
PAGE_WIDTH, TALL_HEIGHT = 14.0, 7.0
#: Side of one close-up (inches) and the room kept for titles, colourbar and legend.
CLOSE_UP, FURNITURE = 2.7, 2.1
#: Narrowest main view (inches) of a tall part: room for the colourbar's label.
MIN_WIDTH = 4.5
#: Largest figure height (inches): bounds the picture's size (and an HTML page's).
MAX_HEIGHT = 10.0
#: A part wider than this (width / height of its drawn box) gets its close-ups in a row
#: below it; a narrower one in columns beside it.
WIDE = 1.3


def part_aspect(xy: np.ndarray, pad: float = 0.04) -> float:
    """Width / height of the drawn box of points ``xy`` (n, 2), padded by ``pad`` of
    its larger side on every edge as the main view is."""
    finite = xy[np.isfinite(xy).all(axis=1)]
    if not len(finite):
        return 1.0
    w, h = np.ptp(finite, axis=0)
    margin = 2.0 * pad * (float(max(w, h)) or 1.0)
    return float((w + margin) / (h + margin))


def _wide(aspect: float, n_insets: int) -> bool:
    """Whether the close-ups go in a row below the main view (else beside it): for a wide
    part, unless it is only moderately wide and has three close-ups or fewer (one column
    beside it then leaves no empty row)."""
    return aspect >= WIDE and not (0 < n_insets <= 3 and aspect < 2 * WIDE)


def content_figure(aspect: float, n_insets: int) -> tuple[Figure, Axes, list[Axes]]:
    """The figure laid out from its content: the main view sized to the part's
    ``aspect`` (width / height), the close-ups in a row below a wide part, in two columns
    beside a tall or square one; returns (figure, main axes, close-up axes)."""
    aspect = float(np.clip(aspect, 0.2, 8.0))
    if _wide(aspect, n_insets):
        main_h = float(np.clip((PAGE_WIDTH - 0.8) / aspect, 1.5, 8.0))
        rows = CLOSE_UP + 0.6 if n_insets else 0.0
        fig = new_figure(figsize=(PAGE_WIDTH, main_h + rows + FURNITURE), layout="constrained")
        if not n_insets:
            return fig, fig.add_subplot(1, 1, 1), []
        cols = max(n_insets, 4)
        grid = fig.add_gridspec(2, cols, height_ratios=(main_h, rows))
        ax = fig.add_subplot(grid[0, :])
        return fig, ax, [fig.add_subplot(grid[1, c]) for c in range(n_insets)]
    main_w = float(np.clip(TALL_HEIGHT * aspect, MIN_WIDTH, PAGE_WIDTH))
    cols = -(-n_insets // 3) if n_insets else 0
    side = cols * (CLOSE_UP + 0.3)
    fig = new_figure(figsize=(main_w + side + 0.9, TALL_HEIGHT + FURNITURE), layout="constrained")
    if not n_insets:
        return fig, fig.add_subplot(1, 1, 1), []
    grid = fig.add_gridspec(3, 1 + cols, width_ratios=(main_w, *[CLOSE_UP + 0.3] * cols))
    ax = fig.add_subplot(grid[:, 0])
    cells = [grid[r, 1 + c] for r in range(3) for c in range(cols)]
    return fig, ax, [fig.add_subplot(cell) for cell in cells[:n_insets]]


def fit_to_part(fig: Figure, ax: Axes, aspect: float, rounds: int = 2) -> None:
    """Resize the figure so that the main view's slot has the part's ``aspect``: its
    height (a wide part) or width (a tall one) set from the other side, once titles,
    colourbar and legend have taken their room. Call once everything but the mesh's
    own artists is drawn (each round lays the figure out)."""
    aspect = float(np.clip(aspect, 0.2, 8.0))
    grid = ax.get_subplotspec().get_gridspec()
    for _ in range(rounds):
        fig.draw_without_rendering()
        w, h = fig.get_size_inches()
        pos = ax.get_position(original=True)
        slot_w, slot_h = pos.width * w, pos.height * h
        if grid.nrows == 2 or (grid.ncols == 1 and aspect >= WIDE):
            room = max(MAX_HEIGHT - (h - slot_h), 1.5)  # the figure stays at most this tall
            want = float(np.clip(slot_w / aspect, 1.5, min(8.0, room)))
            if grid.nrows == 2:
                grid.set_height_ratios((want, grid.get_height_ratios()[1]))
            fig.set_size_inches(w, max(h + want - slot_h, 2.0))
        else:
            want = float(np.clip(slot_h * aspect, MIN_WIDTH, PAGE_WIDTH))
            if grid.ncols > 1:
                grid.set_width_ratios((want, *grid.get_width_ratios()[1:]))
            fig.set_size_inches(max(w + want - slot_w, 2.0), h)


def back_faces(report: Report, elements: ElementMesh, table: np.ndarray, view: View) -> np.ndarray:
    """Shell elements seen from behind: their area vector (node order) points away from
    the viewer (a flipped normal among its neighbours shows as one); none when planar."""
    if report.summary.frame == "planar":
        return np.zeros(len(table), dtype=bool)
    corners = elements.points[table]
    k = length_exponent(corners)  # only the signs count: at a scale with no overflow
    if k:
        corners = scaled_lengths(corners, -k, 1)
    return area_vectors(corners) @ view.normal < 0.0


#: At most this many back faces are hatched (the rest keep their colour only).
MAX_HATCHED = 20_000
BACK_HATCH = "////"


def _hatch_back_faces(ax: Axes, verts: np.ndarray, back: np.ndarray) -> None:
    from matplotlib.collections import PolyCollection

    if back.any():
        ax.add_collection(
            PolyCollection(
                verts[np.flatnonzero(back)[:MAX_HATCHED]],
                facecolors="none",
                edgecolors=(0.15, 0.15, 0.15, 0.8),
                linewidths=0.0,
                hatch=BACK_HATCH,
                gid="back-faces",
                zorder=2,
            ),
            autolim=False,
        )


def _draw_order(
    report: Report, elements: ElementMesh, table: np.ndarray, view: View
) -> np.ndarray | None:
    """Back-to-front order for shells (None keeps file order for planar meshes)."""
    if report.summary.frame == "planar":
        return None
    return np.argsort(view.depth(elements.points[table].mean(axis=1)), kind="stable")


def _faces(ax: Axes, verts, values, cmap, norm, order) -> Any:
    """Draw the element faces; returns the mappable the colourbar follows."""
    from matplotlib.collections import PolyCollection

    if order is not None:
        verts, values = verts[order], values[order]
    if len(verts) > LARGE_MESH:
        return _raster_faces(ax, verts, values, cmap, norm)
    faces = PolyCollection(
        verts, array=values, cmap=cmap, norm=norm, edgecolors="white", linewidths=0.3, gid="faces"
    )
    ax.add_collection(faces, autolim=False)  # limits are set from the vertices directly
    return faces


def _raster_faces(ax: Axes, verts, values, cmap, norm) -> Any:
    """Large meshes: elements painted into one image (numpy), only the few elements larger
    than a few pixels drawn as polygons on top; no edge lines."""
    from matplotlib.cm import ScalarMappable
    from matplotlib.collections import PolyCollection

    flat = verts.reshape(-1, 2)
    grid = raster.grid_for(flat.min(axis=0), flat.max(axis=0), RASTER_WIDTH)
    colours = cmap(norm(values), bytes=True)
    image, big = raster.paint(verts, colours, grid)
    ax.imshow(
        image,
        extent=grid.extent,
        origin="lower",
        interpolation="nearest",
        aspect="equal",
        gid="faces",
        zorder=1,
    )
    if big.any():
        ax.add_collection(
            PolyCollection(
                verts[big],
                facecolors=colours[big] / 255.0,
                edgecolors="face",
                linewidths=0.3,
                gid="large-faces",
                zorder=1.5,
                rasterized=True,
            ),
            autolim=False,
        )
    return ScalarMappable(norm=norm, cmap=cmap)


def _outline_styles() -> dict[int, dict[str, Any]]:
    from matplotlib import patheffects

    def halo(width: float) -> list[Any]:
        return [patheffects.withStroke(linewidth=width + 1.6, foreground=HALO)]

    return {
        FAIL: {
            "linewidths": FAIL_WIDTH,
            "linestyles": "solid",
            "path_effects": halo(FAIL_WIDTH),
            "zorder": 4,
        },
        WARN: {
            "linewidths": WARN_WIDTH,
            "linestyles": WARN_DASH,
            "path_effects": halo(WARN_WIDTH),
            "zorder": 3,
        },
    }


def _outline(ax: Axes, verts: np.ndarray, verdict: int, gid: str) -> None:
    from matplotlib.collections import PolyCollection

    if len(verts) == 0:
        return
    style = _outline_styles()[verdict]
    ax.add_collection(
        PolyCollection(verts, facecolors="none", edgecolors=OUTLINE, gid=gid, **style),
        autolim=False,
    )


def _outlines(ax: Axes, report: Report, verts: np.ndarray) -> None:
    failing = report.failing
    _outline(ax, verts[failing], FAIL, "fail-outline")
    _outline(ax, verts[(report.verdict == WARN) & ~failing], WARN, "warn-outline")


def _rings(ax: Axes, report: Report, verts: np.ndarray) -> None:
    """Hollow rings of fixed screen size around flagged elements too small to see."""
    from matplotlib import patheffects

    halo = [patheffects.withStroke(linewidth=2.8, foreground=HALO)]
    failing = report.failing
    for mask, size, width, gid in (
        (failing, 9.0, 1.3, "fail-rings"),
        ((report.verdict == WARN) & ~failing, 5.0, 0.8, "warn-rings"),
    ):
        c = verts[mask].mean(axis=1)
        if len(c):
            ax.plot(
                c[:, 0],
                c[:, 1],
                "o",
                ms=size,
                mfc="none",
                mec=OUTLINE,
                mew=width,
                ls="none",
                gid=gid,
                zorder=5,
                path_effects=halo,
            )


def _label_elements(ax: Axes, report: Report, verts: np.ndarray, renderer: Any) -> None:
    """Ids of the failing elements, worst first, then of warn elements, where room allows
    (at most MAX_LABELS, none covering another: :mod:`.label_layout`)."""
    rows = report.worst(only_flagged=True)[: 4 * MAX_LABELS]
    anchors = verts[rows].mean(axis=1)
    placed = label_elements(ax, report, rows, anchors, renderer, MAX_LABELS)
    hidden = unlabelled_failing(report, rows, placed)
    if hidden > 0:
        ax.text(
            0.01,
            0.01,
            f"{hidden} more failing elements outlined, not labelled (see the reports)",
            transform=ax.transAxes,
            fontsize=8,
            gid="unlabelled",
        )


def colour_bar(
    fig: Figure, ax: Axes, report: Report, scale: tuple, label: str, color_by: str
) -> None:
    """The horizontal colour bar under ``ax``: ``scale`` (cmap, norm, extend) of the
    colouring, its label, verdict ticks and the profile's limit marks per family."""
    from matplotlib.cm import ScalarMappable

    cmap, norm, extend = scale
    bar = fig.colorbar(
        ScalarMappable(norm=norm, cmap=cmap),
        ax=ax,
        orientation="horizontal",
        fraction=0.045,
        pad=0.02,
        extend=extend,
    )
    bar.ax.set_gid("colourbar")
    bar.set_label(label)
    verdict_ticks(bar, color_by)
    _limit_marks(bar, report, color_by, norm)


def _frame(ax: Axes, verts: np.ndarray) -> None:
    flat = verts.reshape(-1, 2)
    lo, hi = flat.min(axis=0), flat.max(axis=0)
    extent = float(max(hi - lo))
    lo, hi = limits_apart(
        *(lo - 0.04 * extent, hi + 0.04 * extent) if extent > 0 else (lo - 1, hi + 1)
    )
    ax.set_xlim(lo[0], hi[0])
    ax.set_ylim(lo[1], hi[1])
    ax.set_aspect("equal")
    ax.tick_params(labelsize=8)


def _legend(
    ax: Axes, values: np.ndarray, findings: bool = False, back: bool = False, orphans: bool = False
) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    styles = _outline_styles()
    handles = [
        Line2D([], [], color=OUTLINE, lw=FAIL_WIDTH, label="fails (id labelled)"),
        Line2D([], [], color=OUTLINE, lw=WARN_WIDTH, ls=styles[WARN]["linestyles"], label="warn"),
    ]
    if findings:
        handles.append(
            Line2D(
                [],
                [],
                color=OUTLINE,
                lw=1.8,
                ls=FINDING_DASH,
                marker="x",
                label="mesh-level finding (edges, nodes)",
            )
        )
    if orphans:
        handles.append(
            Line2D(
                [],
                [],
                marker="o",
                ms=ORPHAN_SIZE,
                mfc="none",
                mec=OUTLINE,
                ls="none",
                label="orphan node (no element uses it)",
            )
        )
    if back:
        handles.append(
            Patch(fc="white", ec="0.3", hatch=BACK_HATCH, label="seen from behind (normal away)")
        )
    if np.ma.count_masked(values):
        handles.append(Patch(fc=NOT_DEFINED, label="metric not defined"))
    figure_legend(ax.figure, handles)


def figure_legend(fig: Figure, handles: list[Any]) -> None:
    """The legend in one row below everything, at a readable size."""
    fig.legend(
        handles=handles,
        loc="outside lower center",
        ncol=len(handles),
        fontsize=LEGEND_SIZE,
        frameon=False,
        handlelength=3.0,
    )


def limits_apart(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Axis limits ``lo`` < ``hi`` on every axis: where the two are closer than a few units
    in the last place (a tiny element far from the origin), they are moved apart by that
    much, so matplotlib never gets equal limits (it warns on them)."""
    floor = 8.0 * np.spacing(np.maximum(np.abs(lo), np.abs(hi)))
    short = ~(hi - lo > 2.0 * floor)
    return np.where(short, lo - floor, lo), np.where(short, hi + floor, hi)


def _window(verts: np.ndarray, i: int) -> tuple[np.ndarray, np.ndarray]:
    """Square close-up window around element ``i``: (lower-left, upper-right)."""
    mine = verts[i]
    lo, hi = mine.min(axis=0), mine.max(axis=0)
    size = float(max(hi - lo)) or 1.0
    centre = (lo + hi) / 2.0
    half = 1.1 * size
    return limits_apart(centre - half, centre + half)


def shell_close_up(
    report: Report, elements: ElementMesh, table: np.ndarray, i: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Shell element ``i`` and the elements around it seen along its own normal (the
    normal of its node order, :func:`~.projection.plane_view`), so it is never drawn
    edge-on: (report rows, element ``i`` last; their corner polygons on that page
    (m, k, 2); element ``i``'s corners on it (k, 2)). Around it: elements whose centres
    lie within three times its size of its centre."""
    from .projection import plane_view

    corners = elements.points[table[i]]
    view = plane_view(corners)
    size = float(np.ptp(corners, axis=0).max()) or 1.0
    gap = np.linalg.norm(report.centroids - report.centroids[i], axis=1)
    near = np.flatnonzero(gap <= 3.0 * size)
    near = np.concatenate([near[near != i], [i]])  # drawn last, over its neighbours
    local = view.project(elements.points[table[near]].reshape(-1, 3))
    local = local.reshape(len(near), table.shape[1], 2)
    return near, local, local[-1]


def _inset(
    ax: Axes,
    report: Report,
    verts,
    boxes,
    values,
    cmap,
    norm,
    i: int,
    color_by: str,
    at: int | None = None,
) -> None:
    """Close-up of report row ``i``, drawn at position ``at`` of ``verts`` (default i)."""
    from matplotlib.collections import PolyCollection

    at = i if at is None else at
    lo, hi = _window(verts, at)
    near = (boxes[1] >= lo).all(axis=1) & (boxes[0] <= hi).all(axis=1)
    rows = np.flatnonzero(near)
    ax.add_collection(
        PolyCollection(
            verts[rows], array=values[rows], cmap=cmap, norm=norm, edgecolors="white", lw=0.5
        )
    )
    verdict = FAIL if report.failing[i] else WARN
    _outline(ax, verts[at : at + 1], verdict, "inset-outline")
    ax.set_xlim(lo[0], hi[0])
    ax.set_ylim(lo[1], hi[1])
    ax.set_aspect("equal")
    ax.set_xticks([])
    ax.set_yticks([])
    from .volume_plot import report_rule

    rule = textwrap.fill(report_rule(report, i, level=True), 40)
    ax.set_title(
        drawable(
            f"id {int(report.ids[i])}: {report.verdict_names[i]}\n{rule}\n"
            + colour_value(report, color_by, i)
        ),
        fontsize=8,
        gid=f"close-up-{int(report.ids[i])}",
    )


# -- mesh-level findings ---------------------------------------------------------------------
def _field(finding: Any, name: str) -> Any:
    if isinstance(finding, dict):
        return finding.get(name)
    return getattr(finding, name, None)


def _sized(value: Any) -> bool:
    return value is not None and len(value) > 0


def finding_geometry(
    findings: Sequence[Any], points: np.ndarray
) -> tuple[list[np.ndarray], np.ndarray, np.ndarray]:
    """What mesh-level findings point at: (polylines, each (m, 3) coordinates; node
    coordinates (k, 3); report indices of the elements involved).

    Read from each finding, where present: ``edge_xyz`` (m, 2, 3) segments, ``polylines``
    (node-index or coordinate arrays), ``node_xyz`` (k, 3) or else ``node_ids`` taken as
    0-based node indices (a :class:`~meshaudit.mesh_checks.findings.Finding` always has
    ``node_xyz``: its ``node_ids`` are node numbers, see :mod:`meshaudit.mesh.labels`), and
    ``element_index`` (report rows). Anything else adds nothing.
    """
    lines: list[np.ndarray] = []
    nodes: list[np.ndarray] = [np.zeros((0, 3))]
    rows: list[np.ndarray] = [np.zeros(0, dtype=np.int64)]
    for f in findings:
        segments = _field(f, "edge_xyz")
        if _sized(segments):
            lines.extend(np.asarray(segments, dtype=float))
        for line in _field(f, "polylines") or []:
            arr = np.asarray(line)
            lines.append(points[arr] if np.issubdtype(arr.dtype, np.integer) else arr)
        xyz, ids = _field(f, "node_xyz"), _field(f, "node_ids")
        if _sized(xyz):
            nodes.append(np.asarray(xyz, dtype=float).reshape(-1, 3))
        elif _sized(ids):
            nodes.append(points[np.asarray(ids, dtype=np.int64)])
        index = _field(f, "element_index")
        if _sized(index):
            rows.append(np.asarray(index, dtype=np.int64))
    return lines, np.concatenate(nodes), np.unique(np.concatenate(rows))


def draw_findings(
    ax: Axes, report: Report, view: View, points: np.ndarray, verts: np.ndarray
) -> bool:
    """Draw the report's mesh-level findings, if it has any (``report.findings``): edges
    as dash-dot lines, nodes as crosses, elements involved outlined dash-dot unless
    already outlined as failing or warning. Returns whether anything was drawn."""
    from matplotlib.collections import LineCollection

    findings = getattr(report, "findings", None)
    if not findings:
        return False
    orphans = [f for f in findings if _field(f, "kind") == ORPHANS]
    if orphans:
        _orphan_nodes(ax, view, finding_geometry(orphans, points)[1])
    findings = [f for f in findings if _field(f, "kind") != ORPHANS]
    lines, nodes, rows = finding_geometry(findings, points)
    if lines:
        segs = [view.project(np.asarray(line, dtype=float)[:, :3]) for line in lines]
        ax.add_collection(
            LineCollection(
                segs,
                colors=OUTLINE,
                linewidths=1.8,
                linestyles=FINDING_DASH,
                gid="findings",
                zorder=4.5,
                path_effects=_outline_styles()[WARN]["path_effects"],
            ),
            autolim=False,
        )
    if len(nodes):
        xy = view.project(nodes)
        ax.plot(
            xy[:, 0],
            xy[:, 1],
            "x",
            color=OUTLINE,
            ms=6,
            mew=1.4,
            gid="finding-nodes",
            zorder=5,
            ls="none",
        )
    rows = rows[(rows >= 0) & (rows < len(report))]
    rows = rows[report.verdict[rows] == 0]  # flagged elements are outlined already
    if len(rows):  # in the findings' own dash-dot, so they are not read as warnings
        from matplotlib.collections import PolyCollection

        style = dict(_outline_styles()[WARN], linestyles=FINDING_DASH, linewidths=1.2)
        ax.add_collection(
            PolyCollection(
                verts[rows], facecolors="none", edgecolors=OUTLINE, gid="finding-outline", **style
            ),
            autolim=False,
        )
    return bool(orphans or lines or len(nodes) or len(rows))


#: Orphan nodes (no element uses them) are drawn as small rings with a white halo, on
#: top of the faces but small enough not to hide them, apart from other findings' crosses.
ORPHANS = "orphan_nodes"
ORPHAN_SIZE = 3.5


def _orphan_nodes(ax: Axes, view: View, nodes: np.ndarray) -> None:
    from matplotlib import patheffects

    if not len(nodes):
        return
    xy = view.project(nodes)
    ax.plot(
        xy[:, 0],
        xy[:, 1],
        "o",
        ms=ORPHAN_SIZE,
        mfc="none",
        mec=OUTLINE,
        mew=0.9,
        ls="none",
        gid="orphan-nodes",
        zorder=5,
        path_effects=[patheffects.withStroke(linewidth=2.2, foreground=HALO)],
    )


def has_orphans(report: Report) -> bool:
    """Whether the report's findings include orphan nodes."""
    return any(_field(f, "kind") == ORPHANS for f in getattr(report, "findings", None) or [])
