"""Certified bounds of det J over a whole tetra10, from its Bernstein coefficients.

Each entry of a tetra10's Jacobian is linear on the reference tetrahedron, so the rows
of J (x_xi, x_eta, x_zeta) are J(L) = sum_i L_i J_i in the barycentric coordinates L,
J_i the Jacobian at corner i, and

    det J(L) = sum_{i, j, k} L_i L_j L_k det[X_i, Y_j, Z_k]

(X_i, Y_j, Z_k the rows of J_i, J_j, J_k): a polynomial of total degree 3. In the
Bernstein basis of degree 3 on the tetrahedron, B_a = 3!/(a0! a1! a2! a3!) L^a over the
20 multi-indices |a| = 3, its coefficient c_a is the mean of det[X_i, Y_j, Z_k] over the
distinct orderings (i, j, k) of the multiset a (the blossom of det J). The basis
functions are non-negative and sum to 1, so det J is never below the smallest
coefficient; c_(3 e_i) is det J at corner i exactly. Where the smallest coefficient is
negative but no value found is, the tetrahedron is cut into 8 by its edge midpoints (the
4 corner tetrahedra and the middle octahedron split along one diagonal; J. Bey,
"Tetrahedral grid refinement", Computing 55 (1995) 355-378, from memory), and the
pieces' coefficients (the blossom at the pieces' corners: exact dyadic tables) bound det
J more tightly, over the undecided elements only, at most :data:`MAX_DEPTH` times and
with at most :data:`MAX_PIECES` open pieces per element. A. Johnen, J.-F. Remacle and
C. Geuzaine, "Geometrical validity of curvilinear finite elements", J. Comput. Phys. 233
(2013) 359-372 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import product
from math import factorial

import numpy as np

#: Most levels of cutting (pieces 1/2^MAX_DEPTH of the element's size).
MAX_DEPTH = 6

#: Most open pieces one element may keep at any level; an element with more is left
#: undecided (det J close to zero over a surface, say).
MAX_PIECES = 32

#: Undecided elements refined together: bounds the temporaries (at most
#: BATCH x 8 MAX_PIECES pieces of 20 coefficients, 21 MB) whatever the mesh.
BATCH = 512

#: The 20 multi-indices (a0, a1, a2, a3), |a| = 3; the corners (3 e_i) first.
INDICES: tuple[tuple[int, int, int, int], ...] = tuple(
    sorted(
        (a for a in product(range(4), repeat=4) if sum(a) == 3),
        key=lambda a: (-max(a), a[::-1]),
    )
)
_INDEX = {a: n for n, a in enumerate(INDICES)}
#: Coefficients that are det J at corners 0, 1, 2, 3.
CORNER_COEFFS = np.array([_INDEX[tuple(3 * (np.arange(4) == i))] for i in range(4)])


def _multiset(i: int, j: int, k: int) -> int:
    a = [0, 0, 0, 0]
    for v in (i, j, k):
        a[v] += 1
    return _INDEX[tuple(a)]


#: (64, 20): det[X_i, Y_j, Z_k] over (i, j, k) flattened as 16 i + 4 j + k -> the
#: coefficients (the mean over each multiset's orderings: weights 1, 1/3 or 1/6).
_BLOSSOM = np.zeros((64, 20))
for _i, _j, _k in product(range(4), repeat=3):
    _a = _multiset(_i, _j, _k)
    _count = factorial(3) // np.prod([factorial(x) for x in INDICES[_a]])
    _BLOSSOM[16 * _i + 4 * _j + _k, _a] = 1.0 / _count


def basis(lam: np.ndarray) -> np.ndarray:
    """Values (m, 20) of the degree-3 Bernstein basis at barycentric points (m, 4)."""
    lam = np.asarray(lam, dtype=float)
    out = np.empty((lam.shape[0], len(INDICES)))
    for n, a in enumerate(INDICES):
        weight = factorial(3) / np.prod([factorial(x) for x in a])
        out[:, n] = weight * np.prod(lam ** np.array(a), axis=1)
    return out


#: Columns worked out together in :func:`coefficients`, so that its (64, block)
#: temporaries stay in the CPU cache.
BLOCK = 4096


def coefficients(rows: np.ndarray) -> np.ndarray:
    """Bernstein coefficients (20, n) of det J from the corner Jacobians ``rows``
    (4, 3, 3, n): rows[i, a] is row a (d x / d xi_a) of J at corner i."""
    n = rows.shape[-1]
    out = np.empty((20, n))
    for start in range(0, n, BLOCK):
        out[:, start : start + BLOCK] = _block_coefficients(rows[..., start : start + BLOCK])
    return out


def _block_coefficients(rows: np.ndarray) -> np.ndarray:
    x, y, z = rows[:, 0], rows[:, 1], rows[:, 2]  # (4, 3, n) each
    y, z = y[:, None], z[None, :]  # Y_j x Z_k over (j, k): (4, 4, 3, n)
    yz = (
        y[:, :, 1] * z[:, :, 2] - y[:, :, 2] * z[:, :, 1],
        y[:, :, 2] * z[:, :, 0] - y[:, :, 0] * z[:, :, 2],
        y[:, :, 0] * z[:, :, 1] - y[:, :, 1] * z[:, :, 0],
    )
    d = x[:, None, None, 0] * yz[0] + x[:, None, None, 1] * yz[1] + x[:, None, None, 2] * yz[2]
    # the mean over each multi-index's orderings, summed by numpy (a matrix product
    # would go to a threaded BLAS, whose threads cost more CPU time than the product)
    grouped = np.add.reduceat(d.reshape(64, -1)[_BY_INDEX], _GROUP_STARTS, axis=0)
    grouped *= _GROUP_WEIGHTS
    return grouped


#: The 64 orderings (16 i + 4 j + k) sorted by multi-index, where each index's group
#: starts, and 1 / the group's size.
_BY_INDEX = np.argsort(_BLOSSOM.argmax(axis=1), kind="stable")
_GROUP_STARTS = np.flatnonzero(np.diff(_BLOSSOM.argmax(axis=1)[_BY_INDEX], prepend=-1))
_GROUP_WEIGHTS = _BLOSSOM.max(axis=1)[_BY_INDEX][_GROUP_STARTS][:, None]


# The 8 pieces, as barycentric points (in the parent) of their four corners. Corners
# 0-3 of the parent, then the edge midpoints m01, m02, m03, m12, m13, m23.
_POINTS = np.vstack(
    [np.eye(4)]
    + [
        0.5 * (np.eye(4)[i] + np.eye(4)[j])
        for i, j in ((0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3))
    ]
)
_C = {
    name: n for n, name in enumerate(("x0", "x1", "x2", "x3", "01", "02", "03", "12", "13", "23"))
}
#: Bey's red refinement: 4 corner pieces, the octahedron cut along m02 - m13.
_PIECES = (
    ("x0", "01", "02", "03"),
    ("01", "x1", "12", "13"),
    ("02", "12", "x2", "23"),
    ("03", "13", "23", "x3"),
    ("01", "02", "03", "13"),
    ("01", "02", "12", "13"),
    ("02", "03", "13", "23"),
    ("02", "12", "13", "23"),
)
#: (8, 4, 4): barycentric coordinates, in the parent, of each piece's corners.
PIECE_CORNERS = np.array([[_POINTS[_C[v]] for v in piece] for piece in _PIECES])


def _child_table(corners: np.ndarray) -> np.ndarray:
    """(20, 20): parent coefficients @ table = the piece's coefficients.

    The piece's coefficient b = the blossom of det J at (its corners p, q, r, the
    multiset b): sum over (i, j, k) of V_p[i] V_q[j] V_r[k] c_(e_i + e_j + e_k). Every
    product is of halves, so the float table is exact.
    """
    table = np.zeros((20, 20))
    for b, beta in enumerate(INDICES):
        args = [v for v in range(4) for _ in range(beta[v])]
        for i, j, k in product(range(4), repeat=3):
            weight = corners[args[0], i] * corners[args[1], j] * corners[args[2], k]
            table[_multiset(i, j, k), b] += weight
    return table


#: (20, 160): coefficients @ CHILDREN = the 8 pieces' coefficients side by side.
CHILDREN = np.hstack([_child_table(c) for c in PIECE_CORNERS])


@dataclass(frozen=True)
class Bounds:
    """What is certain about det J over each element (n,).

    ``lower``: det J >= lower everywhere; ``upper``: the smallest value of det J found
    (NaN where not looked for: elements certified at once), at the barycentric point
    ``where`` (n, 4); the minimum lies in [lower, upper]. ``undecided``: still
    lower < floor <= upper after the deepest cutting, so the sign is not known.
    """

    lower: np.ndarray
    upper: np.ndarray
    where: np.ndarray
    undecided: np.ndarray


def bounds(
    coeffs: np.ndarray, floor: np.ndarray, known: np.ndarray, known_points: np.ndarray
) -> Bounds:
    """Bounds of det J from its coefficients ``coeffs`` (20, n), one column per element.

    ``floor`` (n,): below it a value counts as negative (a small negative round-off
    tolerance); ``known`` (q, n): exact values of det J at the barycentric points
    ``known_points`` (q, 4) (Gauss points, nodes). Elements whose smallest coefficient
    is below ``floor`` while every value found is not are cut (see the module
    docstring).
    """
    n = coeffs.shape[1]
    lower = coeffs.min(axis=0)
    upper = np.full(n, np.nan)
    where = np.full((n, 4), np.nan)
    undecided = np.zeros(n, dtype=bool)
    rows = np.flatnonzero(lower < floor)
    if not rows.size:
        return Bounds(lower, upper, where, undecided)
    values = np.vstack([coeffs[CORNER_COEFFS][:, rows], known[:, rows]])
    points = np.vstack([np.eye(4), known_points])
    pick = values.argmin(axis=0)
    upper[rows] = values[pick, np.arange(len(rows))]
    where[rows] = points[pick]
    open_rows = rows[upper[rows] >= floor[rows]]
    for start in range(0, len(open_rows), BATCH):
        batch = open_rows[start : start + BATCH]
        _cut(batch, coeffs[:, batch].T, floor, lower, upper, where, undecided)
    return Bounds(lower, upper, where, undecided)


def _cut(
    rows: np.ndarray,
    coeffs: np.ndarray,
    floor: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    where: np.ndarray,
    undecided: np.ndarray,
) -> None:
    """Cut elements ``rows`` (coefficients (m, 20), one row per element) into pieces
    until the sign of det J is known (in place).

    A piece whose coefficients are all >= floor is settled; an element with a corner
    value below floor is decided (negative somewhere); an element with more than
    :data:`MAX_PIECES` open pieces, or still open after :data:`MAX_DEPTH` levels, is
    undecided. ``lower`` becomes the smallest coefficient over the element's pieces.
    """
    m = len(rows)
    owner = np.arange(m)
    corners = np.broadcast_to(np.eye(4), (m, 4, 4))  # piece corners, barycentric
    settled = np.full(m, np.inf)  # smallest coefficient of the settled pieces
    low, up, at = lower[rows].copy(), upper[rows].copy(), where[rows].copy()
    level_floor = floor[rows]
    for _ in range(MAX_DEPTH):
        pieces = (coeffs[:, None, :] @ CHILDREN).reshape(-1, 20)  # no threaded BLAS
        owner = np.repeat(owner, 8)
        corners = np.einsum("pcv,mvd->mpcd", PIECE_CORNERS, corners).reshape(-1, 4, 4)
        smallest = pieces.min(axis=1)
        bound = settled.copy()
        np.minimum.at(bound, owner, smallest)
        active = np.unique(owner)
        low[active] = np.maximum(low[active], bound[active])
        # corner coefficients are exact values: keep the lowest per owner
        corner_values = pieces[:, CORNER_COEFFS]
        pick = corner_values.argmin(axis=1)
        value = corner_values[np.arange(len(pieces)), pick]
        best = np.full(m, np.inf)
        np.minimum.at(best, owner, value)
        hit = np.flatnonzero((value == best[owner]) & (value < up[owner]))
        up[owner[hit]] = value[hit]
        at[owner[hit]] = corners[hit, pick[hit]]
        done = (smallest >= level_floor[owner]) | (up[owner] < level_floor[owner])
        np.minimum.at(settled, owner[done], smallest[done])
        keep = np.flatnonzero(~done)
        count = np.bincount(owner[keep], minlength=m)
        crowded = count > MAX_PIECES
        undecided[rows[crowded]] = True
        keep = keep[~crowded[owner[keep]]]
        owner, coeffs, corners = owner[keep], pieces[keep], corners[keep]
        if not len(owner):
            break
    undecided[rows[np.unique(owner)]] = True
    lower[rows], upper[rows], where[rows] = low, up, at
