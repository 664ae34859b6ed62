"""Non-conforming interfaces between solids: free faces lying on other free faces.

Where two solids meet on a common face they share its nodes, and the face is interior
(used twice). Where the meshes on the two sides do not match (a refined block of
hexahedra glued to a coarse one, tetrahedra against a hexahedron without pyramids
between), the faces on either side are free faces lying on one another in space:

- a **hanging node**: a corner p of a free face lies on another free face f (its host:
  inside it, or inside one of its edges) without being one of f's corners. p is within
  ``coincident_tolerance`` x min(s_f, s_p) of the plane of one of f's triangles (a
  quadrilateral is split into four triangles from its centre, the mean of its corners, to
  its sides: they hold the centre and the sides of its bilinear surface exactly, however
  warped), its projection is inside that triangle, and it is farther than the same
  distance from every corner of f (nearer is the coincident case) and not at the place
  of one of them. s_f is f's shortest side, s_p the shortest free-face side at p.
- a **non-conforming face**: a free face g lying on a free face f with other corners:
  every corner of g is a corner of f or hangs on f, or (a quadrilateral against two
  triangles, no hanging node at all) g is a triangle on three of a free
  quadrilateral f's corners. Both g and f are interface faces.

Candidates are found on a grid: cells the median host size (doubled while the hosts'
entries would pass a budget linear in the input), each host entered in every cell its
box (widened by its tolerance) covers, each node looked up in its own cell; pairs are
tested :data:`~meshaudit.mesh_checks.budget.BATCH` at a time, and a pile-up past
:data:`~meshaudit.mesh_checks.budget.CROWDED_PAIRS` stops the audit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..arrays import unique_values
from ..mesh.faces import key_halves, matching_rows, sorted_rows
from . import budget


@dataclass(frozen=True)
class FaceInterface:
    """What the check found, in rows of the free faces it was given.

    ``node`` (k,) hanging node indices and ``host`` (k,) the free-face row each lies on
    (a node on two hosts has two rows), ``on_edge`` (k,) whether it lies on one of the
    host's sides rather than inside it; ``interface`` (b,) bool the interface faces;
    ``links`` (l, 2) free-face rows meeting across the interface (a host and a face with
    a corner on it)."""

    node: np.ndarray
    host: np.ndarray
    on_edge: np.ndarray
    interface: np.ndarray
    links: np.ndarray


def face_interface(
    corners: np.ndarray,
    points: np.ndarray,
    rep: np.ndarray,
    relative: float,
    crack: np.ndarray,
) -> FaceInterface:
    """Hanging nodes and non-conforming faces among the free faces ``corners`` (b, 4)
    (see the module text). ``rep`` (n_points,) each node's place; ``relative`` the
    coincident-node tolerance; ``crack`` (b,) faces left out (crack faces lie on one
    another by definition)."""
    b = corners.shape[0]
    empty = np.zeros(0, dtype=np.int64)
    places = np.where(corners < 0, -1, rep[np.maximum(corners, 0)])
    hosts = np.flatnonzero(~crack)
    side = _side_lengths(points, corners)
    side[side <= 0] = np.inf
    host_short = side.min(axis=1)
    real = corners >= 0
    ends = _next_corner(corners)
    node_short = np.full(points.shape[0], np.inf)
    np.minimum.at(node_short, corners[real], side[real])
    np.minimum.at(node_short, ends[real], side[real])
    candidates = unique_values(places[hosts][real[hosts]])
    node, host, edge = empty, empty, np.zeros(0, dtype=bool)
    if hosts.size and candidates.size:
        node, host, edge = _search(
            corners, places, points, hosts, candidates, host_short, node_short, relative
        )
    interface, links = _faces_on_hosts(places, crack, node, host, b)
    return FaceInterface(node, host, edge, interface, links)


def _next_corner(corners: np.ndarray) -> np.ndarray:
    """(b, 4) the corner after each corner around its face (a triangle's column 3: -1)."""
    nxt = np.roll(corners, -1, axis=1)
    tri = corners[:, 3] < 0
    nxt[tri, 2] = corners[tri, 0]
    nxt[tri, 3] = -1
    return nxt


def _side_lengths(points: np.ndarray, corners: np.ndarray) -> np.ndarray:
    """(b, 4) length of side i (corner i to the next; a triangle's side 2 closes it,
    its column 3 is 0)."""
    nxt = _next_corner(corners)
    tri = corners[:, 3] < 0
    length = np.linalg.norm(points[np.maximum(nxt, 0)] - points[np.maximum(corners, 0)], axis=2)
    length[:, 3][tri] = 0.0
    return length


def _search(
    corners: np.ndarray,
    places: np.ndarray,
    points: np.ndarray,
    hosts: np.ndarray,
    candidates: np.ndarray,
    host_short: np.ndarray,
    node_short: np.ndarray,
    relative: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(node, host row, on edge) of every hanging node, found on a grid."""
    hc = corners[hosts]
    xyz = points[np.where(hc < 0, hc[:, :1], hc)]  # (h, 4, 3), a triangle's 4th = 1st
    margin = relative * host_short[hosts]
    low = xyz.min(axis=1) - margin[:, None]
    high = xyz.max(axis=1) + margin[:, None]
    cell = max(float(np.median((high - low).max(axis=1))), 1e-300)
    origin = low.min(axis=0)
    limit = 64 * hosts.size + 16 * candidates.size + 4096
    for _ in range(2100):
        first = np.floor((low - origin) / cell).astype(np.int64)
        span = np.floor((high - origin) / cell).astype(np.int64) - first + 1
        dims = np.floor((high.max(axis=0) - origin) / cell).astype(np.int64) + 1
        if int(span.prod(axis=1).sum()) <= limit and float(np.prod(dims.astype(float))) < 2.0**60:
            break
        cell *= 2.0
    entry, r = budget.expand(np.zeros(hosts.size, dtype=np.int64), span.prod(axis=1))
    ijk = np.stack(
        [
            first[entry, 0] + r % span[entry, 0],
            first[entry, 1] + (r // span[entry, 0]) % span[entry, 1],
            first[entry, 2] + r // (span[entry, 0] * span[entry, 1]),
        ],
        axis=1,
    )
    entry_key = (ijk[:, 0] * dims[1] + ijk[:, 1]) * dims[2] + ijk[:, 2]
    p = points[candidates]
    at = np.floor((p - origin) / cell).astype(np.int64)
    inside = np.all((at >= 0) & (at < dims), axis=1)
    nodes = candidates[inside]
    node_key = (at[inside, 0] * dims[1] + at[inside, 1]) * dims[2] + at[inside, 2]
    order = np.argsort(node_key, kind="stable")
    nodes, node_key = nodes[order], node_key[order]
    lo = np.searchsorted(node_key, entry_key, side="left")
    count = np.searchsorted(node_key, entry_key, side="right") - lo
    total = int(count.sum())
    if total > budget.CROWDED_PAIRS:
        budget.refuse(
            "hanging-node check on faces",
            total,
            "node/face",
            points[nodes[lo[int(np.argmax(count))]]],
            "faces and nodes piled on one another",
            ["hanging_nodes", "non_conforming_faces"],
        )
    found_node, found_host, found_edge = [], [], []
    for rows, at_pos in budget.batches(lo, count):
        h = entry[rows]
        q = nodes[at_pos]
        # most pairs are a face and one of its own corners (every free corner sits in
        # the cells of the faces around it): no hanging node, left out before the
        # geometry
        other = ~(places[hosts[h]] == q[:, None]).any(axis=1)
        h, q = h[other], q[other]
        hit, edge = _exact(
            points[q],
            q,
            xyz[h],
            places[hosts[h]],
            hc[h, 3] < 0,
            relative * np.minimum(host_short[hosts[h]], node_short[q]),
        )
        found_node.append(q[hit])
        found_host.append(hosts[h[hit]])
        found_edge.append(edge[hit])
    node = np.concatenate(found_node) if found_node else np.zeros(0, dtype=np.int64)
    host = np.concatenate(found_host) if found_host else np.zeros(0, dtype=np.int64)
    edge = np.concatenate(found_edge) if found_edge else np.zeros(0, dtype=bool)
    return node, host, edge


def _exact(
    p: np.ndarray,
    node_place: np.ndarray,
    xyz: np.ndarray,
    host_places: np.ndarray,
    tri: np.ndarray,
    tol: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """(hit, on edge) for each pair of a point ``p`` (k, 3) (its place ``node_place``)
    and a host face of corners ``xyz`` (k, 4, 3) at places ``host_places`` (k, 4)."""
    hit = ~(host_places == node_place[:, None]).any(axis=1)
    gap = np.linalg.norm(xyz - p[:, None, :], axis=2)
    hit &= (gap > tol[:, None]).all(axis=1) & (tol > 0)
    inside = _in_triangle(p, xyz[:, 0], xyz[:, 1], xyz[:, 2], tol) & tri
    # a quadrilateral: the four triangles from its centre to its sides, which hold the
    # centre and the sides of its bilinear surface exactly, however warped the face
    centre = xyz.mean(axis=1)
    for i in range(4):
        inside |= _in_triangle(p, xyz[:, i], xyz[:, (i + 1) % 4], centre, tol) & ~tri
    hit &= inside
    # on a side of the host: within the tolerance of one of its sides' segments
    nxt = np.roll(xyz, -1, axis=1)
    nxt[tri, 2] = xyz[tri, 0]
    edge = np.zeros(p.shape[0], dtype=bool)
    for i in range(4):
        near = _segment_distance(p, xyz[:, i], nxt[:, i]) <= tol
        edge |= near & ((i < 3) | ~tri)
    return hit, edge


def _in_triangle(
    p: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray, tol: np.ndarray
) -> np.ndarray:
    """Whether p lies within ``tol`` of triangle abc's plane with its projection inside
    the triangle (or within ``tol`` outside a side)."""
    n = np.cross(b - a, c - a)
    norm = np.linalg.norm(n, axis=1)
    ok = norm > 0
    unit = n / np.where(ok, norm, 1.0)[:, None]
    height = np.einsum("ij,ij->i", p - a, unit)
    ok &= np.abs(height) <= tol
    for u, v in ((a, b), (b, c), (c, a)):
        edge = v - u
        length = np.linalg.norm(edge, axis=1)
        # signed distance of p from side uv, inward positive, in the triangle's plane
        inward = np.einsum("ij,ij->i", np.cross(edge, p - u), unit) / np.where(
            length > 0, length, 1.0
        )
        ok &= inward >= -tol
    return ok


def _segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance of points p from segments ab (row by row)."""
    ab = b - a
    t = np.einsum("ij,ij->i", p - a, ab) / np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300)
    t = np.clip(t, 0.0, 1.0)
    return np.linalg.norm(p - (a + t[:, None] * ab), axis=1)


def _faces_on_hosts(
    places: np.ndarray, crack: np.ndarray, node: np.ndarray, host: np.ndarray, b: int
) -> tuple[np.ndarray, np.ndarray]:
    """(interface (b,) bool, links (l, 2)): the free faces lying on another free face,
    and the pairs (host, face with a corner hanging on it)."""
    interface = np.zeros(b, dtype=bool)
    links = np.zeros((0, 2), dtype=np.int64)
    n = np.int64(max(int(places.max(initial=0)) + 1, 1))
    if node.size:
        # which free faces have a corner at each hanging node's place
        real = places >= 0
        row = np.broadcast_to(np.arange(b)[:, None], places.shape)[real & ~crack[:, None]]
        at = places[real & ~crack[:, None]]
        order = np.argsort(at, kind="stable")
        at, row = at[order], row[order]
        lo = np.searchsorted(at, node, side="left")
        count = np.searchsorted(at, node, side="right") - lo
        which, pos = budget.expand(lo, count)
        g, f = row[pos], host[which]
        keep = g != f
        g, f = g[keep], f[keep]
        links = np.stack([f, g], axis=1)
        # (place, host) of every host's corners and of the nodes hanging on it
        own = np.broadcast_to(np.arange(b)[:, None], places.shape)[real]
        allowed = unique_values(np.concatenate([places[real] * b + own, node * b + host]))
        gp = places[g]
        code = np.where(gp < 0, -1, gp * b + f[:, None])
        spot = np.minimum(np.searchsorted(allowed, code), allowed.size - 1)
        on = (allowed[spot] == code) | (gp < 0)
        lying = on.all(axis=1)
        interface[g[lying]] = True
        interface[f[lying]] = True
    # a triangle on three corners of a quadrilateral: no hanging node at all
    quad = np.flatnonzero((places[:, 3] >= 0) & ~crack)
    tri = np.flatnonzero((places[:, 3] < 0) & ~crack)
    if quad.size and tri.size:
        tri_key = sorted_rows(places[tri])
        th, tl, _ = key_halves(tri_key, int(n))
        tri_code = np.stack([th, tl], axis=1)
        for skip in range(4):
            keep_cols = [c for c in range(4) if c != skip]
            sub = places[quad][:, keep_cols]
            sub = np.concatenate([np.full((quad.size, 1), -1), sub], axis=1)
            qh, ql, _ = key_halves(sorted_rows(sub), int(n))
            match, ti, qi = matching_rows(tri_code, np.stack([qh, ql], axis=1))
            interface[tri[ti]] = True
            interface[quad[qi]] = True
            if ti.size:
                links = np.concatenate([links, np.stack([quad[qi], tri[ti]], axis=1)])
            del match
    return interface, links
