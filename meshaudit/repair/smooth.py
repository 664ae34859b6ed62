"""Node moves: untangle inverted elements, then improve the shape of poor ones.

Only free nodes move: corner nodes of audited elements that are not fixed (see
:mod:`meshaudit.repair.fixed`) and, by default, lie within ``rings`` rings of the target
elements (ring 1: the targets' own corners; each further ring adds the corners of every
element touching the ring before). ``everywhere`` frees every corner that is not fixed.

A node of a planar mesh moves in the mesh's plane, ``x = x0 + s (u t1 + v t2)`` (a plane
facing an axis keeps that coordinate bit-identical). A node of a shell moves on the
quadric fitted to its neighbours (:func:`surface_fits`): ``x = x0 + a t1 + b t2 +
q(a, b) n`` with ``(a, b) = s (u, v)`` in the plane normal to the node's area-weighted
normal ``n`` and ``q`` the least-squares height ``c1 a^2 + c2 a b + c3 b^2 + c4 a + c5 b``
of the nodes of its elements above that plane; a node with fewer than six such nodes, or
whose fit is ill-conditioned, moves in the plane (``q = 0``). A solid node moves in
space. ``s`` is the median edge length of the elements that take
part, so the unknowns are of order one.

Two passes of scipy's L-BFGS-B over all free coordinates at once, the objectives and
their gradients vectorised over every corner (:mod:`meshaudit.repair.objective`):
Knupp's untangling function when some corner Jacobian is not positive, then the sum of
the corners' inverse mean ratios. Midside, face and centre nodes then follow their
corners (:func:`meshaudit.repair.cells.corner_weights`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..cells.registry import CELL_TYPES
from ..mesh.topology import connected_labels
from . import cells as C
from .objective import Corners, corner_jacobians, shape, untangle

#: Knupp's threshold: a corner is untangled when its Jacobian reaches this fraction of
#: the element's mean edge length to the power d (5 per cent of a perfect square's
#: corner; common practice, no single source).
BETA = 0.05
#: Regularisation of the shape pass, relative to each corner's size (tiny: the plain
#: metric on a valid mesh).
DELTA = 1e-3
#: Iteration limits of the two passes.
UNTANGLE_ITERATIONS = 500
SHAPE_ITERATIONS = 200

Progress = Callable[[str, int, int], None]


@dataclass
class Moved:
    """Result of :func:`move_nodes`: the new coordinates and what happened."""

    points: np.ndarray
    free: np.ndarray  # (n_points,) bool: nodes allowed to move
    inverted_before: int  # corners with a Jacobian not positive, among those taking part
    inverted_after: int
    iterations: int


def _corner_rows(blocks, mask_of) -> list[tuple[str, np.ndarray]]:
    return [(t, d[mask_of(k)]) for k, (t, d) in enumerate(blocks)]


def _build(blocks: list[tuple[str, np.ndarray]], dim: int) -> tuple[np.ndarray, np.ndarray]:
    """Corner node rows (m, 1 + dim) and ideal inverses (m, dim, dim) of the blocks of
    dimension ``dim``."""
    nodes, winv = [np.zeros((0, dim + 1), dtype=np.int64)], [np.zeros((0, dim, dim))]
    for t, d in blocks:
        if CELL_TYPES[t].dimension != dim or len(d) == 0:
            continue
        table = C.corner_table(t)
        nodes.append(d[:, table].reshape(-1, dim + 1))
        winv.append(np.broadcast_to(C.ideal_inverse(t), (len(d), *C.ideal_inverse(t).shape)))
        winv[-1] = winv[-1].reshape(-1, dim, dim)
    return np.concatenate(nodes), np.concatenate(winv)


def node_normals(points: np.ndarray, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n, 3) unit area-weighted normals of the surface elements at their corner nodes."""
    nodes, _ = _build(blocks, 2)
    a = points[nodes[:, 1]] - points[nodes[:, 0]]
    b = points[nodes[:, 2]] - points[nodes[:, 0]]
    cross = np.cross(a, b)
    out = np.zeros_like(points)
    for k in range(3):
        out[:, k] = np.bincount(nodes[:, 0], weights=cross[:, k], minlength=len(points))
    norm = np.linalg.norm(out, axis=1)
    out[norm > 0] /= norm[norm > 0, None]
    return out


def tangent_bases(normals: np.ndarray) -> np.ndarray:
    """(n, 3, 2): two unit vectors perpendicular to each normal. A normal along an axis
    gets the other two axes exactly (so that coordinate is never touched)."""
    n = len(normals)
    out = np.zeros((n, 3, 2))
    axis = np.argmax(np.abs(normals), axis=1)
    exact = np.isclose(np.abs(normals).max(axis=1), 1.0, rtol=0, atol=1e-12)
    others = np.array([[1, 2], [0, 2], [0, 1]])[axis]
    rows = np.arange(n)
    out[rows, others[:, 0], 0] = 1.0
    out[rows, others[:, 1], 1] = 1.0
    bent = ~exact
    if bent.any():
        nb = normals[bent]
        helper = np.eye(3)[np.argmin(np.abs(nb), axis=1)]
        t1 = np.cross(nb, helper)
        t1 /= np.linalg.norm(t1, axis=1)[:, None]
        t2 = np.cross(nb, t1)
        out[bent, :, 0], out[bent, :, 1] = t1, t2
    return out


#: A fit whose normal matrix has a condition number above this is not trusted.
FIT_CONDITION = 1e10


def surface_fits(
    points: np.ndarray,
    blocks: list[tuple[str, np.ndarray]],
    nodes: np.ndarray,
    basis: np.ndarray,
    normals: np.ndarray,
) -> np.ndarray:
    """(k, 5) coefficients ``c1..c5`` of the height ``w = c1 a^2 + c2 a b + c3 b^2 + c4 a +
    c5 b + c6`` over the frame ``(basis, normals)`` at each of ``nodes``, fitted by least
    squares to every node of the surface elements around it (itself included; ``(a, b,
    w)`` measured from the node). Zero (the tangent plane) where fewer than six distinct
    nodes take part or the fit's normal matrix is ill-conditioned."""
    k = len(nodes)
    out = np.zeros((k, 5))
    if k == 0:
        return out
    slot = np.full(len(points), -1, dtype=np.int64)
    slot[nodes] = np.arange(k)
    pairs = []
    for t, d in blocks:
        cell = CELL_TYPES[t]
        if cell.dimension != 2 or len(d) == 0:
            continue
        hit = (slot[d[:, : cell.n_corners]] >= 0).any(axis=1)
        rows = d[hit]
        centre = np.repeat(rows, rows.shape[1], axis=1).ravel()  # every (node, other) pair
        other = np.tile(rows, (1, rows.shape[1])).ravel()
        keep = slot[centre] >= 0
        pairs.append(slot[centre[keep]] * len(points) + other[keep])
    if not pairs:
        return out
    key = np.unique(np.concatenate(pairs))
    who, other = key // len(points), key % len(points)
    rel = points[other] - points[nodes[who]]
    a = np.einsum("ij,ij->i", rel, basis[who, :, 0])
    b = np.einsum("ij,ij->i", rel, basis[who, :, 1])
    w = np.einsum("ij,ij->i", rel, normals[who])
    size = np.sqrt(np.bincount(who, weights=a * a + b * b, minlength=k))
    size = np.where(size > 0, size / np.sqrt(np.maximum(np.bincount(who, minlength=k), 1)), 1.0)
    a, b = a / size[who], b / size[who]  # unit-free, for the condition number
    phi = np.stack([a * a, a * b, b * b, a, b, np.ones_like(a)], axis=1)
    mtm = np.zeros((k, 6, 6))
    for i in range(6):  # the normal equations, summed per node
        for j in range(i, 6):
            mtm[:, i, j] = mtm[:, j, i] = np.bincount(who, phi[:, i] * phi[:, j], minlength=k)
    rhs = np.stack([np.bincount(who, phi[:, i] * w, minlength=k) for i in range(6)], axis=1)
    count = np.bincount(who, minlength=k)
    good = count >= 6
    good[good] &= np.linalg.cond(mtm[good]) < FIT_CONDITION
    if good.any():
        c = np.linalg.solve(mtm[good], rhs[good][..., None])[..., 0]
        sz = size[good]
        out[good] = np.column_stack(
            [c[:, 0] / sz**2, c[:, 1] / sz**2, c[:, 2] / sz**2, c[:, 3] / sz, c[:, 4] / sz]
        )
    return out


def free_nodes(
    n_points: int,
    blocks: list[tuple[str, np.ndarray]],
    fixed: np.ndarray,
    targets: np.ndarray,
    rings: int,
    everywhere: bool,
) -> np.ndarray:
    """(n_points,) bool: corner nodes allowed to move (see the module docstring)."""
    corner = np.zeros(n_points, dtype=bool)
    for t, d in blocks:
        corner[d[:, : CELL_TYPES[t].n_corners]] = True
    if everywhere:
        return corner & ~fixed
    starts = np.cumsum([0] + [len(d) for _, d in blocks])
    region = np.zeros(n_points, dtype=bool)
    for k, (t, d) in enumerate(blocks):
        region[d[targets[starts[k] : starts[k + 1]], : CELL_TYPES[t].n_corners]] = True
    for _ in range(max(rings, 1) - 1):
        grown = region.copy()
        for t, d in blocks:
            c = d[:, : CELL_TYPES[t].n_corners]
            grown[c[region[c].any(axis=1)]] = True
        region = grown
    return region & corner & ~fixed


def useful_nodes(
    blocks: list[tuple[str, np.ndarray]], free: np.ndarray, better: np.ndarray
) -> np.ndarray:
    """(n_points,) bool: the free nodes whose moves are worth keeping.

    Free nodes are grouped into clusters: two free nodes are in one cluster when an
    element has both as corners. A cluster is worth its moves when some element with a
    corner in it has a better verdict for them (``better``, over report rows); moves
    that brought no element to a better verdict only reshuffle the mesh and are undone.
    """
    n = len(free)
    starts = np.cumsum([0] + [len(d) for _, d in blocks])
    firsts, others, kept = [], [], np.zeros(n, dtype=bool)
    for k, (t, d) in enumerate(blocks):
        c = d[:, : CELL_TYPES[t].n_corners]
        rows = free[c].any(axis=1)
        corners = c[rows]
        # one edge per corner to the element's first free corner links its free corners
        anchor = corners[np.arange(len(corners)), free[corners].argmax(axis=1)]
        both = free[corners]
        firsts.append(np.repeat(anchor, c.shape[1])[both.ravel()])
        others.append(corners.ravel()[both.ravel()])
        good = better[starts[k] : starts[k + 1]][rows]
        kept[anchor[good]] = True
    label = connected_labels(n, np.concatenate(firsts), np.concatenate(others))
    worth = np.zeros(n, dtype=bool)
    worth[label[kept]] = True
    return free & worth[label]


def move_nodes(
    points: np.ndarray,
    blocks: list[tuple[str, np.ndarray]],
    free: np.ndarray,
    plane_normal: np.ndarray | None,
    fixed: np.ndarray,
    progress: Progress | None = None,
) -> Moved:
    """Move the ``free`` nodes of ``points`` (n, 3) to untangle and then improve the
    elements around them; ``plane_normal`` (3,) for a planar mesh, else None. Nodes
    that are not corners follow their corners unless ``fixed``."""
    from scipy.optimize import minimize

    x0 = points.copy()
    active = [(t, d[free[d[:, : CELL_TYPES[t].n_corners]].any(axis=1)]) for t, d in blocks]
    if not free.any() or not any(len(d) for _, d in active):
        return Moved(x0, free, 0, 0, 0)
    solid_node = np.zeros(len(x0), dtype=bool)
    for t, d in blocks:
        if CELL_TYPES[t].dimension == 3:
            solid_node[d] = True
    free_s = np.flatnonzero(free & ~solid_node)
    free_v = np.flatnonzero(free & solid_node)
    if plane_normal is not None:
        normals = np.broadcast_to(np.asarray(plane_normal, dtype=float), x0.shape).copy()
    else:
        normals = node_normals(x0, blocks)
    basis = tangent_bases(normals[free_s])
    if plane_normal is None:
        fit = surface_fits(x0, blocks, free_s, basis, normals[free_s])
    else:
        fit = np.zeros((len(free_s), 5))
    lift = normals[free_s]

    groups = []
    for dim in (2, 3):
        nodes, winv = _build(active, dim)
        if len(nodes):
            groups.append(Corners(nodes, winv, normals[nodes[:, 0]], dim))
    edges = np.concatenate(
        [np.linalg.norm(x0[g.nodes[:, 1:]] - x0[g.nodes[:, :1]], axis=2).ravel() for g in groups]
    )
    scale = float(np.median(edges[edges > 0])) if (edges > 0).any() else 1.0
    betas = []
    for g in groups:  # per corner: BETA x (mean edge length of its corner)^d
        length = np.linalg.norm(x0[g.nodes[:, 1:]] - x0[g.nodes[:, :1]], axis=2).mean(axis=1)
        betas.append(BETA * length**g.dim)
    n2 = 2 * len(free_s)

    def place(u: np.ndarray) -> np.ndarray:
        x = x0.copy()
        us = u[:n2].reshape(-1, 2) * scale
        a, b = us[:, 0], us[:, 1]
        height = fit[:, 0] * a * a + fit[:, 1] * a * b + fit[:, 2] * b * b
        height += fit[:, 3] * a + fit[:, 4] * b
        x[free_s] += np.einsum("nkd,nd->nk", basis, us) + height[:, None] * lift
        x[free_v] += u[n2:].reshape(-1, 3) * scale
        return x

    def pull(gx: np.ndarray, u: np.ndarray) -> np.ndarray:
        us = u[:n2].reshape(-1, 2) * scale
        a, b = us[:, 0], us[:, 1]
        along = np.einsum("nk,nk->n", gx[free_s], lift)
        slope = np.stack(
            [
                2 * fit[:, 0] * a + fit[:, 1] * b + fit[:, 3],
                fit[:, 1] * a + 2 * fit[:, 2] * b + fit[:, 4],
            ],
            axis=1,
        )
        gs = (np.einsum("nkd,nk->nd", basis, gx[free_s]) + along[:, None] * slope).ravel()
        return np.concatenate([gs, gx[free_v].ravel()]) * scale

    def inverted(x: np.ndarray) -> int:
        return int(sum(np.count_nonzero(corner_jacobians(g, x) <= 0) for g in groups))

    def run(fn, stage: str, limit: int, u0: np.ndarray) -> tuple[np.ndarray, int]:
        count = [0]

        def value(u: np.ndarray) -> tuple[float, np.ndarray]:
            x = place(u)
            total, gx = 0.0, np.zeros_like(x)
            for g, beta in zip(groups, betas):
                v, gg = fn(g, x, beta)
                total += v
                gx += gg
            return total, pull(gx, u)

        def tick(_u: np.ndarray) -> None:
            count[0] += 1
            if progress is not None:
                progress(stage, count[0], limit)

        with _one_blas_thread():
            res = minimize(
                value,
                u0,
                jac=True,
                method="L-BFGS-B",
                callback=tick,
                options={"maxiter": limit, "gtol": 1e-9, "ftol": 1e-9},
            )
        return res.x, count[0]

    u = np.zeros(n2 + 3 * len(free_v))
    before = inverted(x0)
    steps = 0
    if any((corner_jacobians(g, x0) < b).any() for g, b in zip(groups, betas)) and before:
        u, steps = run(untangle, "untangling elements", UNTANGLE_ITERATIONS, u)
    mid = inverted(place(u))
    shaped, more = run(lambda g, x, _b: shape(g, x, DELTA), "improving shapes", SHAPE_ITERATIONS, u)
    if inverted(place(shaped)) <= mid:
        u, steps = shaped, steps + more
    x = place(u)
    follow(x, x0, blocks, free, fixed)
    return Moved(x, free, before, inverted(x), steps)


def _one_blas_thread():
    """A context holding the BLAS to one thread (threadpoolctl), or nothing without it:
    L-BFGS-B's vector operations are small, and threads spinning on a busy machine made
    them about ten times slower."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - a dependency, but not a required one
        from contextlib import nullcontext

        return nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def follow(x: np.ndarray, x0: np.ndarray, blocks, free: np.ndarray, fixed: np.ndarray) -> None:
    """Move midside, face and centre nodes of the elements with a ``free`` corner with
    their corners (in place; nodes ``fixed`` stay)."""
    disp = x - x0
    for t, d in blocks:
        cell = CELL_TYPES[t]
        c = cell.n_corners
        if not cell.is_quadratic or len(d) == 0:
            continue
        rows = d[free[d[:, :c]].any(axis=1)]
        if len(rows) == 0:
            continue
        weights = C.corner_weights(t)[c:]  # (k - c, c)
        moved = np.einsum("kc,ncj->nkj", weights, disp[rows[:, :c]])
        others, moved = rows[:, c:].ravel(), moved.reshape(-1, 3)
        keep = ~fixed[others]
        x[others[keep]] = x0[others[keep]] + moved[keep]
