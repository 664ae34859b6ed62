"""How well a surface element represents pure in-plane bending.

The field: plane bending of a beam along the unit direction ``d`` (X along d, Y along
n = d turned +90 degrees, origin at the element's centroid), curvature kappa = 1:

    u_X = -X Y,    u_Y = (X^2 + nu' Y^2) / 2,

strains eps_X = -Y, eps_Y = nu' Y, gamma_XY = 0, stress sigma_X = -E' Y and nothing else:
the exact solution of pure bending (a moment at the ends of a plane-stress beam), with
E' = E and nu' = nu in plane stress, E' = E / (1 - nu^2) and nu' = nu / (1 - nu) in plane
strain. The element takes the field's values at its nodes; its strain energy
1/2 u^T K u is compared with the exact 1/2 int E' Y^2 dA over the element.

The axes: a quadrilateral's two principal axes (Robinson's e1 and e2, the lines joining
opposite edge midpoints), a triangle's longest edge and the normal to it. The undistorted
element of the same proportions: the rectangle 2|e1| x 2|e2| (a quadrilateral), the
isosceles triangle on the longest edge with the same height (a triangle), quadratic
elements with their midside nodes at the middle of straight edges.
"""

from __future__ import annotations

import numpy as np

from ...cells.registry import CellType
from .rules import Tables

#: The field, in words, for the reports.
FIELD = (
    "pure bending along each principal axis X (Y across it, origin at the centroid): "
    "u_X = -kappa X Y, u_Y = kappa (X^2 + nu' Y^2)/2, the exact plane-stress field "
    "(plane strain: nu' = nu/(1 - nu)); error |U_element - U_exact| / U_exact, worst axis"
)


def axes(cell: CellType, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(d1 (n, 2), d2 (n, 2), lengths (n, 2)) of elements ``x`` (n, k, 2): the bending
    directions and the side lengths of the undistorted element (quads: 2|e1|, 2|e2|;
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


def undistorted(cell: CellType, lengths: np.ndarray) -> np.ndarray:
    """Nodes (n, k, 2) of the undistorted elements with side ``lengths`` (n, 2): the
    reference element mapped affinely (quads: x = a xi / 2, y = b eta / 2; triangles:
    the isosceles triangle with base a along x and height b)."""
    ref = cell.reference_nodes
    a, b = lengths[:, 0, None], lengths[:, 1, None]
    if cell.family == "quad":
        return np.stack([ref[:, 0] * a / 2.0, ref[:, 1] * b / 2.0], axis=-1)
    xi, eta = ref[:, 0], ref[:, 1]
    return np.stack([a * (xi + eta / 2.0 - 0.5), b * eta], axis=-1)


def relative_errors(
    tab: Tables,
    x: np.ndarray,
    fine: np.ndarray,
    k_matrix: np.ndarray,
    lam: np.ndarray,
    mu: np.ndarray,
    directions: tuple[np.ndarray, ...],
) -> np.ndarray:
    """max over ``directions`` of |U_element - U_exact| / U_exact (n,) (see the module
    docstring) for elements ``x`` (n, k, 2) with det J ``fine`` (n, q) at the fine
    points (:func:`meshaudit.metrics.stiffness.element.fine_det`), stiffness
    ``k_matrix`` (per unit thickness) and Lame's constants ``lam``, ``mu`` (plane
    stress: lambda*). U_exact takes the element's second moments of area about its
    centroid, integrated by the fine rule."""
    wdet = fine * tab.fine_weights
    area = wdet.sum(axis=1)
    px = x[..., 0] @ tab.fine_functions.T  # (n, q): the fine points
    py = x[..., 1] @ tab.fine_functions.T
    with np.errstate(divide="ignore", invalid="ignore"):
        cx = (wdet * px).sum(axis=1) / area
        cy = (wdet * py).sum(axis=1) / area
    px -= cx[:, None]
    py -= cy[:, None]
    ixx, iyy, ixy = ((wdet * a * b).sum(axis=1) for a, b in ((px, px), (py, py), (px, py)))
    modulus = 4.0 * mu * (lam + mu) / (lam + 2.0 * mu)  # E' = 1 / C_11
    ratio = lam / (lam + 2.0 * mu)  # nu'
    rx, ry = x[..., 0] - cx[:, None], x[..., 1] - cy[:, None]
    worst = np.zeros(len(x))
    for d in directions:
        nx, ny = -d[:, 1, None], d[:, 0, None]  # d turned +90 degrees
        big_x = rx * d[:, 0, None] + ry * d[:, 1, None]
        big_y = rx * nx + ry * ny
        u_x = -big_x * big_y
        u_y = 0.5 * (big_x**2 + ratio[:, None] * big_y**2)
        u = np.stack([u_x * d[:, 0, None] + u_y * nx, u_x * d[:, 1, None] + u_y * ny], axis=-1)
        u = u.reshape(len(x), -1)
        energy = 0.5 * np.einsum("ni,nij,nj->n", u, k_matrix, u, optimize=False)
        second = nx[:, 0] ** 2 * ixx + 2.0 * nx[:, 0] * ny[:, 0] * ixy + ny[:, 0] ** 2 * iyy
        exact = 0.5 * modulus * second
        with np.errstate(divide="ignore", invalid="ignore"):
            worst = np.fmax(worst, np.abs(energy - exact) / exact)
    return worst
