"""Where each element is measured: the mesh plane or the element's own best-fit plane.

A mesh whose nodes all share one z (or that has two coordinates) is planar 2-D and is
measured in x-y, so orientation is against +z: a clockwise element has negative det J.
A mesh whose nodes all lie in one other plane is measured in that plane, its normal
chosen to agree with the majority of the elements (with +z preferred when the plane is
x-y). Anything else is a shell surface: each element is measured in its own best-fit
plane (normal = its area vector), which has no absolute orientation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import ElementMesh
from .metrics.columns import as_elements, node_columns

#: Relative out-of-plane tolerance (of the mesh extent) under which a mesh is planar.
PLANAR_TOLERANCE = 1e-9


@dataclass(frozen=True)
class Frame:
    """How elements of a mesh are laid flat before the 2-D metrics are taken."""

    kind: str  # "planar" or "shell"
    normal: np.ndarray | None = None  # unit normal of the mesh plane (planar only)
    axes: np.ndarray | None = None  # (2, 3) in-plane unit axes t1, t2 (planar only)


def area_vectors(coords: np.ndarray) -> np.ndarray:
    """Area vector (normal times area) of each polygon in ``coords`` (n, k, 3), k = 3 or 4.

    For a quad it is half the cross product of the diagonals (Newell's normal), which
    is the best-fit-plane normal of a warped quad and exact for a planar one.
    """
    if coords.shape[1] == 3:
        return 0.5 * np.cross(coords[:, 1] - coords[:, 0], coords[:, 2] - coords[:, 0])
    return 0.5 * np.cross(coords[:, 2] - coords[:, 0], coords[:, 3] - coords[:, 1])


def _unit(v: np.ndarray) -> np.ndarray:
    n = np.linalg.norm(v, axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        return v / n


def _plane_axes(normal: np.ndarray) -> np.ndarray:
    """Two in-plane unit axes completing ``normal`` to a right-handed frame."""
    helper = np.array([1.0, 0.0, 0.0]) if abs(normal[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    t1 = _unit(np.cross(helper, normal))
    t2 = np.cross(normal, t1)
    return np.stack([t1, t2])


def choose_frame(mesh: ElementMesh) -> Frame:
    """Decide whether ``mesh`` is planar (and in which plane) or a shell surface."""
    z = mesh.points[:, 2]
    if z.min() == z.max():  # every node in one plane z = const: no need to select nodes
        return Frame("planar", np.array([0.0, 0.0, 1.0]), np.eye(3)[:2])
    pts = mesh.points[mesh.used_nodes()]
    if np.ptp(pts[:, 2]) == 0.0:
        return Frame("planar", np.array([0.0, 0.0, 1.0]), np.eye(3)[:2])
    extent = float(np.ptp(pts, axis=0).max())
    centre = pts.mean(axis=0)
    # Smallest principal direction of the node cloud is the candidate plane normal.
    sample = pts if len(pts) <= 200_000 else pts[:: len(pts) // 200_000 + 1]
    _, _, vt = np.linalg.svd(sample - centre, full_matrices=False)
    normal = vt[-1]
    out_of_plane = float(np.abs((pts - centre) @ normal).max())
    if out_of_plane > PLANAR_TOLERANCE * extent:
        return Frame("shell")
    if abs(normal[2]) > 1.0 - 1e-9:
        normal = np.array([0.0, 0.0, 1.0])
    else:
        votes = 0.0
        for block in mesh.blocks:
            corners = 3 if block.family == "triangle" else 4
            av = area_vectors(mesh.points[block.connectivity[:, :corners]])
            votes += float(np.sign(av @ normal).sum())
        if votes < 0:
            normal = -normal
    return Frame("planar", normal, _plane_axes(normal))


def centroids(coords: np.ndarray) -> np.ndarray:
    """Mean of the nodes of each element ``coords`` (n, k, d): shape (n, d).

    Summed node by node into one (n, d) array: the same values as ``coords.mean(axis=1)``
    without numpy's strided reduction, which is several times slower.
    """
    total = coords[:, 0] + coords[:, 1]
    for k in range(2, coords.shape[1]):
        total += coords[:, k]
    total /= coords.shape[1]
    return total


def element_normals(corners: np.ndarray) -> np.ndarray:
    """Unit normal of each element's best-fit plane, (n, 3), from corners (n, k, 3).

    The area vector (Newell's normal) is used where it is sound. A bow-tie's area vector
    is the difference of its two lobes and may vanish or point anywhere; where it is less
    than half of the corner-triangle measure sum |a_k x b_k| / 4 (equal to it for any
    convex quad, whatever its aspect ratio) the least-squares plane of the corners is used
    instead, turned to agree with the area vector where that has a direction.
    """
    av = area_vectors(corners)
    normal = _unit(av)
    if corners.shape[1] != 4:
        return normal
    to_next = np.roll(corners, -1, axis=1) - corners
    to_prev = np.roll(corners, 1, axis=1) - corners
    measure = np.linalg.norm(np.cross(to_next, to_prev), axis=-1).sum(axis=1) / 4.0
    weak = ~(np.linalg.norm(av, axis=1) >= 0.5 * measure)
    if weak.any():
        pts = corners[weak] - corners[weak].mean(axis=1, keepdims=True)
        _, vecs = np.linalg.eigh(np.einsum("nki,nkj->nij", pts, pts))
        fit = vecs[:, :, 0]  # eigenvector of the smallest eigenvalue
        flip = (fit * av[weak]).sum(axis=1) < 0.0
        fit[flip] *= -1.0
        normal[weak] = fit
    return normal


def _to_local_xy(coords: np.ndarray) -> np.ndarray:
    """:func:`to_local` in the x-y plane, worked on node columns: the same numbers.

    The result is a view (n, k, 2) of a (k, 2, n) array, so the metric kernels take its
    columns without copying (see :func:`meshaudit.metrics.columns.node_columns`).
    """
    cols = node_columns(coords[:, :, :2])  # a copy: (k, 2, n)
    centre = cols[0] + cols[1]  # summed as centroids() sums
    for node in cols[2:]:
        centre += node
    centre /= len(cols)
    cols -= centre
    cols += 0.0  # no -0.0, as the product with the axes gives
    return as_elements(cols)


def _to_local_own_plane(coords: np.ndarray, corners: np.ndarray) -> np.ndarray:
    """:func:`to_local` of shell elements, on node columns.

    In-plane axes: t1 = the first side with its normal part taken out, made unit;
    t2 = normal x t1. The sums run in the order of the array form
    (rel - centroid, (t . n) n, sums over x, y, z left to right), so the numbers are the
    same to the bit; the result is a view (n, k, 2) of a (k, 2, n) array.
    """
    normal = np.ascontiguousarray(element_normals(corners).T)  # (3, n)
    rel = node_columns(coords)  # a copy: (k, 3, n)
    n_corners = corners.shape[1]
    centre = rel[0] + rel[1]  # summed as centroids() sums
    for node in rel[2:n_corners]:
        centre += node
    centre /= n_corners
    rel -= centre
    side = rel[1] - rel[0]
    side -= _dot3(side, normal) * normal
    with np.errstate(invalid="ignore", divide="ignore"):
        side /= np.sqrt(_dot3(side, side))  # the norm sums from +0.0 too
    t2 = np.cross(normal, side, axis=0)
    out = np.empty((len(rel), 2, rel.shape[-1]))
    for k, axis in enumerate((side, t2)):
        out[:, k] = _dot3(rel.swapaxes(0, 1), axis[:, None])
    return as_elements(out)


def _dot3(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Sum over the first axis (x, y, z) of a * b as numpy's sum() does it: ((x + y) + z),
    from +0.0, so a zero sum is never -0.0."""
    out = (a[0] * b[0] + a[1] * b[1]) + a[2] * b[2]
    out += 0.0
    return out


def to_local(coords: np.ndarray, frame: Frame, n_corners: int | None = None) -> np.ndarray:
    """Lay elements ``coords`` (n, k, 3) flat: (n, k, 2) in-plane coordinates.

    Planar meshes use the mesh plane (origin at each element's centroid); shells use each
    element's own best-fit plane through its centroid, with its area vector as normal.
    Only the first ``n_corners`` nodes (default: all) define the centroid and the plane,
    so a quadratic element's corners land exactly where its linear twin's would; the
    midside nodes are projected onto that plane.
    """
    corners = coords if n_corners is None else coords[:, :n_corners]
    in_xy = frame.kind == "planar" and np.array_equal(frame.axes, np.eye(3)[:2])
    if in_xy and n_corners is None:
        return _to_local_xy(coords)
    if frame.kind == "planar":
        rel = coords - centroids(corners)[:, None, :]
        if in_xy:
            return rel[:, :, :2] + 0.0  # what the product with the axes gives, to the bit
        return rel @ frame.axes.T
    return _to_local_own_plane(coords, corners)
