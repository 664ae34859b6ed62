"""Shape metrics of a hexahedron from its eight corners (see hexahedron.py for the
definitions and sources).

Coordinates are handled as (3, m, n) arrays: the coordinate first, then the corner (or
edge, or face corner), then the element, so each vector operation is a few passes over
contiguous (m, n) blocks.
"""

from __future__ import annotations

import numpy as np

from .hex_reference import CORNER_TRIPLES, CORNERS, EDGE_FACES, EDGES, FACES

DEGREES = 180.0 / np.pi

#: Relative tolerance under which a length or volume counts as collapsed (as for the
#: surface elements). meshaudit's choice.
DEGENERATE_TOLERANCE = 1e-9

#: Below this |N| / (|d13| |d24|) a face's diagonals are taken as parallel and its
#: corners are judged against its largest corner normal instead (a bow-tie whose two
#: lobes balance has N = 0).
FLAT_DIAGONALS = 1e-6


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product of (3, ...) arrays."""
    return np.stack(
        [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
    )


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product of (3, ...) arrays."""
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def length(a: np.ndarray) -> np.ndarray:
    """Euclidean length of (3, ...) arrays."""
    return np.sqrt(dot(a, a))


def angle(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Angle in degrees between (3, ...) vectors, 0 where either is zero."""
    return np.arctan2(length(cross(a, b)), dot(a, b)) * DEGREES


#: Sign patterns of the trilinear map's terms: x = sum_k e_k m_k(xi, eta, zeta) with
#: monomials m = 1, xi, eta, zeta, xi eta, eta zeta, zeta xi, xi eta zeta, and
#: e_k = (1/8) sum_i m_k(corner i) x_i.
_XI, _ETA, _ZETA = CORNERS.T
AXIS_SIGNS = (
    np.array(
        [np.ones(8), _XI, _ETA, _ZETA, _XI * _ETA, _ETA * _ZETA, _ZETA * _XI, _XI * _ETA * _ZETA]
    )
    / 8.0
)


def principal_axes(c: np.ndarray) -> np.ndarray:
    """e0..e7 (3, 8, n) of corners ``c`` (3, 8, n)."""
    return np.matmul(AXIS_SIGNS, c)


def axis_metrics(e: np.ndarray) -> dict[str, np.ndarray]:
    """aspect_ratio, skew, taper from the principal axes (3, 8, n)."""
    e1, e2, e3 = e[:, 1], e[:, 2], e[:, 3]
    sizes = np.stack([length(e1), length(e2), length(e3)])
    with np.errstate(divide="ignore", invalid="ignore"):
        aspect = sizes.max(axis=0) / sizes.min(axis=0)
    aspect = np.where(np.isnan(aspect), np.inf, aspect)
    skew = np.maximum.reduce(
        [np.abs(90.0 - angle(a, b)) for a, b in ((e1, e2), (e2, e3), (e3, e1))]
    )
    # e_k = c1 e1 + c2 e2 + c3 e3: c_a = (e_b x e_c) . e_k / V, V = e1 . (e2 x e3)
    duals = (cross(e2, e3), cross(e3, e1), cross(e1, e2))
    volume = dot(e1, duals[0])
    # the xi-eta term along e1 and e2, eta-zeta along e2 and e3, zeta-xi along e3 and e1
    parts = [(4, 0), (4, 1), (5, 1), (5, 2), (6, 2), (6, 0)]
    largest = np.maximum.reduce([np.abs(dot(duals[a], e[:, k])) for k, a in parts])
    with np.errstate(divide="ignore", invalid="ignore"):
        taper = largest / np.abs(volume)
    taper = np.where(volume == 0.0, np.inf, taper)
    return {"aspect_ratio": aspect, "skew": skew, "taper": taper}


def corner_metrics(c: np.ndarray) -> dict[str, np.ndarray]:
    """Corner determinants (8, n), scaled Jacobian and condition number (worst corner)."""
    a, b, d = (c[:, CORNER_TRIPLES[:, k]] - c for k in range(3))
    bd, da, ab = cross(b, d), cross(d, a), cross(a, b)
    det = dot(a, bd)
    la, lb, ld = dot(a, a), dot(b, b), dot(d, d)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        scale = np.sqrt(la * lb * ld)
        scaled = np.where(scale > 0.0, det / scale, 0.0)
        frob = np.sqrt((la + lb + ld) * (dot(bd, bd) + dot(da, da) + dot(ab, ab)))
        condition = np.where(det > 0.0, frob / (3.0 * det), np.inf)
    return {
        "corner_det": det,
        "scaled_jacobian": scaled.min(axis=0),
        "condition": condition.max(axis=0),
    }


def face_metrics(c: np.ndarray, orientation: np.ndarray) -> dict[str, np.ndarray]:
    """Face warp, face angles, dihedral angles and the faces' crossing pattern;
    ``orientation`` (n,) +1 or -1: the element's winding (-1 for a mirrored element, whose
    faces turn inward), so that the dihedral angles are those of its shape."""
    f = c[:, FACES]  # (3, 6, 4, n)
    p0, p1, p2, p3 = f[:, :, 0], f[:, :, 1], f[:, :, 2], f[:, :, 3]
    d13, d24 = p2 - p0, p3 - p1
    normal = cross(d13, d24)  # twice the face's vector area
    # warp: the two diagonal splits
    n1, n2 = cross(p1 - p0, d13), cross(d13, p3 - p0)
    n3, n4 = cross(p2 - p1, d24), cross(d24, p0 - p1)
    folds, counted = [], []
    for u, v in ((n1, n2), (n3, n4)):
        folds.append(angle(u, v))
        counted.append((dot(u, normal) >= 0.0) & (dot(v, normal) >= 0.0))
    some = counted[0] | counted[1]
    face_warp = np.where(
        some,
        np.maximum(np.where(counted[0], folds[0], 0.0), np.where(counted[1], folds[1], 0.0)),
        np.maximum(folds[0], folds[1]),
    )
    # corners: normal (next - corner) x (previous - corner), judged against the face
    nxt, prv = np.roll(f, -1, axis=2) - f, np.roll(f, 1, axis=2) - f
    corner_normal = cross(nxt, prv)  # (3, 6, 4, n)
    sizes = length(corner_normal)
    pick = sizes.argmax(axis=1)  # largest corner normal of each face
    fallback = np.take_along_axis(corner_normal, pick[None, :, None], axis=2)[:, :, 0]
    with np.errstate(over="ignore", invalid="ignore"):
        flat = ~(length(normal) > FLAT_DIAGONALS * length(d13) * length(d24))
    reference = np.where(flat[None], fallback, normal)
    against = dot(corner_normal, reference[:, :, None]) < 0.0  # (6, 4, n)
    unsigned = np.arctan2(sizes, dot(nxt, prv)) * DEGREES
    angles = np.where(against, 360.0 - unsigned, unsigned)
    angles = np.where(sizes == 0.0, unsigned, angles)  # a zero-length edge reads 0
    count = against.sum(axis=1)  # (6, n)
    # dihedral angles between the faces meeting at each edge
    n_first, n_second = normal[:, EDGE_FACES[:, 0]], normal[:, EDGE_FACES[:, 1]]
    along = c[:, EDGES[:, 1]] - c[:, EDGES[:, 0]]
    turn = cross(n_first, n_second)
    sign = np.where(dot(turn, along) >= 0.0, orientation, -orientation)
    dihedral = 180.0 - np.arctan2(sign * length(turn), dot(n_first, n_second)) * DEGREES
    return {
        "warp": face_warp.max(axis=0),
        "min_angle": angles.min(axis=(0, 1)),
        "max_angle": angles.max(axis=(0, 1)),
        "min_dihedral": dihedral.min(axis=0),
        "max_dihedral": dihedral.max(axis=0),
        "face_crossing": (count == 2).any(axis=0),
        "face_reentrant": ((count == 1) | (count == 3)).any(axis=0),
    }


_PAIRS = np.array([(i, j) for i in range(8) for j in range(i + 1, 8)])


def edge_metrics(c: np.ndarray) -> dict[str, np.ndarray]:
    """edge_ratio, the longest edge, and coincident corners (any of the 28 pairs)."""
    edges = length(c[:, EDGES[:, 1]] - c[:, EDGES[:, 0]])
    longest, shortest = edges.max(axis=0), edges.min(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = longest / shortest
    ratio = np.where(shortest == 0.0, np.inf, ratio)
    gaps = length(c[:, _PAIRS[:, 1]] - c[:, _PAIRS[:, 0]]).min(axis=0)
    return {
        "edge_ratio": ratio,
        "longest": longest,
        "coincident": ~(gaps > DEGENERATE_TOLERANCE * longest),
    }


def shape(corners: np.ndarray) -> dict[str, np.ndarray]:
    """Every corner-based quantity of hexahedra with corners ``corners`` (n, 8, 3)."""
    c = np.ascontiguousarray(corners.transpose(2, 1, 0))
    out = axis_metrics(principal_axes(c))
    out.update(corner_metrics(c))
    orientation = np.where(out["corner_det"].sum(axis=0) < 0.0, -1.0, 1.0)
    out.update(face_metrics(c, orientation))
    out.update(edge_metrics(c))
    return out
