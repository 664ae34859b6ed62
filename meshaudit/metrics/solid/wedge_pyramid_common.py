"""Shared pieces of the wedge and pyramid kernels: reference tables and corner, face and
edge measures over whole arrays of elements.

The kernels first move each element to its node 0 and scale it by a power of two
(:func:`normalised`, exact), then lay the coordinates out component first, (3, k, n), so
that every operation runs over contiguous runs of elements; the helpers below take that
layout and work over all n elements at once (numpy; the only Python loops run over the
few corners or faces of the cell type, on arrays small enough to stay in the CPU cache).
Metrics in length^3 are scaled back at the end (:func:`assemble`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

DEGREES = 180.0 / np.pi

#: det J (length^3 per unit reference volume) is "negative" below -NEGATIVE x (longest
#: edge)^3: round-off of an exactly flat corner or face is not read as a fold.
NEGATIVE = 1e-12

#: The metrics in length^3.
LENGTH3 = ("volume", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound")

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


def components(coords: np.ndarray) -> np.ndarray:
    """Node coordinates (n, k, 3) laid out component first, (3, k, n), contiguous: the
    helpers below take vectors as arrays whose first axis holds x, y, z, so that every
    operation runs over contiguous runs of elements."""
    return np.ascontiguousarray(np.asarray(coords, dtype=np.float64).transpose(2, 1, 0))


def normalised(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Elements ``x`` (n, k, 3) moved to their node 0 and scaled by a power of two to an
    extent in [0.5, 1), component first (3, k, n), with the exponents e (n,): node j is
    (x_j - x_0) 2^-e. Exact scaling, so every product of lengths stays far from overflow
    and underflow whatever the model's units; lengths^3 are scaled back by 2^(3 e)."""
    rel = x - x[:, :1]
    extent = np.abs(rel).max(axis=(1, 2))
    exponent = np.frexp(extent)[1]  # 0 for a zero extent
    return components(np.ldexp(rel, -exponent[:, None, None])), exponent


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product of vectors stored component first (3, ...)."""
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product of vectors stored component first (3, ...)."""
    return np.stack(
        [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
    )


def norm(a: np.ndarray) -> np.ndarray:
    """Euclidean length of vectors stored component first (3, ...)."""
    return np.sqrt(dot(a, a))


def det3(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    """det[a, b, c] of column vectors stored component first: a . (b x c)."""
    return dot(a, cross(b, c))


def det_j_at(x: np.ndarray, reference: SolidReference, points: np.ndarray) -> np.ndarray:
    """det J (n, m) of the isoparametric map of elements ``x`` (n, k, 3) at reference
    ``points`` (m, 3): J = the derivatives of x with respect to the reference coordinates,
    from the reference's shape-function derivatives. For checks and explanations; the
    kernels use closed forms.
    """
    jac = np.einsum("mkj,nki->nmij", reference.shape_derivatives(points), x)
    return np.linalg.det(jac) + 0.0


def corner_edges(xc: np.ndarray, triples: np.ndarray) -> tuple[np.ndarray, ...]:
    """The three edge vectors (3, c, n) of each corner triple (corner, i, j, k) of
    elements ``xc`` (3, k, n)."""
    base = xc[:, triples[:, 0]]
    return tuple(xc[:, triples[:, m]] - base for m in (1, 2, 3))


@dataclass(frozen=True)
class IdealCorners:
    """Knupp's weight matrices W (c, 3, 3) of the ideal element's corner triples (as
    their inverses), their determinants and their column-normalised determinants (the
    ideal corner's det / product of edge lengths, which the element's corners are divided
    by so that the ideal reads 1); arrays shaped to broadcast over (c, n)."""

    inverse: np.ndarray  # (3, 3, c, 1): [k, j] of W^-1 per corner
    det: np.ndarray  # (c, 1)
    normalised: np.ndarray  # (c, 1)


def ideal_corners(ideal: np.ndarray, triples: np.ndarray) -> IdealCorners:
    """Weight matrices of the corner triples of the ideal element ``ideal`` (k, 3)."""
    edges = corner_edges(components(ideal[None]), triples)  # each (3, c, 1)
    w = np.stack([e[:, :, 0].T for e in edges], axis=-1)  # (c, 3, 3), columns = edges
    det = np.linalg.det(w)
    if np.any(det <= 0.0):  # pragma: no cover - a table error
        raise AssertionError("an ideal corner triple is not right-handed")
    lengths = np.prod([norm(e)[:, 0] for e in edges], axis=0)
    inverse = np.linalg.inv(w).transpose(1, 2, 0)[..., None]
    return IdealCorners(inverse, det[:, None], (det / lengths)[:, None])


def corner_shape(
    xc: np.ndarray, triples: np.ndarray, ideal: IdealCorners
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(scaled_jacobian, condition, corner determinants (c, n)) of the corner triples of
    elements ``xc`` (3, k, n).

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
    n = xc.shape[2]
    scaled, condition = np.full(n, np.inf), np.full(n, -np.inf)
    dets = np.empty((len(triples), n))
    inv = ideal.inverse
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for m, (corner, i, j, k) in enumerate(triples):
            a, b, c = xc[:, i] - xc[:, corner], xc[:, j] - xc[:, corner], xc[:, k] - xc[:, corner]
            det = dets[m] = det3(a, b, c)
            lengths = norm(a) * norm(b) * norm(c)
            np.minimum(
                scaled,
                np.where(lengths > 0.0, det / lengths, 0.0) / ideal.normalised[m],
                out=scaled,
            )
            # T = A W^-1: column q of T is sum_p W^-1[p, q] e_p
            cols = [inv[0, q, m] * a + inv[1, q, m] * b + inv[2, q, m] * c for q in range(3)]
            frob2 = dot(cols[0], cols[0]) + dot(cols[1], cols[1]) + dot(cols[2], cols[2])
            adj2 = (
                dot(v := cross(cols[0], cols[1]), v)
                + dot(v := cross(cols[1], cols[2]), v)
                + dot(v := cross(cols[2], cols[0]), v)
            )
            det_t = det / ideal.det[m]
            kappa = np.where(det_t > 0.0, np.sqrt(frob2) * np.sqrt(adj2) / (3.0 * det_t), np.inf)
            np.maximum(condition, np.where(np.isnan(kappa), np.inf, kappa), out=condition)
    return np.clip(scaled, -1.0, 1.0), condition, dets


def edge_lengths(xc: np.ndarray, edges: tuple[tuple[int, int], ...]) -> np.ndarray:
    """Lengths (e, n) of the element edges of elements ``xc`` (3, k, n)."""
    pairs = np.array(edges)
    return norm(xc[:, pairs[:, 1]] - xc[:, pairs[:, 0]])


def edge_ratio(lengths: np.ndarray) -> np.ndarray:
    """Longest / shortest edge (lengths (e, n)), 1 or more; infinite where an edge has
    zero length."""
    longest, shortest = lengths.max(axis=0), lengths.min(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(shortest > 0.0, longest / shortest, np.inf)


def _face_corners(faces: tuple[tuple[int, ...], ...]) -> tuple[np.ndarray, ...]:
    """(centre, after, before) node indices of every face corner."""
    centre, after, before = [], [], []
    for face in faces:
        m = len(face)
        for j in range(m):
            centre.append(face[j])
            after.append(face[(j + 1) % m])
            before.append(face[j - 1])
    return np.array(centre), np.array(after), np.array(before)


def face_angles(
    xc: np.ndarray, faces: tuple[tuple[int, ...], ...]
) -> tuple[np.ndarray, np.ndarray]:
    """(min, max) over all faces of elements ``xc`` (3, k, n) of the angles (degrees, 0 to
    180) between the two face edges at each face corner.

    The extreme corners are picked by the cosine a . b / (|a| |b|), which decreases as the
    angle grows (a zero-length edge: cosine 1, angle 0); their angles are then
    atan2(|a x b|, a . b), accurate near 0 and 180. One face corner at a time, so that
    the temporaries of a chunk of elements stay small.
    """
    n = xc.shape[2]
    low_cos, high_cos = np.full(n, np.inf), np.full(n, -np.inf)
    low = [np.zeros((3, n)), np.zeros((3, n))]  # the corner of the largest angle: a, b
    high = [np.zeros((3, n)), np.zeros((3, n))]  # of the smallest angle
    for centre, after, before in zip(*_face_corners(faces)):
        a, b = xc[:, after] - xc[:, centre], xc[:, before] - xc[:, centre]
        lengths = norm(a) * norm(b)
        with np.errstate(divide="ignore", invalid="ignore"):
            cosine = np.where(lengths > 0.0, dot(a, b) / lengths, 1.0)
        for best, vectors, better in ((low_cos, low, np.less), (high_cos, high, np.greater)):
            take = better(cosine, best)
            best[take] = cosine[take]
            np.copyto(vectors[0], a, where=take)
            np.copyto(vectors[1], b, where=take)
    smallest = np.arctan2(norm(cross(*high)), dot(*high)) * DEGREES
    largest = np.arctan2(norm(cross(*low)), dot(*low)) * DEGREES
    return smallest, largest


def quad_face_warp(xc: np.ndarray, faces: tuple[tuple[int, ...], ...]) -> np.ndarray:
    """Worst fold angle (degrees, 0 to 180) of the quadrilateral ``faces`` of elements
    ``xc`` (3, k, n), each defined as the quad warp: split the face along each diagonal
    into two triangles wound as the face (split 1-3: nodes 1 2 3 and 1 3 4; split 2-4:
    nodes 2 3 4 and 2 4 1); a split's fold angle is the angle between its two triangles'
    normals. Only splits whose two triangles both face along the face's area vector (half
    the cross product of its diagonals) count, and the face reads the larger of those (of
    both where neither counts, a bow-tie face). 0 for a flat face, convex or re-entrant.
    Common practice, no single source."""
    worst = np.zeros(xc.shape[2])
    for face in faces:
        p1, p2, p3, p4 = (xc[:, j] for j in face)  # (3, n)
        d13, d24 = p3 - p1, p4 - p2
        area = cross(d13, d24)
        angles, counts = [], []
        # triangle normals from a side and a diagonal: 1 2 3: (p2 - p1) x d13; 1 3 4:
        # d13 x (p4 - p1); 2 3 4: (p3 - p2) x d24; 2 4 1: d24 x (p1 - p2)
        for na, nb in (
            (cross(p2 - p1, d13), cross(d13, p4 - p1)),
            (cross(p3 - p2, d24), cross(d24, p1 - p2)),
        ):
            angles.append(np.arctan2(norm(cross(na, nb)), dot(na, nb)))
            counts.append((dot(na, area) >= 0.0) & (dot(nb, area) >= 0.0))
        first = np.where(counts[0], angles[0], -1.0)
        second = np.where(counts[1], angles[1], -1.0)
        warp = np.maximum(first, second)
        warp = np.where(warp < 0.0, np.maximum(angles[0], angles[1]), warp)
        np.maximum(worst, warp, out=worst)
    return worst * DEGREES


def checked(coords: np.ndarray, cell_type: str, reference: SolidReference) -> np.ndarray:
    """``coords`` as float64 (n, k, 3) for ``reference``'s cell type, or ValueError."""
    if cell_type != reference.cell_type:
        raise ValueError(
            f"the {reference.cell_type} kernel measures {reference.cell_type!r} cells, "
            f"not {cell_type!r}"
        )
    x = np.asarray(coords, dtype=np.float64)
    shape = (len(reference.nodes), 3)
    if x.ndim != 3 or x.shape[1:] != shape:
        raise ValueError(
            f"{reference.cell_type} coordinates must be (n, {shape[0]}, 3), not {x.shape}"
        )
    return x


def assemble(
    xc: np.ndarray,
    reference: SolidReference,
    gauss: np.ndarray,
    corners: np.ndarray,
    lower: np.ndarray,
    shape: tuple[np.ndarray, np.ndarray],
    exponent: np.ndarray,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """The metrics and flags of a solid family from its own pieces: det J at the Gauss
    points ``gauss`` (m, n) and at the corners ``corners`` (c, n), the exact minimum
    ``lower`` (n,) of det J over the element and (scaled Jacobian, condition); the rest
    (volume, edges, warp of the quadrilateral faces, face angles, flags) from the nodes
    ``xc`` (3, k, n) and the reference table. ``xc`` are the elements as
    :func:`normalised` gives them, with its ``exponent``: lengths^3 are scaled back by
    2^(3 exponent) (infinite beyond the float range). Call under
    ``np.errstate(all="ignore")``.
    """
    volume = reference.gauss_weights @ gauss
    det_min, det_max = gauss.min(axis=0), gauss.max(axis=0)
    lengths = edge_lengths(xc, reference.edges)
    negative = round_off(lengths.max(axis=0))
    min_angle, max_angle = face_angles(xc, reference.faces)
    quads = tuple(face for face in reference.faces if len(face) == 4)
    metrics = {
        "volume": volume,
        "area": np.full(len(volume), np.nan),
        "det_j_min": det_min,
        "det_j_max": det_max,
        "det_j_corner_min": corners.min(axis=0),
        "det_j_lower_bound": np.where((lower < 0.0) & (lower >= negative), 0.0, lower),
        "jacobian_ratio": np.where(det_min > 0.0, det_max / det_min, np.inf),
        "scaled_jacobian": shape[0],
        "condition": shape[1],
        "edge_ratio": edge_ratio(lengths),
        "warp": quad_face_warp(xc, quads),
        "min_angle": min_angle,
        "max_angle": max_angle,
    }
    flags = {
        "inverted": lower < negative,
        "reversed": np.all(corners < negative, axis=0),
        "degenerate": degenerate(lengths, volume),
    }
    for name in LENGTH3:
        metrics[name] = np.ldexp(metrics[name], 3 * exponent)
    return finish(metrics), flags


def round_off(longest: np.ndarray) -> np.ndarray:
    """The det J below which a value is negative: -NEGATIVE x (longest edge)^3."""
    return -NEGATIVE * longest**3


def degenerate(lengths: np.ndarray, volume: np.ndarray) -> np.ndarray:
    """Zero-length edge or zero volume, relative to the longest edge L (lengths (e, n)):
    shortest edge <= DEGENERATE L, or |volume| <= DEGENERATE L^3 (true where every node
    coincides)."""
    longest = lengths.max(axis=0)
    return (lengths.min(axis=0) <= DEGENERATE * longest) | (
        np.abs(volume) <= DEGENERATE * longest**3
    )


def finish(metrics: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Metric arrays as float64 with no -0.0 (adding +0.0 turns -0.0 into 0.0)."""
    return {name: np.asarray(value, dtype=np.float64) + 0.0 for name, value in metrics.items()}
