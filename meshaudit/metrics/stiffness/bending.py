"""How well an element represents pure bending: the field, the frames, the energies.

The field: pure bending of a beam with its axis along the unit direction X, bent in the
plane of X and the unit direction Y (Z = X x Y in space), origin at the element's
centroid, curvature kappa = 1:

    u_X = -X Y,    u_Y = (X^2 + nu (Y^2 - Z^2)) / 2,    u_Z = nu Y Z,

strains eps_X = -Y, eps_Y = eps_Z = nu Y, no shear, stress sigma_X = -E Y and nothing
else: the exact solution of 3-D elasticity for a prismatic bar under end moments (its
strains are linear, so the equilibrium and compatibility equations hold), the Poisson
terms bending the cross-section anticlastically. Surface elements take its plane form (no
Z): E' = E and nu' = nu in plane stress, E' = E / (1 - nu^2) and nu' = nu / (1 - nu) in
plane strain.

The error: the element takes the field's values at its nodes, and the strain of that
nodal field, eps_h, is compared with the exact strain eps at the element's own Gauss
points (the points its stiffness is integrated at; Y there from the shape functions):

    e = 1/2 sum_g w_g det J_g (eps_h - eps)^T D (eps_h - eps) / U_exact,

the energy of the strain error, relative to the exact energy U_exact = 1/2 E' int Y^2 dV
over the element (the fine rule). It is never negative, so no error can cancel another:
an element whose nodal field puts the bending energy into spurious shear reads the
energy of that shear, whatever its total energy. Where the exact stress (sigma_X alone)
does no work on the strain error (the element's eps_X is exact: the rectangle, the
parallelogram, the box), e equals the energy difference |U_element - U_exact| / U_exact
(the cross term vanishes). A one-point element (linear triangle,
linear tetrahedron) has its Gauss point at the centroid, where the exact strain is 0 (its
mean over the element): e is then its own strain energy over the exact one.

The frames: surface elements in :func:`axes` (each principal direction d with Y = d
turned +90 degrees), solids in :mod:`.solid_axes` (every ordered pair of principal
directions). The metric is the worst frame's e.

The strains of the nodal field are summed from the shape gradients already worked out for
the element's stiffness: the stiffness matrix itself is not needed, nor formed for the
undistorted twin.
"""

from __future__ import annotations

from functools import cache

import numpy as np

from ...cells.registry import CellType
from .element import Geometry
from .rules import Tables

#: The field, in words, for the reports.
FIELD = (
    "pure bending along each principal axis X (Y across it, origin at the centroid): "
    "u_X = -kappa X Y, u_Y = kappa (X^2 + nu' Y^2)/2, the exact plane-stress field "
    "(plane strain: nu' = nu/(1 - nu)), strains eps_X = -kappa Y, eps_Y = nu' kappa Y; "
    "error: the energy of the strain error (element's strain minus the exact one at its "
    "Gauss points) over the exact energy, worst axis"
)
#: The same for solids.
FIELD_SOLID = (
    "pure bending along each principal axis X, bent towards each other principal axis Y "
    "(Z = X x Y, origin at the centroid): u_X = -kappa X Y, u_Y = kappa (X^2 + nu (Y^2 - "
    "Z^2))/2, u_Z = kappa nu Y Z, the exact 3-D field, strains eps_X = -kappa Y, eps_Y = "
    "eps_Z = nu kappa Y; error: the energy of the strain error (element's strain minus "
    "the exact one at its Gauss points) over the exact energy, worst of the six frames"
)

#: A frame: unit vectors (X, Y) or (X, Y, Z), each (d, n), element-last.
BendingFrame = tuple[np.ndarray, ...]


def axes(cell: CellType, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(d1 (n, 2), d2 (n, 2), lengths (n, 2)) of surface elements ``x`` (n, k, 2): the
    bending directions and the side lengths of the undistorted element (quads: 2|e1|,
    2|e2|, Robinson's principal axes e1 and e2, the lines joining opposite edge midpoints;
    triangles: the longest edge and the height over it)."""
    c = x[:, : cell.n_corners]
    if cell.family == "quad":
        e1 = (-c[:, 0] + c[:, 1] + c[:, 2] - c[:, 3]) / 4.0
        e2 = (-c[:, 0] - c[:, 1] + c[:, 2] + c[:, 3]) / 4.0
        l1, l2 = np.hypot(*e1.T), np.hypot(*e2.T)
        with np.errstate(divide="ignore", invalid="ignore"):
            return e1 / l1[:, None], e2 / l2[:, None], np.column_stack([2 * l1, 2 * l2])
    edges = np.roll(c, -1, axis=1) - c
    lengths = np.hypot(edges[..., 0], edges[..., 1])
    longest = np.argmax(lengths, axis=1)
    rows = np.arange(len(c))
    base = lengths[rows, longest]
    with np.errstate(divide="ignore", invalid="ignore"):
        d1 = edges[rows, longest] / base[:, None]
        area2 = np.abs(edges[:, 0, 0] * edges[:, 1, 1] - edges[:, 0, 1] * edges[:, 1, 0])
        height = area2 / base
    d2 = np.column_stack([-d1[:, 1], d1[:, 0]])
    return d1, d2, np.column_stack([base, height])


def plane_frames(*directions: np.ndarray) -> list[BendingFrame]:
    """The frames (X = d, Y = d turned +90 degrees), element-last, of unit directions
    ``d`` (n, 2)."""
    return [(d.T, np.stack([-d[:, 1], d[:, 0]])) for d in directions]


def undistorted(cell: CellType, lengths: np.ndarray) -> np.ndarray:
    """Nodes (n, k, 2) of the undistorted surface elements with side ``lengths`` (n, 2):
    the reference element mapped affinely (quads: x = a xi / 2, y = b eta / 2; triangles:
    the isosceles triangle with base a along x and height b)."""
    ref = cell.reference_nodes
    a, b = lengths[:, 0, None], lengths[:, 1, None]
    if cell.family == "quad":
        return np.stack([ref[:, 0] * a / 2.0, ref[:, 1] * b / 2.0], axis=-1)
    xi, eta = ref[:, 0], ref[:, 1]
    return np.stack([a * (xi + eta / 2.0 - 0.5), b * eta], axis=-1)


@cache
def _base(cell: CellType) -> tuple[np.ndarray, Geometry, tuple[np.ndarray, np.ndarray]]:
    """(nodes (k, d), Gauss geometry, (centroid, second moments)) of the cell type's
    undistorted element with unit axis lengths (:func:`undistorted`,
    :func:`meshaudit.metrics.stiffness.solid_axes.undistorted`)."""
    from . import element, solid_axes
    from .rules import tables

    tab = tables(cell.name)
    unit = np.ones((1, cell.dimension))
    shape = undistorted if cell.dimension == 2 else solid_axes.undistorted
    nodes = shape(cell, unit)
    geo = element.geometry(tab, nodes)
    return nodes[0], geo, second_moments(tab, geo, element.fine_det(tab, nodes))


def twin(
    cell: CellType, lengths: np.ndarray
) -> tuple[Geometry, tuple[np.ndarray, np.ndarray], list[BendingFrame]]:
    """(Gauss geometry, (centroid, second moments), frames) of the undistorted elements
    with axis ``lengths`` (n, d): the unit one stretched by the lengths along the
    coordinate axes, its principal axes (x_b = s_b x_unit_b: det J scales by prod s,
    dN/dx_b by 1/s_b, int x_a x_b dV by s_a s_b prod s), so nothing is integrated again."""
    nodes, geo, (centroid, moments) = _base(cell)
    s = lengths.T  # (d, n)
    volume = np.prod(s, axis=0)
    out = Geometry(nodes[:, :, None] * s[None], geo.det * volume, geo.grad / s[None, :, None, :])
    moments = moments * s[:, None] * s[None, :] * volume
    d, n = s.shape
    unit = [np.repeat(np.eye(d)[:, c, None], n, axis=1) for c in range(d)]
    if d == 2:
        frames = [(unit[0], unit[1]), (unit[1], -unit[0])]
    else:
        frames = [
            (unit[a], unit[b], unit[3 - a - b] * (1.0 if (b - a) % 3 == 1 else -1.0))
            for a in range(3)
            for b in range(3)
            if a != b
        ]
    return out, (centroid * s, moments), frames


def second_moments(tab: Tables, geo: Geometry, fine: np.ndarray) -> tuple[np.ndarray, ...]:
    """(centroid (d, n), second moments int r_a r_b dV about it (d, d, n)) of elements
    with nodes ``geo.nodes`` and det J ``fine`` (n, q) at the fine points."""
    wdet = np.ascontiguousarray((fine * tab.fine_weights).T)  # (q, n)
    points = np.einsum("qk,kdn->qdn", tab.fine_functions, geo.nodes)  # no BLAS: jacobians
    with np.errstate(divide="ignore", invalid="ignore"):
        centroid = np.einsum("qn,qdn->dn", wdet, points) / wdet.sum(axis=0)
    rel = points - centroid
    weighted = wdet[:, None] * rel
    d = rel.shape[1]
    moments = np.empty((d, d, rel.shape[2]))
    for a in range(d):
        for b in range(a, d):
            moments[a, b] = moments[b, a] = np.einsum("qn,qn->n", weighted[:, a], rel[:, b])
    return centroid, moments


def error_energy(
    tab: Tables,
    geo: Geometry,
    u: np.ndarray,
    y: np.ndarray,
    strain: np.ndarray,
    lam: np.ndarray,
    mu: np.ndarray,
) -> np.ndarray:
    """Energy of the strain error (n,): 1/2 sum_g w_g det J_g (eps_h - eps)^T D (eps_h -
    eps), the density lambda/2 (tr e)^2 + mu e:e of e = eps_h - eps at the Gauss points,
    eps_h = sym(sum_i u_i (x) grad N_i) the strains of nodal displacements ``u`` (k, d, n)
    and eps = y S the exact strains, ``y`` (g, n) the bending coordinate Y at the Gauss
    points, ``strain`` S (d, d, n) the exact strain per unit Y. Not negative for a law
    with a positive-definite D and det J > 0."""
    k, d, _ = u.shape
    h = u[0][None, :, None, :] * geo.grad[:, None, :, 0, :]  # (g, d, d, n): du_a/dx_b
    for i in range(1, k):
        h += u[i][None, :, None, :] * geo.grad[:, None, :, i, :]
    trace = np.zeros_like(y)
    square = np.zeros_like(y)
    for a in range(d):
        for b in range(a + 1):
            e = h[:, a, a] if a == b else 0.5 * (h[:, a, b] + h[:, b, a])
            e = e - y * strain[a, b]
            if a == b:
                trace += e
                square += e**2
            else:
                square += 2.0 * e**2
    density = 0.5 * lam * trace**2 + mu * square
    return (density * geo.det * tab.weights[:, None]).sum(axis=0)


def relative_errors(
    tab: Tables,
    geo: Geometry,
    moments: tuple[np.ndarray, np.ndarray],
    lam: np.ndarray,
    mu: np.ndarray,
    frames: list[BendingFrame],
) -> np.ndarray:
    """max over ``frames`` of the strain-error energy over U_exact (n,), in [0, inf) (see
    the module docstring), of elements of Gauss geometry ``geo``, centroid and second
    moments ``moments`` (:func:`second_moments`) and law ``lam``, ``mu`` (n,) (surface
    elements: per unit thickness, lambda* in plane stress)."""
    centroid, moments_ab = moments
    rel = geo.nodes - centroid  # (k, d, n)
    if rel.shape[1] == 2:
        modulus = 4.0 * mu * (lam + mu) / (lam + 2.0 * mu)  # E' = 1 / C_11
        ratio = lam / (lam + 2.0 * mu)  # nu'
    else:
        modulus = mu * (3.0 * lam + 2.0 * mu) / (lam + mu)  # E
        ratio = lam / (2.0 * (lam + mu))  # nu
    worst = np.zeros(rel.shape[2])
    for frame in frames:
        big_x, big_y = (np.einsum("kdn,dn->kn", rel, v) for v in frame[:2])
        u_x, u_y = -big_x * big_y, 0.5 * (big_x**2 + ratio * big_y**2)
        u = u_x[:, None] * frame[0] + u_y[:, None] * frame[1]
        # exact strain per unit Y: -X (x) X + nu' Y (x) Y (+ nu Z (x) Z)
        strain = ratio * frame[1][:, None] * frame[1][None] - frame[0][:, None] * frame[0][None]
        if len(frame) == 3:
            big_z = np.einsum("kdn,dn->kn", rel, frame[2])
            u -= (0.5 * ratio * big_z**2)[:, None] * frame[1]
            u += (ratio * big_y * big_z)[:, None] * frame[2]
            strain += ratio * frame[2][:, None] * frame[2][None]
        y = np.einsum("gk,kn->gn", tab.functions, big_y)  # Y at the Gauss points
        energy = error_energy(tab, geo, u, y, strain, lam, mu)
        second = np.einsum("an,abn,bn->n", frame[1], moments_ab, frame[1])
        exact = 0.5 * modulus * second
        with np.errstate(divide="ignore", invalid="ignore"):
            worst = np.fmax(worst, energy / exact)
    return worst
