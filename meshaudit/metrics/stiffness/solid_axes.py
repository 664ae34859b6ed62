"""The principal axes of a solid element and its undistorted twin, for the bending error.

Each solid has three principal axes, lines through it joining opposite parts (its
corners only; a quadratic element's midside nodes do not move them), whose lengths give
the undistorted element of the same proportions:

* hexahedron: the lines joining the centres (corner means) of opposite faces, the 3-D
  form of Robinson's e1, e2 of a quadrilateral; twin: the box of those three lengths;
* tetrahedron: the three lines joining the midpoints of opposite edges (the bimedians;
  a regular tetrahedron's are its three two-fold axes, at right angles); twin: the
  tetrahedron on four alternate corners of the box of those lengths (the regular one
  for a cube), whose bimedians are the box's axes;
* wedge: the mid-section triangle (the means of the end triangles' corners) gives its
  longest edge and the height over it, and the line joining the end triangles'
  centroids the third; twin: the right prism on the isosceles triangle of that base and
  height, of that length;
* pyramid: the base quadrilateral's e1 and e2 (lengths 2|e1|, 2|e2|) and the line from
  the base's centre to the apex; twin: the pyramid on the rectangle 2|e1| x 2|e2| with
  its apex above the centre at that height.

The twin is an affine image of the reference element (quadratic twins have their
midside nodes at the middle of straight edges), and its own axes by the rules above are
the coordinate axes with those lengths. The bending frames: every ordered pair (a, b) of
axes, X along axis a, Y along axis b made perpendicular to X, Z = X x Y (six frames).
"""

from __future__ import annotations

import numpy as np

from ...cells.registry import CellType
from .bending import BendingFrame

#: The tetrahedron on alternate corners of the box [-1, 1]^3 in the reference element's
#: corner order, positively oriented; its bimedians of edge pairs (0, 2)-(1, 3),
#: (0, 1)-(2, 3), (0, 3)-(1, 2) are the x, y and z axes.
_TETRA_CORNERS = np.array([[1, 1, 1], [-1, 1, -1], [1, -1, -1], [-1, -1, 1]], dtype=float)
_TETRA_PAIRS = (((0, 2), (1, 3)), ((0, 1), (2, 3)), ((0, 3), (1, 2)))


def _mean(c: np.ndarray, nodes: tuple[int, ...]) -> np.ndarray:
    return c[:, list(nodes)].mean(axis=1)


def axes(cell: CellType, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(axis vectors (n, 3, 3), row a the a-th axis; lengths (n, 3)) of solids ``x``
    (n, k, 3) (see the module docstring)."""
    c = x[:, : cell.n_corners]
    family = cell.family
    if family == "hexahedron":
        vectors = [
            _mean(c, (1, 2, 5, 6)) - _mean(c, (0, 3, 4, 7)),
            _mean(c, (2, 3, 6, 7)) - _mean(c, (0, 1, 4, 5)),
            _mean(c, (4, 5, 6, 7)) - _mean(c, (0, 1, 2, 3)),
        ]
    elif family == "tetra":
        vectors = [_mean(c, far) - _mean(c, near) for near, far in _TETRA_PAIRS]
    elif family == "pyramid":
        vectors = [
            (-c[:, 0] + c[:, 1] + c[:, 2] - c[:, 3]) / 2.0,
            (-c[:, 0] - c[:, 1] + c[:, 2] + c[:, 3]) / 2.0,
            c[:, 4] - _mean(c, (0, 1, 2, 3)),
        ]
    elif family == "wedge":
        mid = (c[:, :3] + c[:, 3:]) / 2.0
        edges = np.roll(mid, -1, axis=1) - mid
        longest = np.argmax((edges**2).sum(axis=2), axis=1)
        rows = np.arange(len(c))
        base = edges[rows, longest]
        start = mid[rows, longest]
        apex = mid[rows, (longest + 2) % 3]
        with np.errstate(divide="ignore", invalid="ignore"):  # a collapsed base: NaN
            along = ((apex - start) * base).sum(axis=1) / (base**2).sum(axis=1)
        vectors = [base, apex - start - along[:, None] * base, _mean(c, (3, 4, 5))]
        vectors[2] = vectors[2] - _mean(c, (0, 1, 2))
    else:
        raise KeyError(cell.name)
    stacked = np.stack(vectors, axis=1)
    return stacked, np.sqrt((stacked**2).sum(axis=2))


def undistorted(cell: CellType, lengths: np.ndarray) -> np.ndarray:
    """Nodes (n, k, 3) of the undistorted solids with axis ``lengths`` (n, 3): the
    reference element mapped affinely (see the module docstring)."""
    ref = cell.reference_nodes
    a, b, c = (lengths[:, i, None] for i in range(3))
    xi, eta, zeta = ref[:, 0], ref[:, 1], ref[:, 2]
    family = cell.family
    if family == "hexahedron":
        return np.stack([xi * a / 2.0, eta * b / 2.0, zeta * c / 2.0], axis=-1)
    if family == "tetra":
        v = _TETRA_CORNERS
        unit = v[0] + np.outer(xi, v[1] - v[0]) + np.outer(eta, v[2] - v[0])
        unit += np.outer(zeta, v[3] - v[0])
        return unit[None] * lengths[:, None, :] / 2.0
    if family == "pyramid":
        return np.stack([xi * a / 2.0, eta * b / 2.0, zeta * c], axis=-1)
    if family == "wedge":
        return np.stack([a * (xi + eta / 2.0 - 0.5), b * eta, zeta * c / 2.0], axis=-1)
    raise KeyError(cell.name)


def frames(vectors: np.ndarray) -> list[BendingFrame]:
    """The six frames (X, Y, Z), each (3, n) element-last, of axis ``vectors`` (n, 3, 3):
    X along axis a, Y along axis b != a made perpendicular to X, Z = X x Y."""
    with np.errstate(divide="ignore", invalid="ignore"):
        unit = vectors / np.sqrt((vectors**2).sum(axis=2, keepdims=True))
        out = []
        for a in range(3):
            for b in range(3):
                if a == b:
                    continue
                x, y = unit[:, a], unit[:, b]
                y = y - (x * y).sum(axis=1, keepdims=True) * x
                y = y / np.sqrt((y**2).sum(axis=1, keepdims=True))
                out.append((x.T, y.T, np.cross(x, y).T))
    return out
