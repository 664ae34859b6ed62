"""det J of hexahedra: at the Gauss points, at the nodes, and bounded over the element.

Every hexahedron's map is written as a tensor-product Lagrange map on a grid of nodes:
the 2 x 2 x 2 corners for the trilinear ``hexahedron``, the 3 x 3 x 3 nodes at -1, 0, 1
for ``hexahedron27``; ``hexahedron20``'s serendipity map is triquadratic too (its 20
monomials are among the 27), so it is the triquadratic map through its own values at the
face centres and the centre: a face centre is -1/4 the sum of the face's corners plus 1/2
the sum of its midside nodes, the centre -1/4 the sum of the corners plus 1/4 the sum of
the midside nodes (its shape functions evaluated there).

det J = x_xi . (x_eta x x_zeta) is sampled on the grid of its Bernstein space
(:mod:`meshaudit.metrics.solid.hex_bernstein`: 3^3 points for the trilinear map, 6^3 for
the quadratic ones), each derivative found by three small products along the axes; its
coefficients, its values at the Gauss points and at the nodes follow by more such
products (det J lies in the space, so this interpolation is exact up to round-off).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import hex_bernstein as hb
from .hex_reference import REFERENCE, ReferenceCell

#: det J below -FLOOR_TOLERANCE x (longest edge)^3 counts as negative: round-off at an
#: exact zero, magnified by the change to Bernstein coefficients (see hex_bernstein), is
#: not read as an inverted element. meshaudit's choice.
FLOOR_TOLERANCE = 1e-10

#: Elements measured together: bounds the temporaries (a few MB) whatever the chunk.
BLOCK = {1: 4096, 2: 256}  # linear: see hexahedron.BLOCK


def _lagrange_1d(nodes: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """1-D Lagrange basis on ``nodes`` at points ``t``: values and derivatives (m, q)."""
    q = len(nodes)
    values, slopes = np.ones((len(t), q)), np.zeros((len(t), q))
    for a in range(q):
        others = [b for b in range(q) if b != a]
        for b in others:
            values[:, a] *= (t - nodes[b]) / (nodes[a] - nodes[b])
        for b in others:
            term = np.full(len(t), 1.0 / (nodes[a] - nodes[b]))
            for c in others:
                if c != b:
                    term *= (t - nodes[c]) / (nodes[a] - nodes[c])
            slopes[:, a] += term
    return values, slopes


def _grid_index(points: np.ndarray, order: int) -> np.ndarray:
    """Index i + q j + q^2 k on the (order + 1)^3 grid of reference ``points``."""
    q = order + 1
    ijk = np.rint((points + 1.0) * order / 2.0).astype(int)
    return ijk[:, 0] + q * ijk[:, 1] + q * q * ijk[:, 2]


def _to_grid(cell: ReferenceCell, order: int) -> np.ndarray:
    """(q^3, k): grid node coordinates = this @ the element's node coordinates."""
    q = order + 1
    grid = np.zeros((q**3, len(cell.nodes)))
    grid[_grid_index(cell.nodes, order), np.arange(len(cell.nodes))] = 1.0
    if cell.cell_type == "hexahedron20":
        ref27 = REFERENCE["hexahedron27"]
        extra = ref27.nodes[20:]
        grid[_grid_index(extra, order)] = cell.shape_functions(extra)
    return grid


@dataclass(frozen=True)
class TensorMap:
    """Tables of one cell type: its grid map and det J's Bernstein space."""

    order: int
    to_grid: np.ndarray  # (q^3, k)
    space: hb.TensorSpace
    values: np.ndarray  # (P, q) 1-D Lagrange basis of the grid at the space's points
    slopes: np.ndarray  # (P, q) its derivatives
    at_gauss: np.ndarray  # (g1, P) 1-D Bernstein basis at the 1-D Gauss points
    at_nodes: np.ndarray  # (q, P) 1-D Bernstein basis at the grid's nodes
    node_index: np.ndarray  # (k,) grid index of each node
    corner_coefficients: np.ndarray  # (8,) index of each corner's coefficient, meshio order
    gauss_weights: np.ndarray  # (g1^3,)


def _tensor_map(cell: ReferenceCell) -> TensorMap:
    order = 1 if cell.cell_type == "hexahedron" else 2
    space = hb.tensor_space(2 if order == 1 else 5)
    grid_1d = np.linspace(-1.0, 1.0, order + 1)
    values, slopes = _lagrange_1d(grid_1d, space.points)
    gauss_1d = np.unique(cell.gauss_points[:, 0])
    return TensorMap(
        order=order,
        to_grid=_to_grid(cell, order),
        space=space,
        values=values,
        slopes=slopes,
        at_gauss=space.basis_1d(gauss_1d),
        at_nodes=space.basis_1d(grid_1d),
        node_index=_grid_index(cell.nodes, order),
        corner_coefficients=_grid_index(cell.nodes[:8], space.degree),
        gauss_weights=cell.gauss_weights,
    )


MAPS: dict[str, TensorMap] = {name: _tensor_map(cell) for name, cell in REFERENCE.items()}


@dataclass(frozen=True)
class JacobianPart:
    """det J of n elements: ``gauss`` (g, n) at the Gauss points (xi fastest), ``nodal``
    (k, n) at the nodes (the corners of the trilinear hexahedron), ``volume`` (n,) the
    Gauss sum of det J (exact: the rule integrates det J's degree), ``lower`` (n,) a
    certified lower bound over the element, ``found`` (n,) the smallest value found,
    ``undecided`` (n,) the sign of the minimum still open after refinement,
    ``largest`` (n,) the largest |coefficient| (|det J| <= largest everywhere),
    ``floor`` (n,) below which a value counts as negative."""

    gauss: np.ndarray
    nodal: np.ndarray
    volume: np.ndarray
    lower: np.ndarray
    found: np.ndarray
    undecided: np.ndarray
    largest: np.ndarray
    floor: np.ndarray


def determinants(tmap: TensorMap, coords: np.ndarray) -> np.ndarray:
    """det J (P, P, P, n) at the space's grid of points (axes zeta, eta, xi)."""
    n, k, _ = coords.shape
    q = tmap.order + 1
    x = coords.transpose(1, 2, 0).reshape(k, 3 * n)
    grid = np.einsum("gk,km->gm", tmap.to_grid, x).reshape(q, q, q, 3 * n)
    v, s = tmap.values, tmap.slopes
    along_z = hb.along(v, grid, 0)
    p = len(v)
    d_xi = hb.along(s, hb.along(v, along_z, 1), 2).reshape(p**3, 3, n)
    d_eta = hb.along(v, hb.along(s, along_z, 1), 2).reshape(p**3, 3, n)
    d_zeta = hb.tensor(grid, s, v, v).reshape(p**3, 3, n)
    (a0, a1, a2), (b0, b1, b2), (c0, c1, c2) = (
        (d[:, 0], d[:, 1], d[:, 2]) for d in (d_xi, d_eta, d_zeta)
    )
    det = a0 * (b1 * c2 - b2 * c1) + a1 * (b2 * c0 - b0 * c2) + a2 * (b0 * c1 - b1 * c0)
    return det.reshape(p, p, p, n)


def longest_edge(coords: np.ndarray) -> np.ndarray:
    """Longest corner-to-corner edge (n,) of hexahedra (n, k, 3)."""
    edges = REFERENCE["hexahedron"].edges
    vec = coords[:, edges[:, 1]] - coords[:, edges[:, 0]]
    return np.sqrt(np.einsum("nei,nei->ne", vec, vec)).max(axis=1)


def jacobian_part(cell_type: str, coords: np.ndarray) -> JacobianPart:
    """det J of hexahedra ``coords`` (n, k, 3) of ``cell_type`` (in length^3 per unit
    reference volume: the unit cube on [-1, 1]^3 reads 1/8)."""
    tmap = MAPS[cell_type]
    size = BLOCK[tmap.order]
    parts = [_block(tmap, coords[s : s + size]) for s in range(0, max(len(coords), 1), size)]
    return JacobianPart(*(np.concatenate(f, axis=-1) for f in zip(*(_fields(p) for p in parts))))


def _fields(part: JacobianPart) -> tuple[np.ndarray, ...]:
    return (
        part.gauss,
        part.nodal,
        part.volume,
        part.lower,
        part.found,
        part.undecided,
        part.largest,
        part.floor,
    )


def _block(tmap: TensorMap, coords: np.ndarray) -> JacobianPart:
    n = len(coords)
    space = tmap.space
    coeffs = hb.coefficients(space, determinants(tmap, coords))
    g = tmap.at_gauss
    gauss = hb.tensor(coeffs, g, g, g).reshape(len(g) ** 3, n)
    if tmap.order == 1:
        nodal = coeffs.reshape(space.size, n)[tmap.corner_coefficients]
    else:
        a = tmap.at_nodes
        nodal = hb.tensor(coeffs, a, a, a).reshape(len(a) ** 3, n)[tmap.node_index]
    flat = coeffs.reshape(space.size, n)
    with np.errstate(over="ignore"):
        floor = -FLOOR_TOLERANCE * longest_edge(coords) ** 3
    known = np.minimum(gauss.min(axis=0), nodal.min(axis=0))
    bounds = hb.bounds(space, flat, floor, known)
    return JacobianPart(
        gauss=gauss,
        nodal=nodal,
        volume=tmap.gauss_weights @ gauss,
        lower=bounds.lower,
        found=bounds.found,
        undecided=bounds.undecided,
        largest=np.abs(flat).max(axis=0),
        floor=floor,
    )
