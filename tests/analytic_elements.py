"""Analytic element shapes whose metric values have closed forms, and a batch audit.

Each constructor returns the nodes of one element (counter-clockwise, node 1 first) in
the plane or in space. The closed forms are derived beside each one (common practice):

- ``rectangle(w)``: w x 1; aspect ratio w, condition (w^2 + 1)/(2w) at every corner,
  every angle 90 degrees, skew and taper 0.
- ``rhombus(theta)``: unit sides, acute angle theta; aspect 1, skew 90 - theta,
  min angle theta, max angle 180 - theta, scaled Jacobian sin(theta), taper 0.
- ``trapezoid(k)``: parallel sides 1 (bottom) and k (top), height (1 + k)/2 (so its
  principal axes are equal); taper (1 - k)/(1 + k), det J proportional to 1 + t eta.
- ``double_taper(alpha, beta)``: built from Robinson's vectors e1 = (1, 0), e2 = (0, 1),
  e3 = alpha e1 + beta e2, so det J = 1 + beta xi + alpha eta; taper max(|alpha|, |beta|).
- ``lifted_square(h)``: unit square with node 3 lifted by h; warp acos(1/(1 + h^2)).
- ``cap_triangle(phi)``: isosceles triangle with base angles phi on its longest edge.
- ``needle_triangle(alpha)``: isosceles triangle with apex angle alpha (two long sides).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import meshio
import numpy as np

import meshaudit


def rectangle(w: float) -> np.ndarray:
    return np.array([[0.0, 0.0], [w, 0.0], [w, 1.0], [0.0, 1.0]])


def rhombus(theta_deg: float) -> np.ndarray:
    c, s = math.cos(math.radians(theta_deg)), math.sin(math.radians(theta_deg))
    return np.array([[0.0, 0.0], [1.0, 0.0], [1.0 + c, s], [c, s]])


def trapezoid(k: float) -> np.ndarray:
    h = (1.0 + k) / 2.0
    return np.array([[-0.5, 0.0], [0.5, 0.0], [k / 2, h], [-k / 2, h]])


def double_taper(alpha: float, beta: float) -> np.ndarray:
    """Nodes x_k = e1 xi_k + e2 eta_k + e3 xi_k eta_k at the reference corners."""
    corners = [(-1, -1), (1, -1), (1, 1), (-1, 1)]
    return np.array([[x + alpha * x * y, y + beta * x * y] for x, y in corners], dtype=float)


def lifted_square(h: float) -> np.ndarray:
    return np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, h], [0.0, 1.0, 0.0]])


def lift_for_warp(warp_deg: float) -> float:
    """h with acos(1/(1 + h^2)) = warp."""
    return math.sqrt(1.0 / math.cos(math.radians(warp_deg)) - 1.0)


def cap_triangle(phi_deg: float) -> np.ndarray:
    return np.array([[0.0, 0.0], [1.0, 0.0], [0.5, 0.5 * math.tan(math.radians(phi_deg))]])


def needle_triangle(alpha_deg: float) -> np.ndarray:
    half = math.radians(alpha_deg) / 2
    return np.array([[0.0, 0.0], [math.sin(half) * 2, 0.0], [math.sin(half), math.cos(half)]])


def with_midsides(corners: np.ndarray) -> np.ndarray:
    """The straight-sided quadratic twin: midside nodes at the chord midpoints."""
    return np.vstack([corners, (corners + np.roll(corners, -1, axis=0)) / 2])


def shifted_midside(corners: np.ndarray, along: float, across: float = 0.0) -> np.ndarray:
    """Straight-sided twin with the midside node of edge 1-2 moved ``along`` and
    ``across`` (fractions of that edge's length) from its chord midpoint."""
    nodes = with_midsides(corners)
    chord = corners[1] - corners[0]
    normal = np.array([-chord[1], chord[0]])
    nodes[len(corners)] += along * chord + across * normal
    return nodes


QUADRATIC = {4: "quad8", 3: "triangle6"}
LINEAR = {4: "quad", 3: "triangle"}


def audit_shapes(
    shapes: Sequence[np.ndarray],
    profile: meshaudit.Profile | str = "standard",
    cell_type: str | None = None,
) -> meshaudit.Report:
    """Audit elements of one cell type, each placed apart from the others (in read order)."""
    pts, cells = [], []
    for i, nodes in enumerate(shapes):
        nodes = np.asarray(nodes, dtype=float)
        if nodes.shape[1] == 2:
            nodes = np.column_stack([nodes, np.zeros(len(nodes))])
        cells.append(len(pts) * len(nodes) + np.arange(len(nodes)))
        pts.append(nodes + np.array([10.0 * i, 0.0, 0.0]))
    k = len(shapes[0])
    cell_type = cell_type or {4: "quad", 3: "triangle", 8: "quad8", 6: "triangle6"}[k]
    mesh = meshio.Mesh(np.vstack(pts), [(cell_type, np.array(cells))])
    return meshaudit.audit(mesh, profile=profile)
