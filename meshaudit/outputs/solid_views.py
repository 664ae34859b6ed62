"""Views and face geometry for pictures of solids.

- :func:`volume_view`: a whole volume mesh seen obliquely: the page first laid on the two
  longest sides of the mesh's bounding box (the view along its shortest side), then turned
  30 degrees up and 25 degrees across, as a markedly curved shell is;
- :func:`element_view`: one element seen along a direction that shows it large and opens
  up its faces: of a fixed set of directions spread evenly over the half sphere, those
  whose projected area (half the sum over its faces of |face area vector . direction|, the
  shadow area of a closed surface seen along that direction) is at least 85 % of the
  largest; of these, the one where the face seen most edge-on is seen most openly (largest
  smallest |unit face normal . direction|), so no face collapses to a line; ties go to the
  first in the set, so the view is deterministic;
- :func:`face_outlines`: every face of an element as a closed polygon in space, each edge
  sampled through the element's own map (curved for a quadratic element);
- :func:`face_grid`: the reference element's grid lines on each face (the caller maps
  them through the element's map).
"""

from __future__ import annotations

import numpy as np

from ..cells.registry import CellType
from ..mesh.scale import length_exponent, scaled_lengths
from .projection import View, drawing_unit, tilted, with_unit

#: Oblique turn of the volume view: elevation, azimuth in degrees (as for a curved shell).
VOLUME_OBLIQUE = (30.0, 25.0)
#: How many directions the element view chooses among (over the half sphere z' >= 0).
VIEW_DIRECTIONS = 400
#: The element view keeps the directions whose projected area is at least this fraction
#: of the largest.
NEAR_LARGEST = 0.85


def box_view(points: np.ndarray) -> View:
    """Page on the two longest sides of the bounding box of ``points`` (n, 3), seen along
    the shortest (right-handed, towards the viewer), before any turn."""
    lo, hi = np.nanmin(points, axis=0), np.nanmax(points, axis=0)
    order = np.argsort(-(hi - lo), kind="stable")
    eye = np.eye(3)
    a, b = eye[order[0]], eye[order[1]]
    return View(lo / 2.0 + hi / 2.0, np.stack([a, b]), np.cross(a, b))  # no overflow


def volume_view(points: np.ndarray) -> View:
    """The oblique view a volume mesh is drawn in (see the module docstring)."""
    view = tilted(box_view(points), *VOLUME_OBLIQUE)
    return with_unit(view, drawing_unit(points))


def _directions(n: int = VIEW_DIRECTIONS) -> np.ndarray:
    """``n`` unit vectors spread evenly over the half sphere z >= 0 (a Fibonacci spiral),
    the first one straight up, then spiralling down."""
    k = np.arange(n) + 0.5
    z = 1.0 - k / n
    r = np.sqrt(1.0 - z * z)
    phi = k * np.pi * (3.0 - np.sqrt(5.0))
    return np.column_stack([r * np.cos(phi), r * np.sin(phi), z])


def face_area_vectors(cell: CellType, coords: np.ndarray) -> np.ndarray:
    """Area vectors (f, 3) of the faces of one element (nodes ``coords`` (k, 3)) through
    its corners: half the cross product of the diagonals (of the two edges of a triangle)."""
    out = []
    for face in cell.faces:
        p = coords[list(face)]
        if len(face) == 4:
            out.append(0.5 * np.cross(p[2] - p[0], p[3] - p[1]))
        else:
            out.append(0.5 * np.cross(p[1] - p[0], p[2] - p[0]))
    return np.array(out)


def projected_area(areas: np.ndarray, directions: np.ndarray) -> np.ndarray:
    """Shadow area of a closed surface of faces with area vectors ``areas`` (f, 3), seen
    along each of ``directions`` (d, 3): half the sum of |a . d| (each point of the shadow
    is covered by the surface twice, once going in and once coming out)."""
    return 0.5 * np.abs(areas @ directions.T).sum(axis=0)


def best_direction(areas: np.ndarray, directions: np.ndarray | None = None) -> np.ndarray:
    """The direction (3,) one element with face area vectors ``areas`` (f, 3) is seen
    along: among the directions whose projected area is at least :data:`NEAR_LARGEST` of
    the largest, the one that sees its most edge-on face most openly (largest smallest
    |unit face normal . direction|, faces of no area left out); ties to the first."""
    dirs = _directions() if directions is None else directions
    shadow = projected_area(areas, dirs)
    near = shadow >= NEAR_LARGEST * shadow.max()
    size = np.linalg.norm(areas, axis=1)
    faces = size > 1e-12 * (size.max() or 1.0)
    if not faces.any():
        return dirs[int(np.argmax(shadow))]
    normals = areas[faces] / size[faces, None]
    openness = np.abs(normals @ dirs.T).min(axis=0)
    return dirs[int(np.argmax(np.where(near, openness, -1.0)))]


def element_view(cell: CellType, coords: np.ndarray) -> View:
    """The view of one element (nodes ``coords`` (k, 3)) that shows it best (see
    :func:`best_direction`); page y is the projection of the model's z axis (of y where
    the view looks along z), so the page is upright."""
    k = length_exponent(coords)
    scaled = scaled_lengths(coords, -k, 1) if k else coords
    normal = best_direction(face_area_vectors(cell, scaled - scaled.mean(axis=0)))
    up = np.array([0.0, 0.0, 1.0]) if abs(normal[2]) < 0.9 else np.array([0.0, 1.0, 0.0])
    up = up - (up @ normal) * normal
    up /= np.linalg.norm(up)
    right = np.cross(up, normal)
    view = View(coords.mean(axis=0), np.stack([right, up]), normal)
    return with_unit(view, drawing_unit(coords))


def _face_loop(cell: CellType, face: tuple[int, ...], per_edge: int) -> np.ndarray:
    """Reference points (4 * per_edge, dim) around one face, ``per_edge`` per edge (a
    triangle face repeats its last point to the quadrilateral's count)."""
    corners = cell.reference_nodes[list(face)]
    t = np.linspace(0.0, 1.0, per_edge, endpoint=False)[:, None]
    ring = np.vstack([a + t * (b - a) for a, b in zip(corners, np.roll(corners, -1, axis=0))])
    pad = 4 * per_edge - len(ring)
    return np.vstack([ring, np.repeat(ring[-1:], pad, axis=0)]) if pad else ring


def face_outlines(cell: CellType, coords: np.ndarray, per_edge: int | None = None) -> np.ndarray:
    """Every face of ``n`` elements of one cell type as closed polygons in space: (n, f,
    m, 3), ``coords`` (n, k, 3); a surface cell has one face, itself. A linear element's
    faces are their corners (m = 4); a quadratic element's edges are sampled ``per_edge``
    times (default 6) through its map."""
    if per_edge is None:
        per_edge = 6 if cell.is_quadratic else 1
    loops = np.stack([_face_loop(cell, face, per_edge) for face in cell.faces])  # (f, m, dim)
    f, m, dim = loops.shape
    weights = cell.shape_functions(loops.reshape(-1, dim))  # (f m, k)
    return np.einsum("pk,nkd->npd", weights, coords).reshape(len(coords), f, m, 3)


def _face_param(corners: np.ndarray, s: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Reference points on a face: bilinear in (s, t) over its four corners; a triangle's
    (corners (3, 3)) as s along the first edge and t towards the third corner."""
    s, t = s[..., None], t[..., None]
    if len(corners) == 4:
        a, b, c, d = corners
        return (1 - s) * (1 - t) * a + s * (1 - t) * b + s * t * c + (1 - s) * t * d
    a, b, c = corners
    return a + s * (b - a) + t * (c - a)


def face_grid(cell: CellType, lines: int = 5, samples: int = 21) -> list[np.ndarray]:
    """Reference grid lines (samples, 3) on every face: ``lines`` levels of each face
    parameter (its own edges included); on a triangular face, lines parallel to each side."""
    out = []
    u = np.linspace(0.0, 1.0, samples)
    levels = np.linspace(0.0, 1.0, lines)
    for face in cell.faces:
        corners = cell.reference_nodes[list(face)]
        for c in levels:
            if len(face) == 4:
                out.append(_face_param(corners, np.full_like(u, c), u))
                out.append(_face_param(corners, u, np.full_like(u, c)))
            else:
                s = u * (1.0 - c)
                out.append(_face_param(corners, np.full_like(s, c), s))
                out.append(_face_param(corners, s, np.full_like(s, c)))
                out.append(_face_param(corners, s, 1.0 - c - s))
    return out


def face_cells(cell: CellType, per_side: int = 4) -> tuple[np.ndarray, np.ndarray]:
    """Small reference patches tiling every face: (corners (m, 4, 3) in reference
    coordinates, a triangular patch repeating its last corner; centres (m, 3))."""
    patches = []
    h = 1.0 / per_side
    grid = np.meshgrid(range(per_side), range(per_side), indexing="ij")
    i, j = (g.ravel().astype(float) for g in grid)
    for face in cell.faces:
        corners = cell.reference_nodes[list(face)]
        if len(face) == 4:
            loops = [[(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)]]
        else:
            a, b = i[i + j < per_side], j[i + j < per_side]
            c, d = i[i + j < per_side - 1], j[i + j < per_side - 1]
            loops = [
                [(a, b), (a + 1, b), (a, b + 1), (a, b + 1)],
                [(c + 1, d), (c + 1, d + 1), (c, d + 1), (c, d + 1)],
            ]
        for loop in loops:
            patches.append(np.stack([_face_param(corners, a * h, b * h) for a, b in loop], 1))
    corners = np.concatenate(patches)
    triangle = np.all(corners[:, 2] == corners[:, 3], axis=1)
    centres = np.where(triangle[:, None], corners[:, :3].mean(axis=1), corners.mean(axis=1))
    return corners, centres


def mapped(cell: CellType, coords: np.ndarray, ref: np.ndarray) -> np.ndarray:
    """Points in space (..., 3) of reference points ``ref`` (..., 3) of one element with
    nodes ``coords`` (k, 3), any leading shape."""
    flat = ref.reshape(-1, ref.shape[-1])
    return (cell.shape_functions(flat) @ coords).reshape(*ref.shape[:-1], coords.shape[-1])


def det_j_signs(cell: CellType, coords: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Sign (m,) of det J of one element (nodes ``coords`` (k, 3)) at reference ``points``
    (m, 3): -1, 0 or 1; worked out at a power-of-two scale, so that an element of extreme
    size neither overflows nor underflows to 0."""
    k = length_exponent(coords)
    scaled = scaled_lengths(coords, -k, 1) if k else coords
    jac = np.einsum("mak,kb->mab", cell.shape_derivatives(points), scaled)
    return np.sign(np.linalg.det(jac)) + 0.0
