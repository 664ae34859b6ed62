"""Shared pieces of the wedge and pyramid kernels: reference tables and corner, face and
edge measures over whole arrays of elements.

Every function takes node coordinates ``x`` (n, k, 3), float64, in meshio's node order,
and works over all n elements at once (numpy, no loop over elements).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

DEGREES = 180.0 / np.pi

#: det J (length^3 per unit reference volume) is "negative" below -NEGATIVE x (longest
#: edge)^3: round-off of an exactly flat corner or face is not read as a fold.
NEGATIVE = 1e-12

#: Degenerate: shortest edge, or |volume| / (longest edge)^2 (a thickness), below this
#: fraction of the longest edge.
DEGENERATE = 1e-9


@dataclass(frozen=True)
class SolidReference:
    """Reference data of one linear solid cell type (meshio's node order).

    ``nodes`` (k, 3): reference coordinates of the nodes; ``corners``: how many of them
    are corners (all, for these linear cells); ``edges``: pairs of corner indices;
    ``faces``: tuples of corner indices, each wound so that its right-hand normal points
    out of a positively oriented element; ``gauss_points`` (m, 3) and ``gauss_weights``
    (m,): the full-integration rule (weights sum to the reference volume);
    ``corner_triples`` (c, 4): a corner and the far ends of three edges leaving it, in
    the element's right-handed order (positive determinant for a positively oriented
    element); ``shape_functions(points)`` (m, k) and ``shape_derivatives(points)``
    (m, k, 3): values and derivatives d N_i / d(reference coordinate) at reference
    ``points`` (m, 3).
    """

    cell_type: str
    nodes: np.ndarray
    corners: int
    edges: tuple[tuple[int, int], ...]
    faces: tuple[tuple[int, ...], ...]
    gauss_points: np.ndarray
    gauss_weights: np.ndarray
    corner_triples: np.ndarray
    shape_functions: Callable[[np.ndarray], np.ndarray]
    shape_derivatives: Callable[[np.ndarray], np.ndarray]


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product over the last axis (length 3)."""
    return a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1] + a[..., 2] * b[..., 2]


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product over the last axis (length 3)."""
    a0, a1, a2 = a[..., 0], a[..., 1], a[..., 2]
    b0, b1, b2 = b[..., 0], b[..., 1], b[..., 2]
    return np.stack([a1 * b2 - a2 * b1, a2 * b0 - a0 * b2, a0 * b1 - a1 * b0], axis=-1)


def norm(a: np.ndarray) -> np.ndarray:
    """Euclidean length over the last axis."""
    return np.sqrt(dot(a, a))


def det3(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    """det[a, b, c] of column vectors (last axis): a . (b x c)."""
    return dot(a, cross(b, c))


def det_j_at(x: np.ndarray, reference: SolidReference, points: np.ndarray) -> np.ndarray:
    """det J (n, m) of the isoparametric map at reference ``points`` (m, 3): J = the
    derivatives of x with respect to the reference coordinates, from the reference's
    shape-function derivatives. For checks and explanations; the kernels use closed forms.
    """
    jac = np.einsum("mkj,nki->nmij", reference.shape_derivatives(points), x)
    return np.linalg.det(jac) + 0.0


def corner_edges(x: np.ndarray, triples: np.ndarray) -> tuple[np.ndarray, ...]:
    """The three edge vectors (n, c, 3) of each corner triple (corner, i, j, k)."""
    base = x[:, triples[:, 0]]
    return tuple(x[:, triples[:, m]] - base for m in (1, 2, 3))


@dataclass(frozen=True)
class IdealCorners:
    """Knupp's weight matrices W (c, 3, 3) of the ideal element's corner triples, their
    inverses and their column-normalised determinants (the scaled Jacobian of the ideal
    corner, which the element's corners are divided by so the ideal reads 1)."""

    inverse: np.ndarray
    det: np.ndarray
    normalised: np.ndarray


def ideal_corners(ideal: np.ndarray, triples: np.ndarray) -> IdealCorners:
    """Weight matrices of the corner triples of the ideal element ``ideal`` (k, 3)."""
    edges = corner_edges(ideal[None], triples)
    w = np.stack([e[0] for e in edges], axis=-1)  # (c, 3, 3), columns = edges
    det = np.linalg.det(w)
    if np.any(det <= 0.0):  # pragma: no cover - a table error
        raise AssertionError("an ideal corner triple is not right-handed")
    lengths = np.prod([norm(e[0]) for e in edges], axis=0)
    return IdealCorners(np.linalg.inv(w), det, det / lengths)


def corner_shape(
    x: np.ndarray, triples: np.ndarray, ideal: IdealCorners
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(scaled_jacobian, condition, corner determinants (n, c)) of the corner triples.

    Scaled Jacobian of a corner: det[a, b, c] / (|a| |b| |c|) of its edge vectors,
    divided by the same of the ideal element's corner (1 for the ideal); a corner with
    a zero-length edge counts 0; the element reports its worst (smallest) corner,
    clipped to [-1, 1] (a reversed element can read below -1 otherwise).
    Condition of a corner: Knupp's |T|_F |T^-1|_F / 3 with T = A W^-1, A the corner's
    edge matrix and W the ideal's (1 where the corner is the ideal's up to rotation and
    size, larger worse, infinite where det A <= 0); the element reports its worst
    (largest) corner. P. M. Knupp, "Algebraic mesh quality metrics", SIAM J. Sci.
    Comput. 23 (2001) 193-218 (from memory); the worst corner is common practice.
    """
    a, b, c = corner_edges(x, triples)
    det = det3(a, b, c)
    lengths = norm(a) * norm(b) * norm(c)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        scaled = np.where(lengths > 0.0, det / lengths, 0.0) / ideal.normalised
        # T = A W^-1: column j of T is sum_k W^-1[k, j] e_k
        inv = ideal.inverse
        cols = [
            inv[:, 0, j, None] * a + inv[:, 1, j, None] * b + inv[:, 2, j, None] * c
            for j in range(3)
        ]
        frob2 = dot(cols[0], cols[0]) + dot(cols[1], cols[1]) + dot(cols[2], cols[2])
        adj2 = sum(
            dot(v, v)
            for v in (cross(cols[0], cols[1]), cross(cols[1], cols[2]), cross(cols[2], cols[0]))
        )
        det_t = det / ideal.det
        condition = np.where(det_t > 0.0, np.sqrt(frob2 * adj2) / (3.0 * det_t), np.inf)
    condition = np.where(np.isnan(condition), np.inf, condition)
    return np.clip(scaled.min(axis=1), -1.0, 1.0), condition.max(axis=1), det


def edge_lengths(x: np.ndarray, edges: tuple[tuple[int, int], ...]) -> np.ndarray:
    """Lengths (n, e) of the element edges."""
    pairs = np.array(edges)
    return norm(x[:, pairs[:, 1]] - x[:, pairs[:, 0]])


def edge_ratio(lengths: np.ndarray) -> np.ndarray:
    """Longest / shortest edge, 1 or more; infinite where an edge has zero length."""
    longest, shortest = lengths.max(axis=1), lengths.min(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(shortest > 0.0, longest / shortest, np.inf)


def face_angles(x: np.ndarray, faces: tuple[tuple[int, ...], ...]) -> tuple[np.ndarray, np.ndarray]:
    """(min, max) over all faces of the angles (degrees, 0 to 180) between the two face
    edges at each face corner: atan2(|a x b|, a . b), accurate near 0 and 180; a
    zero-length edge gives 0."""
    centre, after, before = [], [], []
    for face in faces:
        m = len(face)
        for j in range(m):
            centre.append(face[j])
            after.append(face[(j + 1) % m])
            before.append(face[j - 1])
    at = x[:, centre]
    a, b = x[:, after] - at, x[:, before] - at
    angles = np.arctan2(norm(cross(a, b)), dot(a, b)) * DEGREES
    return angles.min(axis=1), angles.max(axis=1)


def quad_face_warp(x: np.ndarray, faces: tuple[tuple[int, ...], ...]) -> np.ndarray:
    """Worst fold angle (degrees, 0 to 180) of the quadrilateral ``faces``, each defined
    as the quad warp: split the face along each diagonal into two triangles wound as the
    face (split 1-3: nodes 1 2 3 and 1 3 4; split 2-4: nodes 2 3 4 and 2 4 1); a split's
    fold angle is the angle between its two triangles' normals. Only splits whose two
    triangles both face along the face's area vector (half the cross product of its
    diagonals) count, and the face reads the larger of those (of both where neither
    counts, a bow-tie face). 0 for a flat face, convex or re-entrant. Common practice,
    no single source."""
    quads = np.array(faces)
    p1, p2, p3, p4 = (x[:, quads[:, j]] for j in range(4))  # (n, q, 3)
    area = cross(p3 - p1, p4 - p2)
    angles, counts = [], []
    for (a1, a2, a3), (b1, b2, b3) in (((p1, p2, p3), (p1, p3, p4)), ((p2, p3, p4), (p2, p4, p1))):
        na = cross(a2 - a1, a3 - a1)
        nb = cross(b2 - b1, b3 - b1)
        angles.append(np.arctan2(norm(cross(na, nb)), dot(na, nb)) * DEGREES)
        counts.append((dot(na, area) >= 0.0) & (dot(nb, area) >= 0.0))
    first = np.where(counts[0], angles[0], -1.0)
    second = np.where(counts[1], angles[1], -1.0)
    warp = np.maximum(first, second)
    warp = np.where(warp < 0.0, np.maximum(angles[0], angles[1]), warp)
    return warp.max(axis=1)


def round_off(longest: np.ndarray) -> np.ndarray:
    """The det J below which a value is negative: -NEGATIVE x (longest edge)^3."""
    return -NEGATIVE * longest**3


def degenerate(lengths: np.ndarray, volume: np.ndarray) -> np.ndarray:
    """Zero-length edge or zero volume, relative to the longest edge L: shortest edge
    <= DEGENERATE L, or |volume| <= DEGENERATE L^3 (true where every node coincides)."""
    longest = lengths.max(axis=1)
    return (lengths.min(axis=1) <= DEGENERATE * longest) | (
        np.abs(volume) <= DEGENERATE * longest**3
    )


def finish(metrics: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Metric arrays as float64 with no -0.0 (adding +0.0 turns -0.0 into 0.0)."""
    return {name: np.asarray(value, dtype=np.float64) + 0.0 for name, value in metrics.items()}
