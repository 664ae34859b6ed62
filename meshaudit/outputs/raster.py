"""Paint many small polygons into an RGBA image with numpy, for meshes too large to draw
as vector polygons in reasonable time.

A pixel takes an element's colour when the pixel centre lies inside the element
(edge-function test on its corners, in either winding). Every element also paints the
pixel under its centroid, so no element vanishes however small. Elements whose bounding
box spans more than :data:`MAX_SPAN` pixels are not painted here: the caller draws those
few as ordinary polygons on top. All work is vectorised over elements, one pass per pixel
offset inside the bounding box.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Largest bounding-box size (pixels, each direction) painted into the raster.
MAX_SPAN = 6


@dataclass(frozen=True)
class Grid:
    """Pixel grid over the page rectangle [x0, x1] x [y0, y1]; row 0 at the bottom (y0)."""

    x0: float
    y0: float
    pixel: float  # page units per pixel, same in x and y
    width: int
    height: int

    @property
    def extent(self) -> tuple[float, float, float, float]:
        return (
            self.x0,
            self.x0 + self.width * self.pixel,
            self.y0,
            self.y0 + self.height * self.pixel,
        )


def grid_for(lo: np.ndarray, hi: np.ndarray, width: int) -> Grid:
    """A grid ``width`` pixels wide covering the box lo..hi with square pixels."""
    span = float(max(hi[0] - lo[0], 1e-300))
    pixel = span / width
    height = max(1, int(np.ceil(float(hi[1] - lo[1]) / pixel)))
    return Grid(float(lo[0]), float(lo[1]), pixel, width, height)


def paint(verts: np.ndarray, colours: np.ndarray, grid: Grid) -> tuple[np.ndarray, np.ndarray]:
    """Paint polygons ``verts`` (n, k, 2) with ``colours`` (n, 4) uint8 into an image.

    Returns (image (height, width, 4) uint8, transparent where nothing was painted;
    boolean mask (n,) of the elements left for the caller to draw as polygons). Later
    elements overwrite earlier ones where they overlap.
    """
    image = np.zeros((grid.height, grid.width, 4), dtype=np.uint8)
    origin = np.array([grid.x0, grid.y0])
    lo = np.floor((verts.min(axis=1) - origin) / grid.pixel).astype(np.int64)
    hi = np.floor((verts.max(axis=1) - origin) / grid.pixel).astype(np.int64)
    span = hi - lo
    big = (span >= MAX_SPAN).any(axis=1)
    small = np.flatnonzero(~big)
    v = ((verts[small] - origin) / grid.pixel).astype(np.float32)  # in pixel units
    lo, span, colours = lo[small], span[small], colours[small]
    centre = np.floor(v.mean(axis=1)).astype(np.int64)
    _put(image, centre[:, 0], centre[:, 1], colours)
    x, y = v[..., 0], v[..., 1]
    ex, ey = np.roll(x, -1, axis=1) - x, np.roll(y, -1, axis=1) - y
    skip = (ex == 0.0) & (ey == 0.0)  # a triangle's repeated corner: no edge there
    top = span.max(axis=0) if len(span) else np.zeros(2, dtype=np.int64)
    for dy in range(int(top[1]) + 1):
        j = lo[:, 1] + dy
        py = (j + 0.5).astype(np.float32)[:, None] - y
        for dx in range(int(top[0]) + 1):
            i = lo[:, 0] + dx
            px = (i + 0.5).astype(np.float32)[:, None] - x
            side = ex * py - ey * px
            side[skip] = 0.0
            hit = ((side >= 0.0).all(axis=1) | (side <= 0.0).all(axis=1)) & (span[:, 0] >= dx)
            hit &= span[:, 1] >= dy
            _put(image, i[hit], j[hit], colours[hit])
    return image, big


def _put(image: np.ndarray, i: np.ndarray, j: np.ndarray, colours: np.ndarray) -> None:
    """image[j, i] = colours, one 32-bit write per pixel (points off the grid dropped)."""
    ok = (i >= 0) & (i < image.shape[1]) & (j >= 0) & (j < image.shape[0])
    words = image.view(np.uint32).reshape(image.shape[:2])
    words[j[ok], i[ok]] = np.ascontiguousarray(colours[ok]).view(np.uint32).ravel()
