"""Labels placed so that none covers another.

Each label is tried at a ring of offsets around its anchor point, nearest first; the first
position whose rendered text box overlaps no label already placed (and stays inside the
axes) is kept. Labels are placed in the order given (most important first); one with no
free position is left out, and the caller says how many were. The figure's layout must be
final before placing (see :func:`freeze_layout`): text boxes are measured in display
coordinates.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Offsets tried around an anchor, in points: 8 directions at each of these distances.
RADII = (10.0, 18.0, 28.0, 40.0)
_ANGLES = np.radians([45.0, 135.0, 225.0, 315.0, 90.0, 270.0, 0.0, 180.0])
#: Gap kept between two label boxes, in pixels (covers a label's rounded frame).
GAP = 4.0
#: Half size (pixels) of the square kept clear around each anchor and marker.
MARK = 4.0


def freeze_layout(fig: Figure) -> Any:
    """Lay the figure out once and keep that layout (labels added afterwards do not move
    the axes); returns the renderer text boxes are measured with."""
    fig.draw_without_rendering()
    fig.set_layout_engine("none")
    return fig.canvas.get_renderer()


def _offsets() -> list[tuple[float, float]]:
    return [(r * np.cos(a), r * np.sin(a)) for r in RADII for a in _ANGLES]


def _overlaps(box: Any, boxes: list[Any]) -> bool:
    return any(
        box.x0 < b.x1 + GAP and b.x0 < box.x1 + GAP and box.y0 < b.y1 + GAP and b.y0 < box.y1 + GAP
        for b in boxes
    )


def place_labels(
    ax: Axes,
    anchors: np.ndarray,
    texts: list[str],
    styles: list[dict[str, Any]],
    renderer: Any,
    taken: list[Any] | None = None,
    arrows: bool = True,
    keep_clear: np.ndarray | None = None,
) -> list[bool]:
    """Annotate ``ax`` with ``texts`` at data points ``anchors`` (n, 2), each with its own
    text keyword arguments (``styles``: gid, fontsize, bbox, ...). Returns which labels were
    placed. ``taken`` (display boxes already covered, e.g. by another axes' labels) is
    extended with the boxes placed. No label covers the anchors themselves nor the data
    points ``keep_clear`` (m, 2) (markers a label must not hide)."""
    from matplotlib.text import Text
    from matplotlib.transforms import Bbox

    boxes = taken if taken is not None else []
    frame = ax.get_window_extent(renderer)
    points = [anchors] if keep_clear is None else [anchors, keep_clear]
    marks = ax.transData.transform(np.vstack(points).reshape(-1, 2))
    marks = marks[np.isfinite(marks).all(axis=1)]
    clear = [Bbox.from_extents(x - MARK, y - MARK, x + MARK, y + MARK) for x, y in marks]
    placed = []
    for anchor, text, style in zip(anchors, texts, styles):
        ok = False
        if np.all(np.isfinite(anchor)):
            label = ax.annotate(
                text,
                xy=(float(anchor[0]), float(anchor[1])),
                xytext=(0.0, 0.0),
                textcoords="offset points",
                ha="center",
                va="center",
                annotation_clip=False,
                arrowprops={"arrowstyle": "-", "lw": 0.6, "color": "black"} if arrows else None,
                **style,
            )
            for offset in _offsets():
                label.xyann = offset
                label.update_positions(renderer)
                box = Text.get_window_extent(label, renderer)  # the text, not its arrow
                inside = (
                    box.x0 >= frame.x0
                    and box.x1 <= frame.x1
                    and box.y0 >= frame.y0
                    and box.y1 <= frame.y1
                )
                if inside and not _overlaps(box, boxes) and not _overlaps(box, clear):
                    boxes.append(box)
                    ok = True
                    break
            if not ok:
                label.remove()
        placed.append(ok)
    return placed


def label_elements(
    ax: Axes,
    report: Any,
    rows: np.ndarray,
    anchors: np.ndarray,
    renderer: Any,
    limit: int,
) -> list[bool]:
    """Ids of report rows ``rows`` (worst first: failing ones, then warn ones) at data
    points ``anchors`` (n, 2), where room allows, at most ``limit``; none covering
    another nor any anchor. A failing label is a text with gid ``fail-id-<id>`` in a black
    frame, a warn label ``warn-id-<id>``, smaller, in a grey frame. Returns which were
    placed; the caller writes an "n more not labelled" line."""
    styles, texts = [], []
    for i in rows:
        element = int(report.ids[i])
        if report.failing[i]:
            frame = {"boxstyle": "round,pad=0.2", "fc": "white", "ec": "black", "lw": 0.6}
            styles.append({"fontsize": 7.5, "gid": f"fail-id-{element}", "bbox": frame})
        else:
            frame = {"boxstyle": "round,pad=0.2", "fc": "white", "ec": "#8c8c8c", "lw": 0.5}
            styles.append({"fontsize": 6.5, "gid": f"warn-id-{element}", "bbox": frame})
        styles[-1]["zorder"] = 6
        texts.append(str(element))
    placed: list[bool] = []
    taken: list[Any] = []
    for k in range(len(rows)):
        if sum(placed) == limit:
            break
        one = slice(k, k + 1)
        placed += place_labels(
            ax, anchors[one], texts[one], styles[one], renderer, taken, keep_clear=anchors
        )
    return placed


def unlabelled_failing(report: Any, rows: np.ndarray, placed: list[bool]) -> int:
    """How many failing elements did not get a label."""
    shown = sum(1 for k, ok in enumerate(placed) if ok and report.failing[rows[k]])
    return int(report.failing.sum()) - shown
