"""Where each element is measured, and what its orientation is judged against.

A mesh whose nodes all share one z (or that has two coordinates) is planar 2-D and is
measured in x-y. A mesh whose nodes all lie in one other plane (within
:data:`PLANAR_TOLERANCE` of its size, plus the rounding of its coordinates) is
measured in that plane. Either way a 2-D solver reads x and y and drops z, so element
orientation is judged as it sees it: against +z, by the sign of each element's area
projected on x-y (the plane normal is taken with a positive z component). A planar
mesh whose plane contains the z direction (its projection on x-y is a line) has no such
reference. Anything else is a shell surface: each element is measured in its own
best-fit plane (see :func:`element_normals`), which has no absolute orientation either.
Without a reference, only relative orientation is judged: neighbours must agree
(see :mod:`meshaudit.mesh_checks.orientation`).

Only surface elements decide (the caller passes
:meth:`meshaudit.mesh.elements.ElementMesh.surface_part`): solids are measured in space,
each against its own reference element, with no plane. A mesh of solids alone has no
measuring plane at all: its frame is ``"solid"``, with no orientation judged between
elements (each solid's orientation is the sign of its own det J). Surface elements beside
solids belong to a 3-D model (skins, shells, load surfaces): no 2-D solver reads them, so
even when they lie in one plane their orientation is judged between neighbours, not
against +z (``Frame.beside_solids``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..metrics.columns import as_elements, node_columns
from .elements import ElementMesh
from .scale import length_exponent

#: Relative out-of-plane tolerance (of the mesh extent) under which a mesh is planar.
PLANAR_TOLERANCE = 1e-9

#: Rounding allowance added to the planar tolerance, in units of the largest coordinate
#: magnitude: a rigid motion worked out in double precision moves each coordinate by a
#: few units in the last place (2.2e-16 relative), so a flat mesh turned and moved far
#: from the origin stays planar. 64 units: a margin over the few a rotation makes.
ROUNDING = 64 * float(np.finfo(np.float64).eps)


@dataclass(frozen=True)
class Frame:
    """How elements of a mesh are laid flat before the 2-D metrics are taken."""

    kind: str  # "planar", "shell" or "solid" (no surface elements: nothing to lay flat)
    normal: np.ndarray | None = None  # unit normal of the mesh plane (planar only)
    axes: np.ndarray | None = None  # (2, 3) in-plane unit axes t1, t2 (planar only)
    #: Planar only: the plane contains the z direction (its projection on x-y is a line,
    #: within the planar tolerance), so a 2-D solver reading x and y sees it edge-on.
    vertical: bool = False
    #: Planar only: the mesh has solids too (a 3-D model): orientation is judged between
    #: neighbours, each element measured in its own winding, as in a plane containing z.
    beside_solids: bool = False
    #: Shell only: the largest distance of a node from the nodes' least-squares plane,
    #: over the mesh extent, and that plane's unit normal (for the report notes).
    flatness: float | None = None
    fit_normal: np.ndarray | None = None

    @property
    def orientation(self) -> str:
        """What element orientation is judged against: ``"+z"`` (a planar mesh whose plane
        does not contain z: each element's area projected on x-y must be positive) or
        ``"relative"`` (shells and planar meshes whose plane contains z: neighbours must
        agree, see :mod:`meshaudit.mesh_checks.orientation`) or ``"none"`` (a mesh of solids
        alone: no surface elements to compare; each solid is judged by its own det J)."""
        if self.kind == "solid":
            return "none"
        absolute = self.kind == "planar" and not (self.vertical or self.beside_solids)
        return "+z" if absolute else "relative"

    @property
    def tilt(self) -> float | None:
        """Angle in degrees between the mesh plane and x-y (planar only), 0 to 90."""
        if self.normal is None:
            return None
        return float(np.degrees(np.arccos(min(1.0, abs(float(self.normal[2]))))))


#: The frame of a mesh in a plane z = const.
XY_FRAME = Frame("planar", np.array([0.0, 0.0, 1.0]), np.eye(3)[:2])
#: The frame of a mesh of solids alone: no surface element, no measuring plane.
SOLID_FRAME = Frame("solid")


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
    """Two in-plane unit axes completing ``normal`` to a right-handed frame: t1 is the x
    axis projected on the plane (the y axis when the normal lies near x), so a plane near
    x-y gets axes near x and y."""
    helper = np.array([1.0, 0.0, 0.0]) if abs(normal[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    t1 = _unit(helper - (helper @ normal) * normal)
    t2 = np.cross(normal, t1)
    return np.stack([t1, t2])


def anchor(mesh: ElementMesh) -> np.ndarray:
    """(3,) a point of the mesh the audited elements use (the first node of the first
    element): the origin plane coordinates are measured from. Every geometric extent is
    taken from the nodes the audited elements use, never from all points: a node no
    element uses may lie anywhere, at infinity or NaN (meshaudit reads such files), and
    must not move the grids the checks bucket elements on."""
    for block in mesh.blocks:
        if len(block):
            return mesh.points[int(block.connectivity[0, 0])].copy()
    return np.zeros(3)


def choose_frame(mesh: ElementMesh, beside_solids: bool = False) -> Frame:
    """Decide whether ``mesh`` is planar (in which plane, judged against what) or a shell.

    Planar: every used node within ``PLANAR_TOLERANCE`` x the mesh extent (plus
    :data:`ROUNDING` x the largest coordinate magnitude) of the least-squares plane of the
    nodes. The plane normal is taken with a positive z component, so orientation is
    judged against +z; when the nodes' projection on x-y is a line (thinner than the same
    tolerance across it), the plane contains z and the frame is ``vertical``. A mesh with
    no elements (the surface part of a mesh of solids alone) is ``"solid"``.
    ``beside_solids``: ``mesh`` is the surface part of a mesh that has solids too (see the
    module docstring).
    """
    if mesh.n_elements == 0:
        return SOLID_FRAME
    xy = XY_FRAME if not beside_solids else replace(XY_FRAME, beside_solids=True)
    z = mesh.points[:, 2]
    if z.min() == z.max():  # every point in one plane z = const: no need to select nodes
        return xy
    pts = mesh.points[mesh.used_nodes()]
    if np.ptp(pts[:, 2]) == 0.0:
        return xy
    k = length_exponent(pts)
    if k:  # measured at a scale where squares and sums of squares cannot overflow
        with np.errstate(under="ignore"):
            pts = np.ldexp(pts, -k)
    extent = float(np.ptp(pts, axis=0).max())
    tolerance = PLANAR_TOLERANCE * extent + ROUNDING * float(np.abs(pts).max())
    centre = pts.mean(axis=0)
    # Smallest principal direction of the node cloud is the candidate plane normal.
    sample = pts if len(pts) <= 200_000 else pts[:: len(pts) // 200_000 + 1]
    _, _, vt = np.linalg.svd(sample - centre, full_matrices=False)
    normal = vt[-1]
    deviation = float(np.abs((pts - centre) @ normal).max())
    if deviation > tolerance:
        return Frame("shell", flatness=deviation / extent, fit_normal=normal)
    # Across the plane's trace on x-y, the nodes' projection is |n_z| / |n_xy| times as
    # wide as their spread in z: a line when the plane contains z.
    # (A plane containing z has |n_xy| = 1 to within the tolerance; a normal near z, down
    # to exactly z when one node is off by a denormal, has no trace to measure across.)
    across = float(np.hypot(normal[0], normal[1]))
    vertical = across > 0.5 and float(np.ptp(pts[:, :2] @ (normal[:2] / across))) <= tolerance
    if vertical:
        normal = np.array([normal[0], normal[1], 0.0]) / np.hypot(normal[0], normal[1])
        if normal[np.argmax(np.abs(normal))] < 0.0:  # any fixed choice: no reference
            normal = -normal
    elif normal[2] < 0.0:
        normal = -normal
    return Frame(
        "planar", normal, _plane_axes(normal), vertical=vertical, beside_solids=beside_solids
    )


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

    The area vector (Newell's normal) is used where it is sound. A quad's area vector is
    the sum of its two triangles' (either diagonal split), so it shrinks where they face
    apart: a bow-tie's is the difference of its two lobes and may vanish or point
    anywhere, and a deep re-entrant or far-folded quad's is short too. Where its length is
    less than half of the corner-triangle measure sum |a_k x b_k| / 4 (equal to it for any
    flat convex quad, whatever its aspect ratio) the least-squares plane of the corners is
    used instead, turned to agree with the area vector where that has a direction.
    Triangles always use their area vector.
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

    Planar meshes use the mesh plane (origin at each element's centroid; in-plane axes
    right-handed about the normal, so with a positive z component a clockwise element
    about +z gets a negative det J); shells use each element's own best-fit plane through
    its centroid (see :func:`element_normals`). In a plane that contains z there is no
    reference, so each element is measured in its own winding, as a shell element is:
    one wound clockwise in the plane's axes is mirrored (a reflection changes no shape);
    so is a planar surface beside solids (``frame.beside_solids``). Only the first
    ``n_corners`` nodes (default: all) define the centroid, the plane and the winding,
    so a quadratic element's corners land exactly where its linear twin's would; the
    midside nodes are projected onto that plane.
    """
    corners = coords if n_corners is None else coords[:, :n_corners]
    in_xy = frame.kind == "planar" and np.array_equal(frame.axes, np.eye(3)[:2])
    own_winding = frame.vertical or frame.beside_solids
    if in_xy and n_corners is None and not own_winding:
        return _to_local_xy(coords)
    if frame.kind == "planar":
        rel = coords - centroids(corners)[:, None, :]
        if in_xy:  # what the product with the axes gives, to the bit
            local = rel[:, :, :2] + 0.0
        else:
            local = rel @ frame.axes.T
        if own_winding:
            _own_winding(local, corners.shape[1])
        return local
    return _to_local_own_plane(coords, corners)


def _own_winding(local: np.ndarray, n_corners: int) -> None:
    """Mirror (in place) the elements of ``local`` (n, k, 2) whose first ``n_corners``
    nodes run clockwise (negative shoelace area), so every element is counter-clockwise."""
    x, y = local[:, :n_corners, 0], local[:, :n_corners, 1]
    twice = (x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y).sum(axis=1)
    local[twice < 0.0, :, 1] *= -1.0


def frame_notes(frame: Frame) -> list[str]:
    """Report notes on where a planar mesh lies when that is not the x-y plane."""
    if frame.kind == "planar" and frame.beside_solids:
        return [
            "the surface elements lie in one plane, but the mesh has solids too (a 3-D "
            "model): they are measured in their plane, each in its own winding, and "
            "their orientation is judged only between neighbours (flipped_normal, "
            "opposite_normals)"
        ]
    if frame.kind != "planar" or frame.tilt is None or frame.tilt == 0.0:
        return []
    if frame.vertical:
        return [
            "the mesh plane contains the z direction: a 2-D solver reading x and y would "
            "see it edge-on; elements are measured in their plane and orientation is "
            "judged only between neighbours (flipped_normal, opposite_normals)"
        ]
    text = (
        f"the mesh plane is tilted {frame.tilt:.3g} deg from x-y: elements are measured in "
        "their plane, their orientation against +z as a 2-D solver reading x and y sees it"
    )
    if frame.tilt > 45.0:
        text += (
            f" (it would see the mesh squashed to {abs(float(frame.normal[2])):.2g} of its area)"
        )
    return [text]
