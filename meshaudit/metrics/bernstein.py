"""Bounds of det J over a whole quadratic element, from its Bernstein coefficients.

det J of an isoparametric element is a polynomial on the reference element:

- triangle6: each entry of J is linear, so det J is of total degree 2;
- quad9: x_xi is of degree (1, 2) in (xi, eta) and x_eta of degree (2, 1), so det J is
  of degree 3 in xi and 3 in eta (total degree 5: the xi^3 eta^3 terms cancel);
- quad8: x_xi lies in span{1, xi, eta, xi eta, eta^2} and x_eta in
  span{1, xi, eta, xi^2, xi eta}, so det J is again of degree 3 in xi and 3 in eta, and
  of total degree 4: its xi^3 eta and xi eta^3 terms cancel, and xi^3 eta^2, xi^2 eta^3,
  xi^3 eta^3 cannot occur; xi^3, eta^3 and xi^2 eta^2 remain.

Each is written in the Bernstein basis of its space (degree 2 on the reference triangle;
the tensor basis of degree (3, 3) on [-1, 1]^2, which holds quad8's det J as well). The
basis functions are non-negative and sum to 1, so det J lies between the smallest and the
largest coefficient everywhere on the element, and the coefficients at the corners are
det J at the corners exactly. Where the smallest coefficient is negative but no value
found is, the element is cut into four (de Casteljau at the midpoints): the pieces'
coefficients bound det J more tightly, and their corner coefficients are more exact
values. A. Johnen, J.-F. Remacle and C. Geuzaine, "Geometrical validity of curvilinear
finite elements", J. Comput. Phys. 233 (2013) 359-372 (cited from memory).

The tables are built once, at import: values at the sample points -> coefficients,
coefficients -> the four pieces' coefficients. Their exact entries are rationals of known
denominators (sixths and eighths on the line, halves and quarters on the triangle), so the
float inverse is rounded to them: the tables hold the exact rationals, correctly rounded.
Everything is then a product with a constant table, over all elements at once.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb, factorial

import numpy as np

#: Most halvings of the reference element (pieces 1/64 of its side, 1/4096 of its area).
MAX_DEPTH = 6

#: Most pieces one element may keep open at any depth. An element whose sign is still
#: open in more pieces (det J near zero along a curve, say) stops there, undecided.
MAX_PIECES = 16

#: Undecided elements refined together: bounds the temporaries (at most
#: BATCH x 4 MAX_PIECES pieces of 16 coefficients, 8 MB) whatever the mesh.
BATCH = 1024


def _line_basis(t):
    """Bernstein polynomials of degree 3 on [0, 1] at t: C(3, i) t^i (1 - t)^(3 - i)."""
    return [comb(3, i) * t**i * (1 - t) ** (3 - i) for i in range(4)]


#: Multi-indices (a, b, c) of the degree-2 Bernstein basis on the triangle, in the
#: triangle6 node order: its corner coefficients are the first three.
_TRIANGLE_INDICES = ((2, 0, 0), (0, 2, 0), (0, 0, 2), (1, 1, 0), (0, 1, 1), (1, 0, 1))


def _triangle_basis(xi, eta):
    """2!/(a! b! c!) L1^a L2^b L3^c with L1 = 1 - xi - eta, L2 = xi, L3 = eta."""
    bary = (1 - xi - eta, xi, eta)
    out = []
    for index in _TRIANGLE_INDICES:
        weight = factorial(2) // (factorial(index[0]) * factorial(index[1]) * factorial(index[2]))
        term = weight
        for lam, power in zip(bary, index):
            term = term * lam**power
        out.append(term)
    return out


def _square_basis(xi, eta):
    """Tensor Bernstein basis of degree (3, 3) on [-1, 1]^2, index i + 4 j (i along xi)."""
    bx, by = _line_basis((xi + 1) / 2), _line_basis((eta + 1) / 2)
    return [bx[i] * by[j] for j in range(4) for i in range(4)]


@dataclass(frozen=True)
class BernsteinSpace:
    """Tables of one polynomial space on one reference element (float, built exactly).

    ``points`` (s, 2): where det J is sampled; ``to_bernstein`` (s, s): coefficients =
    values @ to_bernstein; ``children`` (s, 4 s): coefficients @ children = the four
    pieces' coefficients side by side; piece k covers origin[k] + axes[k] @ (its own
    reference point); ``corners``: which coefficients are the corner values, at
    ``corner_points``.
    """

    points: np.ndarray
    to_bernstein: np.ndarray
    children: np.ndarray
    origin: np.ndarray  # (4, 2)
    axes: np.ndarray  # (4, 2, 2)
    corners: np.ndarray
    corner_points: np.ndarray

    @property
    def size(self) -> int:
        return len(self.points)


def _exact(table: np.ndarray, denominator: int) -> np.ndarray:
    """``table``, whose exact entries are multiples of 1/denominator, rounded to them.

    The entries come from a float inverse, off by round-off; k / denominator is the
    exact rational correctly rounded, so the tables are as if built with fractions.
    """
    exact = np.round(table * denominator) / denominator + 0.0  # no -0.0
    if not np.allclose(exact, table, rtol=0.0, atol=1e-9):  # pragma: no cover
        raise AssertionError(f"a Bernstein table is not a multiple of 1/{denominator}")
    return exact


def _tables(basis, points, origin, axes, denominators: tuple[int, int]):
    """(to_bernstein, children) of a space from its basis and unisolvent ``points``.

    coefficients = values @ to_bernstein; piece k's coefficients = the parent's
    @ children[k], piece k covering origin[k] + axes[k] @ q. ``denominators``: of the
    exact entries of the two tables.
    """
    at_points = np.array(basis(points[:, 0], points[:, 1])).T  # (point, function)
    to_coeff = np.linalg.inv(at_points)
    children = []
    for o, a in zip(origin, axes):
        moved = o + points @ a.T
        children.append(to_coeff @ np.array(basis(moved[:, 0], moved[:, 1])).T)
    return (
        _exact(to_coeff.T, denominators[0]),
        _exact(np.array([c.T for c in children]), denominators[1]),
    )


def _square() -> BernsteinSpace:
    """The tensor space, from the tables of the degree-3 line."""
    line_points = np.array([-1.0, -1.0 / 3.0, 1.0 / 3.0, 1.0])
    as_2d = np.column_stack([line_points, np.zeros(4)])
    half = np.array([[0.5, 0.0], [0.0, 1.0]])
    line, halves = _tables(
        lambda x, _: _line_basis((x + 1) / 2),
        as_2d,
        np.array([[-0.5, 0.0], [0.5, 0.0]]),
        np.array([half, half]),
        (6, 8),  # values at thirds -> coefficients: sixths; de Casteljau halves: eighths
    )
    # index i + 4 j (i along xi): kron(eta table, xi table) acts on that order
    children = np.hstack([np.kron(halves[j], halves[i]) for j in (0, 1) for i in (0, 1)])
    return BernsteinSpace(
        points=np.column_stack([np.tile(line_points, 4), np.repeat(line_points, 4)]),
        to_bernstein=np.kron(line, line),  # products of sixths: exact in float
        children=children,
        origin=np.array([[sx, sy] for sy in (-0.5, 0.5) for sx in (-0.5, 0.5)]),
        axes=np.array([0.5 * np.eye(2)] * 4),
        corners=np.array([0, 3, 15, 12]),
        corner_points=np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]]),
    )


def _triangle() -> BernsteinSpace:
    """Degree 2 on the reference triangle; sampled at the triangle6 nodes."""
    points = np.array([[b / 2, c / 2] for _, b, c in _TRIANGLE_INDICES])
    # the three corner pieces, then the middle one (its corners at the edge midpoints)
    vertices = np.array(
        [
            [[0.0, 0.0], [0.5, 0.0], [0.0, 0.5]],
            [[0.5, 0.0], [1.0, 0.0], [0.5, 0.5]],
            [[0.0, 0.5], [0.5, 0.5], [0.0, 1.0]],
            [[0.5, 0.5], [0.0, 0.5], [0.5, 0.0]],
        ]
    )
    origin = vertices[:, 0]
    axes = np.stack([vertices[:, 1] - origin, vertices[:, 2] - origin], axis=2)
    # values at the nodes -> coefficients: halves; pieces: quarters
    to_bernstein, children = _tables(_triangle_basis, points, origin, axes, (2, 4))
    return BernsteinSpace(
        points=points,
        to_bernstein=to_bernstein,
        children=np.hstack(list(children)),
        origin=origin,
        axes=axes,
        corners=np.array([0, 1, 2]),
        corner_points=points[:3],
    )


SQUARE = _square()
TRIANGLE = _triangle()


def basis_at(space: BernsteinSpace, points: np.ndarray) -> np.ndarray:
    """Values (m, s) of the space's basis functions at reference ``points`` (m, 2)."""
    basis = _square_basis if space is SQUARE else _triangle_basis
    return np.array(basis(points[:, 0], points[:, 1])).T


@dataclass(frozen=True)
class Bounds:
    """What is certain about det J over each element (n,).

    ``lower``: det J >= lower everywhere on the element; ``upper``: the smallest det J
    value found (at the reference point ``where`` (n, 2), NaN unless :func:`bounds` was
    asked to locate it), so the minimum of det J lies in [lower, upper] (NaN where not
    looked for, see :func:`bounds`); ``undecided``:
    lower < floor <= upper still after the deepest subdivision, so the sign of the
    minimum is not known.
    """

    lower: np.ndarray
    upper: np.ndarray
    where: np.ndarray
    undecided: np.ndarray


def bounds(
    space: BernsteinSpace,
    coeffs: np.ndarray,
    floor: np.ndarray,
    known: np.ndarray | None = None,
    known_points: np.ndarray | None = None,
    locate: bool = False,
) -> Bounds:
    """Bounds of det J from its Bernstein coefficients ``coeffs`` (s, n): one row per
    coefficient, one column per element (``space.to_bernstein.T`` @ values at
    ``space.points``; reductions over this layout are fast).

    ``floor`` (n,): det J below it counts as negative (a small negative round-off
    tolerance); ``known`` (q, n): more exact values, at ``known_points`` (q, 2) (the Gauss
    points and nodes), that need no subdivision to be found. Elements whose smallest
    coefficient is below ``floor`` while every value found is not are subdivided, at
    most :data:`MAX_DEPTH` times and :data:`MAX_PIECES` open pieces each. ``upper`` and
    ``where`` are found for every element with ``locate``, otherwise only for those
    whose lower bound is below ``floor`` (NaN for the others, certainly valid); with
    ``locate`` the smallest value is also hunted down by branch and bound (to a piece
    1/2^MAX_DEPTH of the element's side), for reports on single elements.
    """
    lower = coeffs.min(axis=0)
    n = coeffs.shape[1]
    upper, where = np.full(n, np.nan), np.full((n, 2), np.nan)
    undecided = np.zeros(n, dtype=bool)
    rows = np.arange(n) if locate else np.flatnonzero(lower < floor)
    if not rows.size:
        return Bounds(lower, upper, where, undecided)
    at_corners = coeffs[space.corners][:, rows]
    pick = at_corners.argmin(axis=0)
    up = at_corners[pick, np.arange(len(rows))]
    at = space.corner_points[pick]
    if known is not None and known_points is not None and len(known):
        found = known[:, rows]
        k = found.argmin(axis=0)
        value = found[k, np.arange(len(rows))]
        better = value < up
        up = np.where(better, value, up)
        at[better] = known_points[k[better]]
    upper[rows] = up
    if locate:
        where[rows] = at
    open_rows = rows[(lower[rows] < floor[rows]) & (up >= floor[rows])]
    for start in range(0, len(open_rows), BATCH):
        batch = open_rows[start : start + BATCH]
        _subdivide(
            space, batch, coeffs[:, batch].T, floor, lower, upper, where, undecided, False, locate
        )
    if locate:  # hunt the smallest value of every element, the bounds as they stand
        scratch = lower.copy()
        for start in range(0, len(rows), BATCH):
            batch = rows[start : start + BATCH]
            _subdivide(
                space, batch, coeffs[:, batch].T, floor, scratch, upper, where, undecided, True
            )
    return Bounds(lower, upper, where, undecided)


def _subdivide(
    space: BernsteinSpace,
    rows: np.ndarray,
    coeffs: np.ndarray,
    floor: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    where: np.ndarray,
    undecided: np.ndarray,
    search: bool = False,
    track: bool = False,
) -> None:
    """Refine elements ``rows`` in place (``lower``, ``upper``, ``where``, ``undecided``).

    Pieces are kept as (owner, coefficients, origin, axes): the piece covers the
    reference points origin + axes @ q, q in the reference element. Deciding the sign
    (the default): a piece whose coefficients are all >= floor is settled and dropped,
    an owner with an exact value below floor is decided (negative) and dropped, and an
    owner left with more than :data:`MAX_PIECES` open pieces stops, undecided. With
    ``search``, the smallest value is hunted instead (branch and bound): a piece is
    dropped when its coefficients are all >= the smallest value found, an owner keeps
    its :data:`MAX_PIECES` lowest pieces, and ``undecided`` is not touched. ``where`` is
    kept up to date only with ``track`` (always when searching).
    """
    track = track or search
    s, n_open = space.size, len(rows)
    owner = np.arange(n_open)
    origin = np.zeros((n_open, 2))
    axes = np.broadcast_to(np.eye(2), (n_open, 2, 2))
    settled = np.full(n_open, np.inf)  # smallest coefficient of the settled pieces
    low = lower[rows].copy()
    up, at = upper[rows].copy(), where[rows].copy()
    level_floor = floor[rows]
    for _ in range(MAX_DEPTH):
        m = len(owner)
        pieces = (coeffs @ space.children).reshape(m * 4, s)
        owner = np.repeat(owner, 4)
        if track:  # where each piece lies, for the point named as the smallest value
            origin = origin[:, None, :] + np.einsum("mij,cj->mci", axes, space.origin)
            axes = np.einsum("mij,cjk->mcik", axes, space.axes).reshape(-1, 2, 2)
            origin = origin.reshape(-1, 2)
        smallest = pieces.min(axis=1)
        # the lowest coefficient over all pieces (settled ones too) bounds det J below
        active = np.unique(owner)
        bound = settled.copy()
        np.minimum.at(bound, owner, smallest)
        low[active] = np.maximum(low[active], bound[active])
        # corner coefficients are exact values: the lowest one per owner
        corner_values = pieces[:, space.corners]
        pick = corner_values.argmin(axis=1)
        value = corner_values[np.arange(len(pieces)), pick]
        order = np.lexsort((value, owner))
        first = order[np.r_[True, owner[order][1:] != owner[order][:-1]]]
        better = value[first] < up[owner[first]]
        hit = first[better]
        up[owner[hit]] = value[hit]
        if track:
            at[owner[hit]] = origin[hit] + np.einsum(
                "mij,mj->mi", axes[hit], space.corner_points[pick[hit]]
            )
        done = smallest >= (up[owner] if search else level_floor[owner])
        if not search:
            done |= up[owner] < level_floor[owner]  # decided: negative somewhere
        np.minimum.at(settled, owner[done], smallest[done])
        keep = np.flatnonzero(~done)
        keep = keep[np.lexsort((smallest[keep], owner[keep]))]  # by owner, lowest first
        start = np.searchsorted(owner[keep], owner[keep])
        crowded = np.arange(len(keep)) - start >= MAX_PIECES
        if search:
            np.minimum.at(settled, owner[keep[crowded]], smallest[keep[crowded]])
            keep = keep[~crowded]
        else:
            stopped = np.unique(owner[keep[crowded]])
            undecided[rows[stopped]] = True
            keep = keep[~np.isin(owner[keep], stopped)]
        owner, coeffs = owner[keep], pieces[keep]
        if track:
            origin, axes = origin[keep], axes[keep]
        if not len(owner):
            break
    if not search:
        undecided[rows[np.unique(owner)]] = True
    lower[rows], upper[rows], where[rows] = low, up, at
