"""Certified bounds of det J over a hexahedron, from its tensor Bernstein coefficients.

det J of a hexahedron's map from [-1, 1]^3 is a polynomial of degree at most d in each
of xi, eta, zeta: d = 2 for the trilinear hexahedron (x_xi is of degree (0, 1, 1), and
so on, so each product in the determinant is of degree 2 in each variable), d = 5 for
hexahedron20 and hexahedron27 (x_xi of degree (1, 2, 2), found exactly with sympy in the
tests). It is written in the tensor Bernstein basis of that space,

    B_ijk(xi, eta, zeta) = b_i(u) b_j(v) b_k(w),  b_i(u) = C(d, i) u^i (1 - u)^(d - i),

u = (xi + 1) / 2 and so on. The basis functions are non-negative and sum to 1, so det J
lies between the smallest and the largest coefficient everywhere in the element, and the
eight corner coefficients are det J at the corners exactly. Where the smallest
coefficient is negative but no value found is, the element is cut into eight (de
Casteljau at the midpoints, along each axis): the pieces' coefficients bound det J more
tightly. A. Johnen, J.-F. Remacle and C. Geuzaine, "Geometrical validity of curvilinear
finite elements", J. Comput. Phys. 233 (2013) 359-372 (cited from memory).

Arrays of values or coefficients are kept as (d + 1, d + 1, d + 1, n), axes (zeta, eta,
xi) and one column per element last, so index i + (d + 1) j + (d + 1)^2 k of the
flattened form is xi-index i, eta-index j, zeta-index k, and every change of basis is a
product with a small constant (d + 1) x (d + 1) table along one axis. The 1-D tables are
worked out in exact rational arithmetic and rounded once. Going from values to
coefficients magnifies round-off: the rows of the degree-5 table have absolute sums up to
about 33.5, so up to about 33.5^3 = 4e4 units in the last place of the largest |det J|
in 3-D (27 for degree 2); the callers' negative floor allows for that.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import comb

import numpy as np

#: Most halvings of the reference cube (pieces 1/32 of its side).
MAX_DEPTH = 5

#: Most pieces one element may keep open at any depth. An element whose sign is still
#: open in more pieces (det J near zero over a surface, say) stops there, undecided.
MAX_PIECES = 64

#: Bound on the coefficients held at once while refining (about 32 MB of float64).
REFINE_BUDGET = 1 << 22


def _bernstein_1d(degree: int, u: Fraction) -> list[Fraction]:
    return [comb(degree, i) * u**i * (1 - u) ** (degree - i) for i in range(degree + 1)]


def _inverse(rows: list[list[Fraction]]) -> list[list[Fraction]]:
    """Exact inverse of a small invertible matrix (Gauss-Jordan over the rationals)."""
    n = len(rows)
    work = [list(row) + [Fraction(int(i == j)) for j in range(n)] for i, row in enumerate(rows)]
    for col in range(n):
        pivot = next(r for r in range(col, n) if work[r][col] != 0)
        work[col], work[pivot] = work[pivot], work[col]
        scale = work[col][col]
        work[col] = [v / scale for v in work[col]]
        for r in range(n):
            if r != col and work[r][col] != 0:
                factor = work[r][col]
                work[r] = [a - factor * b for a, b in zip(work[r], work[col])]
    return [row[n:] for row in work]


def _matmul(a: list[list[Fraction]], b: list[list[Fraction]]) -> list[list[Fraction]]:
    return [[sum(x * y for x, y in zip(row, col)) for col in zip(*b)] for row in a]


@dataclass(frozen=True)
class TensorSpace:
    """The tensor Bernstein space of degree ``degree`` in each variable on [-1, 1]^3.

    ``points`` (d + 1,): equispaced sample points on [-1, 1] (each axis);
    ``to_bernstein`` (d + 1, d + 1): coefficients = to_bernstein @ values along an axis;
    ``halves`` (2, d + 1, d + 1): the coefficients of the halves [-1, 0] and [0, 1] =
    halves[h] @ coefficients along an axis.
    """

    degree: int
    points: np.ndarray
    to_bernstein: np.ndarray
    halves: np.ndarray

    @property
    def size(self) -> int:
        """Number of basis functions, (d + 1)^3."""
        return (self.degree + 1) ** 3

    def basis_1d(self, t: np.ndarray) -> np.ndarray:
        """Values (m, d + 1) of the 1-D basis at points ``t`` (m,) of [-1, 1]."""
        u = (np.asarray(t, dtype=float) + 1.0) / 2.0
        d = self.degree
        return np.column_stack([comb(d, i) * u**i * (1.0 - u) ** (d - i) for i in range(d + 1)])

    def corner_index(self) -> np.ndarray:
        """Flat indices of the eight corner coefficients (det J at the corners)."""
        d = self.degree
        ends = (0, d)
        return np.array(
            [i + (d + 1) * j + (d + 1) ** 2 * k for k in ends for j in ends for i in ends]
        )


def tensor_space(degree: int) -> TensorSpace:
    """Tables of the degree-``degree`` space, built exactly and rounded once."""
    nodes = [Fraction(i, degree) for i in range(degree + 1)]  # u = (t + 1) / 2
    at_nodes = [_bernstein_1d(degree, u) for u in nodes]
    to_coeff = _inverse(at_nodes)
    halves = []
    for shift in (Fraction(0), Fraction(1, 2)):
        moved = [_bernstein_1d(degree, shift + u / 2) for u in nodes]
        halves.append(_matmul(to_coeff, moved))
    as_float = np.vectorize(float)
    return TensorSpace(
        degree=degree,
        points=np.array([2.0 * float(u) - 1.0 for u in nodes]),
        to_bernstein=as_float(np.array(to_coeff, dtype=object)).astype(float),
        halves=np.array([as_float(np.array(h, dtype=object)) for h in halves], dtype=float),
    )


def along(matrix: np.ndarray, array: np.ndarray, axis: int) -> np.ndarray:
    """Contract axis ``axis`` (0, 1 or 2) of ``array`` (a0, a1, a2, m) with ``matrix``
    (r, a_axis): the result has r in place of that axis."""
    s = array.shape
    before, after = int(np.prod(s[:axis], dtype=int)), int(np.prod(s[axis + 1 :], dtype=int))
    flat = array.reshape(before, s[axis], after)
    # numpy's own loops, not BLAS: a threaded BLAS costs more CPU time than these small
    # contractions (length 2 to 6) take
    out = np.einsum("ra,bam->brm", matrix, flat)
    return out.reshape((*s[:axis], matrix.shape[0], *s[axis + 1 :]))


def tensor(array: np.ndarray, mz: np.ndarray, my: np.ndarray, mx: np.ndarray) -> np.ndarray:
    """Apply ``mz`` along zeta (axis 0), ``my`` along eta, ``mx`` along xi."""
    return along(mz, along(my, along(mx, array, 2), 1), 0)


def coefficients(space: TensorSpace, values: np.ndarray) -> np.ndarray:
    """Bernstein coefficients (d+1, d+1, d+1, n) from values at the space's grid of points."""
    m = space.to_bernstein
    return tensor(values, m, m, m)


@dataclass(frozen=True)
class Bounds:
    """What is certain about det J over each element (n,): det J >= ``lower`` everywhere;
    ``found`` is the smallest value of det J found (at corners, given points, or corners
    of pieces), so the minimum lies in [lower, found]; ``undecided``: lower < floor <=
    found still after the deepest subdivision (the sign of the minimum is not known)."""

    lower: np.ndarray
    found: np.ndarray
    undecided: np.ndarray


def bounds(space: TensorSpace, coeffs: np.ndarray, floor: np.ndarray, known: np.ndarray) -> Bounds:
    """Bounds of det J from its coefficients ``coeffs`` (s, n) (flattened, one column
    per element), ``floor`` (n,): det J below it counts as negative; ``known`` (n,): the
    smallest exact value of det J already found (Gauss points, nodes).

    Elements whose smallest coefficient is below ``floor`` while every value found is
    not are refined (:func:`refine`); the others are decided by their coefficients alone.
    """
    lower = coeffs.min(axis=0)
    found = np.minimum(known, coeffs[space.corner_index()].min(axis=0))
    undecided = np.zeros(len(lower), dtype=bool)
    rows = np.flatnonzero((lower < floor) & (found >= floor))
    p = space.degree + 1
    batch = max(1, REFINE_BUDGET // (8 * MAX_PIECES * space.size))
    for start in range(0, len(rows), batch):
        pick = rows[start : start + batch]
        pieces = coeffs[:, pick].T.reshape(len(pick), p, p, p)
        low, up, open_ = refine(space, pieces, floor[pick], found[pick], lower[pick])
        lower[pick], found[pick], undecided[pick] = low, up, open_
    return Bounds(lower, found, undecided)


def children(space: TensorSpace, pieces: np.ndarray) -> np.ndarray:
    """Coefficients (8 m, p, p, p) of the eight halves of each piece (m, p, p, p); child
    4 a + 2 b + c is zeta-half a, eta-half b, xi-half c (0: lower, 1: upper)."""
    h = space.halves
    m, p = len(pieces), space.degree + 1
    out = np.einsum("aKk,bJj,cIi,mkji->mabcKJI", h, h, h, pieces, optimize=True)
    return out.reshape(8 * m, p, p, p)


def refine(
    space: TensorSpace,
    pieces: np.ndarray,
    floor: np.ndarray,
    found: np.ndarray,
    lower: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Subdivide elements (one piece each, (m, p, p, p) coefficients) until each is
    decided: every piece's coefficients >= floor (det J is not negative), or a corner of
    some piece below floor (det J is negative there, exactly). At most
    :data:`MAX_DEPTH` levels and :data:`MAX_PIECES` open pieces per element; what is
    still open then is undecided. Returns (lower, found, undecided), each (m,).
    """
    m = len(pieces)
    owner = np.arange(m)
    low, up = lower.copy(), found.copy()
    settled = np.full(m, np.inf)  # smallest coefficient of the pieces settled so far
    undecided = np.zeros(m, dtype=bool)
    corners = space.corner_index()
    for _ in range(MAX_DEPTH):
        pieces = children(space, pieces)
        owner = np.repeat(owner, 8)
        flat = pieces.reshape(len(pieces), -1)
        smallest = flat.min(axis=1)
        np.minimum.at(up, owner, flat[:, corners].min(axis=1))
        # every piece of an owner, open or settled, covers part of it: the lowest of
        # their coefficients bounds det J below over the whole element
        bound = settled.copy()
        np.minimum.at(bound, owner, smallest)
        active = np.unique(owner)
        low[active] = np.maximum(low[active], bound[active])
        done = (smallest >= floor[owner]) | (up[owner] < floor[owner])
        np.minimum.at(settled, owner[done], smallest[done])
        keep = ~done
        crowded = np.bincount(owner[keep], minlength=m) > MAX_PIECES
        undecided |= crowded
        keep &= ~crowded[owner]
        pieces, owner = pieces[keep], owner[keep]
        if not len(owner):
            break
    undecided[owner] = True
    return low, up, undecided
