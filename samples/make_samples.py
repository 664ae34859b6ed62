"""Generate the sample meshes of a fictional flat mounting bracket plate.

The part is a flat plate, 120 mm x 60 mm (x from 0 to 120, y from 0 to 60, z = 0), with one
bolt hole of radius 9 mm centred at (30, 30) and a 15 mm x 45 degree chamfer on the top-right
corner (120, 60).  It is meshed with 4-node quads (a mapped ring around the hole, blended to an
octagon, plus a uniform 5 mm grid on the rest of the plate) and a few 3-node triangles (the
strips where the octagon meets the square around the hole, the chamfer, and the
bottom-left corner cell, which is split in two).

Files written next to this script:

``bracket_plate.msh``
    Gmsh 4.1 ASCII.  Every element passes the quality limits checked below; nodes are shared
    (no coincident duplicates, no unused nodes); all elements are counter-clockwise.
``bracket_plate_defects.msh``
    The same mesh with five planted defects, one per element.  Everything else is identical
    (same nodes, same connectivity, same cell blocks).

Cell blocks, in file order: ``quad`` (physical 1 "plate"), ``triangle`` (physical 1 "plate"),
``line`` (physical 2 "bolt_hole"), ``line`` (physical 3 "outer_edge").  Element indices below
count quad and triangle elements only, in that read order (the line blocks come last), so the
0-based index equals the 1-based position minus one.

Planted defects in ``bracket_plate_defects.msh`` (index 0-based, position 1-based):

=====  ========  ========  ===========================================================
index  position  type      what was done
=====  ========  ========  ===========================================================
  292       293  quad      square cell at x 85..90, y 30..35: node order reversed to
                           n1 n4 n3 n2, so it is clockwise and all four corner
                           Jacobians are negative
   74        75  quad      ring cell just above the hole: connectivity positions 2
                           and 3 swapped, giving a self-intersecting bow-tie
  226       227  quad      plate corner node (120, 0) moved to (116.5, 3.5): the quad
                           is non-convex, interior angle 223.6 degrees at position 2
  209       210  quad      plate corner node (0, 60) dragged out to (-13, 60): sliver,
                           min angle 21.0 degrees, skew 52.4 degrees, scaled
                           Jacobian 0.359
  353       354  triangle  plate corner node (0, 0) moved to (2.3, 2.3): sliver,
                           min angle 4.6 degrees
=====  ========  ========  ===========================================================

Each moved node is a plate corner used by that one element only, so no neighbour changes
shape (the plate outline does).  In the defect file exactly these five elements fail; every
other element still passes.

Rerun from the repository root with::

    python samples/make_samples.py

The output is deterministic (same bytes on every run).  Each file is written to a temporary
file in the same folder, read back and compared, then renamed into place.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import meshio
import numpy as np

OUT_DIR = Path(__file__).resolve().parent

# Part and mesh parameters (millimetres).
PLATE_W = 120.0
PLATE_H = 60.0
HOLE_C = np.array([30.0, 30.0])
HOLE_R = 9.0
GRID = 5.0  # background grid spacing
BOX_CELLS = 12  # the square block around the hole is BOX_CELLS x BOX_CELLS grid cells
OCT_CUT = 4  # the ring's octagon cuts the corners of that square OCT_CUT cells deep
RING_LAYERS = 6  # radial layers between the hole and the octagon
CHAMFER = 3  # top-right chamfer legs, in grid cells

# Quality limits the passing mesh must meet.
QUAD_ANGLE = (50.0, 130.0)
QUAD_ASPECT = 4.0
QUAD_SKEW = 25.0
QUAD_TAPER = 0.4
QUAD_SCALED_JAC = 0.6
TRI_ANGLE = (35.0, 110.0)

# Physical groups: name -> (tag, dim).
PHYS_PLATE, PHYS_HOLE, PHYS_OUTER = 1, 2, 3


def require(condition: object, detail: object) -> None:
    """Self-check that also runs under ``python -O``."""
    if not condition:
        raise AssertionError(detail)


# --------------------------------------------------------------------------------------------
# Quality measures (vectorised over elements)
# --------------------------------------------------------------------------------------------
def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def corner_terms(xy: np.ndarray, conn: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Interior angles (degrees, 0..360 for a counter-clockwise element) and scaled corner
    Jacobians cross(a, b) / (|a| |b|), with a the edge to the next node and b the edge to the
    previous node.  Shapes (n_elem, n_corner)."""
    p = xy[conn]
    a = np.roll(p, -1, axis=1) - p
    b = np.roll(p, 1, axis=1) - p
    cr = _cross(a, b)
    dot = np.einsum("ijk,ijk->ij", a, b)
    angle = np.mod(np.degrees(np.arctan2(cr, dot)), 360.0)
    scaled = cr / (np.linalg.norm(a, axis=2) * np.linalg.norm(b, axis=2))
    return angle, scaled


def quad_metrics(xy: np.ndarray, quads: np.ndarray) -> dict[str, np.ndarray]:
    """Angles, scaled Jacobian and the principal-axes aspect ratio, skew and taper."""
    angle, scaled = corner_terms(xy, quads)
    x1, x2, x3, x4 = (xy[quads[:, k]] for k in range(4))
    e1 = (-x1 + x2 + x3 - x4) / 4.0
    e2 = (-x1 - x2 + x3 + x4) / 4.0
    e3 = (x1 - x2 + x3 - x4) / 4.0
    n1 = np.linalg.norm(e1, axis=1)
    n2 = np.linalg.norm(e2, axis=1)
    det = _cross(e1, e2)
    # a degenerate (e.g. bow-tie) quad can have a zero axis: let it give inf / nan, which
    # fails every limit below
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_between = np.clip(np.sum(e1 * e2, axis=1) / (n1 * n2), -1.0, 1.0)
        alpha = _cross(e3, e2) / det
        beta = _cross(e1, e3) / det
        aspect = np.maximum(n1, n2) / np.minimum(n1, n2)
    return {
        "min_angle": angle.min(axis=1),
        "max_angle": angle.max(axis=1),
        "scaled_jacobian": scaled.min(axis=1),
        "aspect": aspect,
        "skew": np.abs(90.0 - np.degrees(np.arccos(cos_between))),
        "taper": np.maximum(np.abs(alpha), np.abs(beta)),
    }


def quad_fails(m: dict[str, np.ndarray]) -> np.ndarray:
    return ~(
        (m["min_angle"] >= QUAD_ANGLE[0])
        & (m["max_angle"] <= QUAD_ANGLE[1])
        & (m["scaled_jacobian"] >= QUAD_SCALED_JAC)
        & (m["aspect"] <= QUAD_ASPECT)
        & (m["skew"] <= QUAD_SKEW)
        & (m["taper"] <= QUAD_TAPER)
    )


def tri_fails(xy: np.ndarray, tris: np.ndarray) -> np.ndarray:
    angle, scaled = corner_terms(xy, tris)
    return ~(
        (scaled.min(axis=1) > 0.0)
        & (angle.min(axis=1) >= TRI_ANGLE[0])
        & (angle.max(axis=1) <= TRI_ANGLE[1])
    )


# --------------------------------------------------------------------------------------------
# Mesh construction
# --------------------------------------------------------------------------------------------
def grid_block(x0: float, y0: float, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """n x n grid of GRID-sized cells from (x0, y0).  Returns node coordinates, the
    counter-clockwise corner indices of every cell, shape (n, n, 4) indexed [j, i], and the
    cell (i, j) indices."""
    i, j = np.meshgrid(np.arange(n + 1), np.arange(n + 1))
    xy = np.column_stack([x0 + GRID * i.ravel(), y0 + GRID * j.ravel()])
    ci, cj = np.meshgrid(np.arange(n), np.arange(n))
    base = ci + cj * (n + 1)
    cells = np.stack([base, base + 1, base + n + 2, base + n + 1], axis=-1)
    return xy, cells, np.stack([ci, cj], axis=-1)


def drop_corner(cells: np.ndarray, k: np.ndarray) -> np.ndarray:
    """Triangles made from quads (m, 4) by dropping corner k (m,); order stays CCW."""
    keep = (k[:, None] + np.arange(1, 4)[None, :]) % 4
    return np.take_along_axis(cells, keep, axis=1)


def octagon_nodes() -> np.ndarray:
    """Counter-clockwise nodes on the octagon that bounds the ring, on the GRID lattice."""
    lo, hi = 0.0, GRID * BOX_CELLS
    cut = GRID * OCT_CUT
    verts = np.array(
        [
            [hi, lo + cut],
            [hi, hi - cut],
            [hi - cut, hi],
            [lo + cut, hi],
            [lo, hi - cut],
            [lo, lo + cut],
            [lo + cut, lo],
            [hi - cut, lo],
        ]
    )
    nxt = np.roll(verts, -1, axis=0)
    steps = np.maximum(np.abs(nxt - verts).max(axis=1) / GRID, 1).astype(int)
    if not np.all(steps == steps[0]):
        raise ValueError("octagon sides must have the same number of segments")
    t = np.arange(steps[0]) / steps[0]
    pts = verts[:, None, :] + t[None, :, None] * (nxt - verts)[:, None, :]
    return pts.reshape(-1, 2)


def ring_block() -> tuple[np.ndarray, np.ndarray]:
    """Mapped ring: straight rays from the hole centre to each octagon node, geometric radial
    spacing so that cells stay close to square from the hole edge out to the octagon."""
    outer = octagon_nodes()
    rel = outer - HOLE_C
    dist = np.linalg.norm(rel, axis=1)
    unit = rel / dist[:, None]
    s = np.arange(RING_LAYERS + 1) / RING_LAYERS
    radius = HOLE_R * (dist[None, :] / HOLE_R) ** s[:, None]  # (layer, ray)
    xy = HOLE_C + radius[..., None] * unit[None, :, :]
    xy[-1] = outer  # exact lattice coordinates on the octagon
    n = len(outer)
    i, j = np.meshgrid(np.arange(n), np.arange(RING_LAYERS))
    a = (i + j * n).ravel()
    b = ((i + 1) % n + j * n).ravel()
    quads = np.column_stack([b, a, a + n, b + n])  # starts on the hole side, CCW
    return xy.reshape(-1, 2), quads


def build_plate() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return merged node coordinates (n, 2), quads, triangles, hole edges, outer edges."""
    parts_xy: list[np.ndarray] = []
    parts_quad: list[np.ndarray] = []
    parts_tri: list[np.ndarray] = []
    offset = 0

    def add(xy: np.ndarray, quads: np.ndarray, tris: np.ndarray) -> None:
        nonlocal offset
        parts_xy.append(xy)
        parts_quad.append(quads.reshape(-1, 4) + offset)
        parts_tri.append(tris.reshape(-1, 3) + offset)
        offset += len(xy)

    # 1) ring around the hole
    xy, quads = ring_block()
    add(xy, quads, np.empty((0, 3), int))

    # 2) corners of the square block that lie outside the octagon
    n = BOX_CELLS
    xy, cells, ij = grid_block(0.0, 0.0, n)
    ci, cj = ij[..., 0], ij[..., 1]
    depth = np.minimum(ci, n - 1 - ci) + np.minimum(cj, n - 1 - cj)
    left, low = ci < n / 2, cj < n / 2
    # corner of the cell farthest from its nearest square corner (indices into p00 p10 p11 p01)
    far = np.select([left & low, ~left & low, ~left & ~low], [2, 3, 0], default=1)
    full = depth <= OCT_CUT - 2
    plate_corner = (ci == 0) & (cj == 0)  # bottom-left plate corner: split into two triangles
    split = (depth == OCT_CUT - 1) | plate_corner
    corner_tri = drop_corner(cells[split], far[split])
    pc = cells[plate_corner][0]
    extra_tri = np.array([pc[[1, 2, 3]]])  # the other half of the split corner cell
    add(xy, cells[full & ~plate_corner], np.vstack([corner_tri, extra_tri]))

    # 3) right-hand grid with the chamfered top-right corner
    xy, cells, ij = grid_block(GRID * BOX_CELLS, 0.0, n)
    ci, cj = ij[..., 0], ij[..., 1]
    depth = (n - 1 - ci) + (n - 1 - cj)
    keep = depth >= CHAMFER
    cut = depth == CHAMFER - 1
    near = np.full(cut.sum(), 2)  # drop the node nearest the chamfered corner
    add(xy, cells[keep], drop_corner(cells[cut], near))

    # merge coincident nodes
    all_xy = np.vstack(parts_xy)
    key = np.round(all_xy, 6)
    _, first, inverse = np.unique(key, axis=0, return_index=True, return_inverse=True)
    inverse = inverse.ravel()
    xy = all_xy[first]
    quads = inverse[np.vstack(parts_quad)]
    tris = inverse[np.vstack(parts_tri)]
    # drop lattice nodes no element uses (inside the ring, beyond the chamfer)
    used = np.unique(np.concatenate([quads.ravel(), tris.ravel()]))
    compact = np.full(len(xy), -1)
    compact[used] = np.arange(len(used))
    xy, quads, tris = xy[used], compact[quads], compact[tris]

    # boundary edges: edges used by exactly one element, in element order
    edges = np.vstack(
        [np.stack([e, np.roll(e, -1, axis=1)], axis=-1).reshape(-1, 2) for e in (quads, tris)]
    )
    _, first_use, count = np.unique(
        np.sort(edges, axis=1), axis=0, return_index=True, return_counts=True
    )
    bnd = edges[np.sort(first_use[count == 1])]
    if np.any(count > 2):
        raise AssertionError("an edge is shared by more than two elements")
    mid = xy[bnd].mean(axis=1)
    on_hole = np.linalg.norm(mid - HOLE_C, axis=1) < HOLE_R + 1.0
    hole_edges, outer_edges = bnd[on_hole], bnd[~on_hole]

    # renumber nodes so that they are grouped by gmsh entity, in the order the file lists them
    dim_tags = node_entities(len(xy), tris, hole_edges, outer_edges)
    order = np.lexsort((np.arange(len(xy)), dim_tags[:, 1], dim_tags[:, 0]))
    new_id = np.empty_like(order)
    new_id[order] = np.arange(len(order))
    return (
        xy[order],
        new_id[quads],
        new_id[tris],
        new_id[hole_edges],
        new_id[outer_edges],
    )


def node_entities(
    n_nodes: int, tris: np.ndarray, hole: np.ndarray, outer: np.ndarray
) -> np.ndarray:
    """(dim, tag) of the gmsh entity each node is classified on: curve 1 = hole edge,
    curve 2 = outer edge, surface 2 = interior nodes touched by a triangle, surface 1 = the
    other interior nodes.  Quads live on surface 1 and triangles on surface 2."""
    dim_tags = np.tile([2, 1], (n_nodes, 1))
    dim_tags[np.unique(tris)] = [2, 2]
    dim_tags[np.unique(outer)] = [1, 2]
    dim_tags[np.unique(hole)] = [1, 1]
    return dim_tags


# --------------------------------------------------------------------------------------------
# Checks
# --------------------------------------------------------------------------------------------
def check_passing(xy: np.ndarray, quads: np.ndarray, tris: np.ndarray) -> None:
    used = np.zeros(len(xy), bool)
    used[quads.ravel()] = True
    used[tris.ravel()] = True
    require(used.all(), "unused nodes")
    require(len(np.unique(np.round(xy, 6), axis=0)) == len(xy), "coincident nodes")
    _, scaled_q = corner_terms(xy, quads)
    _, scaled_t = corner_terms(xy, tris)
    require((scaled_q > 0).all() and (scaled_t > 0).all(), "element not counter-clockwise")
    m = quad_metrics(xy, quads)
    bad = np.flatnonzero(quad_fails(m))
    require(bad.size == 0, f"quads below the limits: {bad}")
    bad = np.flatnonzero(tri_fails(xy, tris))
    require(bad.size == 0, f"triangles below the limits: {bad}")
    area = 0.5 * _cross(xy[quads[:, 2]] - xy[quads[:, 0]], xy[quads[:, 3]] - xy[quads[:, 1]])
    tri_area = 0.5 * _cross(xy[tris[:, 1]] - xy[tris[:, 0]], xy[tris[:, 2]] - xy[tris[:, 0]])
    expected = PLATE_W * PLATE_H - np.pi * HOLE_R**2 - 0.5 * (CHAMFER * GRID) ** 2
    total = area.sum() + tri_area.sum()
    # the hole is a polygon, so the meshed area is a little larger than the exact one
    require(abs(total - expected) < 0.02 * np.pi * HOLE_R**2, (total, expected))


# --------------------------------------------------------------------------------------------
# Defects
# --------------------------------------------------------------------------------------------
# (expected 0-based index, cell type, description); the index is checked when generating.
# 0-based element index of each planted defect; checked against the mesh when generating so
# that the table in the module docstring cannot drift from the files.
DEFECTS = {
    "reversed": 292,
    "bowtie": 74,
    "nonconvex": 226,
    "sliver_quad": 209,
    "sliver_tri": 353,
}
NONCONVEX_MOVE = ((120.0, 0.0), (116.5, 3.5))
SLIVER_QUAD_MOVE = ((0.0, 60.0), (-13.0, 60.0))
SLIVER_TRI_MOVE = ((0.0, 0.0), (2.3, 2.3))


def _node_at(xy: np.ndarray, p: tuple[float, float]) -> int:
    d = np.linalg.norm(xy - np.asarray(p), axis=1)
    k = int(np.argmin(d))
    require(d[k] < 1e-9, p)
    return k


def _elements_with(conn: np.ndarray, node: int) -> np.ndarray:
    return np.flatnonzero((conn == node).any(axis=1))


def plant_defects(
    xy: np.ndarray, quads: np.ndarray, tris: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[tuple[int, str, str]]]:
    xy, quads, tris = xy.copy(), quads.copy(), tris.copy()
    nq = len(quads)
    cen = xy[quads].mean(axis=1)
    table: list[tuple[int, str, str]] = []

    # reversed quad: a square cell of the right-hand grid
    k = int(np.argmin(np.linalg.norm(cen - [87.5, 32.5], axis=1)))
    quads[k] = quads[k, [0, 3, 2, 1]]
    table.append((k, "quad", "node order reversed to n1 n4 n3 n2 (clockwise)"))

    # bow-tie: a ring cell above the hole (not a parallelogram, so its principal axes stay
    # non-zero), connectivity positions 2 and 3 swapped
    k = int(np.argmin(np.linalg.norm(cen - (HOLE_C + np.array([0.0, 14.0])), axis=1)))
    quads[k, [1, 2]] = quads[k, [2, 1]]
    table.append((k, "quad", "connectivity positions 2 and 3 swapped (bow-tie)"))

    # non-convex: the bottom-right plate corner node lies in one quad only
    node = _node_at(xy, NONCONVEX_MOVE[0])
    owners = _elements_with(quads, node)
    require(
        owners.size == 1 and _elements_with(tris, node).size == 0,
        "corner node must be in one quad only",
    )
    xy[node] = NONCONVEX_MOVE[1]
    table.append((int(owners[0]), "quad", f"node {NONCONVEX_MOVE[0]} moved to {NONCONVEX_MOVE[1]}"))

    # sliver quad: the top-left plate corner node, dragged out along the top edge
    node = _node_at(xy, SLIVER_QUAD_MOVE[0])
    owners = _elements_with(quads, node)
    require(
        owners.size == 1 and _elements_with(tris, node).size == 0,
        "corner node must be in one quad only",
    )
    xy[node] = SLIVER_QUAD_MOVE[1]
    table.append(
        (int(owners[0]), "quad", f"node {SLIVER_QUAD_MOVE[0]} moved to {SLIVER_QUAD_MOVE[1]}")
    )

    # sliver triangle: the bottom-left plate corner node, pulled towards the opposite edge
    node = _node_at(xy, SLIVER_TRI_MOVE[0])
    owners = _elements_with(tris, node)
    require(
        owners.size == 1 and _elements_with(quads, node).size == 0,
        "corner node must be in one triangle only",
    )
    xy[node] = SLIVER_TRI_MOVE[1]
    table.append(
        (
            nq + int(owners[0]),
            "triangle",
            f"node {SLIVER_TRI_MOVE[0]} moved to {SLIVER_TRI_MOVE[1]}",
        )
    )
    return xy, quads, tris, table


# --------------------------------------------------------------------------------------------
# Output
# --------------------------------------------------------------------------------------------
def to_meshio(
    xy: np.ndarray, quads: np.ndarray, tris: np.ndarray, hole: np.ndarray, outer: np.ndarray
) -> meshio.Mesh:
    points = np.column_stack([xy, np.zeros(len(xy))])
    dim_tags = node_entities(len(xy), tris, hole, outer)
    blocks = [("quad", quads, 2, 1, PHYS_PLATE), ("triangle", tris, 2, 2, PHYS_PLATE)]
    blocks += [("line", hole, 1, 1, PHYS_HOLE), ("line", outer, 1, 2, PHYS_OUTER)]
    return meshio.Mesh(
        points,
        [(name, conn.astype(np.int64)) for name, conn, *_ in blocks],
        point_data={"gmsh:dim_tags": dim_tags},
        cell_data={
            "gmsh:physical": [np.full(len(b[1]), b[4]) for b in blocks],
            "gmsh:geometrical": [np.full(len(b[1]), b[3]) for b in blocks],
        },
        field_data={
            "plate": np.array([PHYS_PLATE, 2]),
            "bolt_hole": np.array([PHYS_HOLE, 1]),
            "outer_edge": np.array([PHYS_OUTER, 1]),
        },
    )


def write_checked(path: Path, mesh: meshio.Mesh) -> None:
    """Write through a temporary file in the same folder, verify the read-back, rename."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        os.chmod(tmp, 0o644)
        meshio.write(tmp, mesh, file_format="gmsh", binary=False)
        back = meshio.read(tmp, file_format="gmsh")
        require(np.array_equal(back.points, mesh.points), "points changed on read-back")
        require(
            [c.type for c in back.cells] == [c.type for c in mesh.cells],
            "cell blocks changed on read-back",
        )
        for got, want in zip(back.cells, mesh.cells, strict=True):
            require(np.array_equal(got.data, want.data), f"{want.type} connectivity changed")
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def main() -> None:
    xy, quads, tris, hole, outer = build_plate()
    check_passing(xy, quads, tris)
    good = to_meshio(xy, quads, tris, hole, outer)
    write_checked(OUT_DIR / "bracket_plate.msh", good)

    bxy, bquads, btris, table = plant_defects(xy, quads, tris)
    failing = np.concatenate(
        [
            np.flatnonzero(quad_fails(quad_metrics(bxy, bquads))),
            len(bquads) + np.flatnonzero(tri_fails(bxy, btris)),
        ]
    )
    planted = sorted(k for k, *_ in table)
    require(sorted(failing.tolist()) == planted, (failing, planted))
    require([k for k, *_ in table] == list(DEFECTS.values()), "update the docstring table")
    write_checked(OUT_DIR / "bracket_plate_defects.msh", to_meshio(bxy, bquads, btris, hole, outer))

    m = quad_metrics(xy, quads)
    print(f"nodes {len(xy)}, quads {len(quads)}, triangles {len(tris)}, ", end="")
    print(f"hole edges {len(hole)}, outer edges {len(outer)}")
    print(
        "passing quads: angle {:.1f}..{:.1f} deg, aspect <= {:.2f}, skew <= {:.1f} deg, "
        "taper <= {:.3f}, scaled Jacobian >= {:.3f}".format(
            m["min_angle"].min(),
            m["max_angle"].max(),
            m["aspect"].max(),
            m["skew"].max(),
            m["taper"].max(),
            m["scaled_jacobian"].min(),
        )
    )
    ta, _ = corner_terms(xy, tris)
    print(f"passing triangles: angle {ta.min():.1f}..{ta.max():.1f} deg")
    print("planted defects (index 0-based, position 1-based):")
    dm = quad_metrics(bxy, bquads)
    for k, kind, what in table:
        conn = bquads[k] if kind == "quad" else btris[k - len(bquads)]
        coords = ", ".join(f"({x:g}, {y:g})" for x, y in bxy[conn])
        angle, scaled = corner_terms(bxy, conn[None, :])
        print(f"  {k:4d} {k + 1:4d} {kind:8s} {what}")
        print(f"            nodes {coords}")
        print(
            "            corner angles (CCW convention) "
            + " ".join(f"{a:.1f}" for a in angle[0])
            + ", scaled corner Jacobians "
            + " ".join(f"{j:.3f}" for j in scaled[0])
        )
        if kind == "quad":
            print(
                f"            aspect {dm['aspect'][k]:.2f}, skew {dm['skew'][k]:.1f} deg, "
                f"taper {dm['taper'][k]:.3f}"
            )


if __name__ == "__main__":
    main()
