"""Mesh topology: which elements share an edge, built with sorts, not per-element loops.

Edges run between corner nodes only (a quadratic element's midside node lies on its edge,
so corner pairs identify the edge for linear and quadratic elements alike). Element
``e`` with corners c0..c(k-1) traverses its edges c0->c1, c1->c2, ..., c(k-1)->c0 in
that direction: for a consistently oriented surface two elements sharing an edge
traverse it in opposite directions.

:func:`edge_table` is the shared helper (free edges, non-manifold edges and orientation
all start from it); :func:`orientation_groups` splits each connected patch into the
elements that agree with one another and those that are flipped against them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import ElementMesh


@dataclass(frozen=True)
class EdgeTable:
    """Every element edge once per element using it ("edge uses"), plus undirected edges.

    ``start``/``end`` (m,) are the node indices in the element's traversal direction,
    ``element`` (m,) the 0-based audited-element index (these three are int32 when the
    counts allow, see :func:`index_dtype`), ``local`` (m,) int8 the edge number
    within the element (edge i runs from corner i to corner i+1; a side whose two corners
    are one node, as in a collapsed crack-tip quad, is left out), ``edge`` (m,) the
    undirected edge number in 0..n_edges-1 (int32 when the count allows), ``nodes``
    (n_edges, 2) its two nodes (smaller first; int32 when the node count allows) and
    ``uses`` (n_edges,) how many element
    edges map to it: 1 is a free (boundary) edge, 2 an interior edge, 3 or more a non-manifold edge.
    ``first`` and ``last`` (n_edges,): the positions of each edge's first and last use
    (the two uses of an interior edge), when known (None in a table that has dropped
    uses, see :func:`meshaudit.mesh_checks.edges.kept_table`).
    """

    start: np.ndarray
    end: np.ndarray
    element: np.ndarray
    local: np.ndarray
    edge: np.ndarray
    nodes: np.ndarray
    uses: np.ndarray
    first: np.ndarray | None = None
    last: np.ndarray | None = None

    @property
    def n_edges(self) -> int:
        return int(self.nodes.shape[0])

    @property
    def forward(self) -> np.ndarray:
        """(m,) bool: the use runs from the smaller node to the larger one."""
        return self.start < self.end


#: Largest count stored in int32 index arrays; beyond it they are int64. Half the int32
#: range, so sums of two indices (as in :func:`orientation_groups`) cannot overflow.
INT32_LIMIT = np.iinfo(np.int32).max // 2


def index_dtype(count: int) -> type[np.signedinteger]:
    """int32 for indices into ``count`` items when they fit in :data:`INT32_LIMIT`."""
    return np.int32 if count <= INT32_LIMIT else np.int64


def edge_table(mesh: ElementMesh) -> EdgeTable:
    """Edge uses and undirected edges of every audited element of ``mesh``."""
    start, end, elem, loc = _edge_uses(mesh)
    real = start != end  # a side collapsed onto one node (crack-tip quad) is no edge
    if not real.all():
        start, end, elem, loc = start[real], end[real], elem[real], loc[real]
    del real
    key, span_bits = edge_keys(start, end)
    bound = (max(mesh.n_points, 1) << span_bits) if key.size else 1
    uniq, edge, uses, first, last = unique_keys(key, bound, ends=True)
    del key
    nodes = np.empty((uniq.size, 2), dtype=index_dtype(mesh.n_points))
    np.right_shift(uniq, np.int64(span_bits), out=nodes[:, 0], casting="unsafe")
    uniq &= np.int64((1 << span_bits) - 1)
    nodes[:, 1] = uniq
    del uniq
    nodes[:, 1] += nodes[:, 0]
    return EdgeTable(
        start=start,
        end=end,
        element=elem,
        local=loc,
        edge=edge,
        nodes=nodes,
        uses=uses,
        first=first,
        last=last,
    )


def edge_keys(start: np.ndarray, end: np.ndarray) -> tuple[np.ndarray, int]:
    """(key, span_bits): one int64 key per edge use, ``low << span_bits | (high - low)``
    with low, high the smaller and larger node, and span_bits the bits the largest
    high - low needs.

    Keys order edges exactly as (low, high) does, but need only as many bits as the
    node numbering's widest edge span: a mesh numbered with locality (a mesher's usual
    output: neighbours get nearby numbers) gives keys short enough to be sorted together
    with their positions in one 64-bit word (:func:`sort_keys`'s one-sort path), where
    low x n_nodes + high would need two sorts from about 10^7 edge uses on."""
    low = np.minimum(start, end).astype(np.int64)
    key = np.maximum(start, end).astype(np.int64)
    key -= low
    span_bits = max(int(key.max()).bit_length(), 1) if key.size else 1
    low <<= np.int64(span_bits)
    key |= low
    return key, span_bits


def _edge_uses(mesh: ElementMesh) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(start, end, element, local) of every element side, element by element.

    Node and element numbers are int32 when :func:`index_dtype` allows (half the memory
    of int64 on large meshes), ``local`` is int8."""
    sizes = [b.cell.n_corners * len(b) for b in mesh.blocks]
    m = sum(sizes)
    node_type, element_type = index_dtype(mesh.n_points), index_dtype(mesh.n_elements)
    start, end = np.empty(m, dtype=node_type), np.empty(m, dtype=node_type)
    elem, loc = np.empty(m, dtype=element_type), np.empty(m, dtype=np.int8)
    at = 0
    for block, size in zip(mesh.blocks, sizes, strict=True):
        k = block.cell.n_corners
        corners = block.connectivity[:, :k]
        part = slice(at, at + size)
        start[part].reshape(-1, k)[:] = corners
        ends = end[part].reshape(-1, k)
        ends[:, :-1] = corners[:, 1:]
        ends[:, -1] = corners[:, 0]
        elem[part].reshape(-1, k)[:] = block.index[:, None]
        loc[part].reshape(-1, k)[:] = np.arange(k, dtype=np.int8)
        at += size
    return start, end, elem, loc


def corner_rows(mesh: ElementMesh, positions: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """[(where, corners)]: for each corner count k present, the rows of ``positions``
    (ascending element positions) with k corners and their corner nodes (w, k)."""
    found: dict[int, list[tuple[np.ndarray, np.ndarray]]] = {}
    for block in mesh.blocks:
        k = block.cell.n_corners
        rows = np.searchsorted(block.index, positions)
        inside = (rows < len(block)) & (block.index[np.minimum(rows, len(block) - 1)] == positions)
        if inside.any():
            found.setdefault(k, []).append(
                (np.flatnonzero(inside), block.connectivity[rows[inside], :k])
            )
    out = []
    for parts in found.values():
        where = np.concatenate([w for w, _ in parts])
        out.append((where, np.concatenate([c for _, c in parts])))
    return out


def sort_keys(key: np.ndarray, bound: int) -> tuple[np.ndarray, np.ndarray]:
    """(order, key[order]) for int64 keys in [0, bound), ties in position order.

    When key and position fit together in 63 bits one plain sort of (key << bits |
    position) replaces the argsort (several times faster on large arrays)."""
    k = key.size
    bits = max(int(k - 1).bit_length(), 1)
    if bound <= (1 << (63 - bits)):
        packed = key << bits
        packed |= np.arange(k, dtype=np.int64)
        packed.sort()
        order = packed & np.int64((1 << bits) - 1)
        packed >>= bits
        return order, packed
    key_bits = max(int(bound - 1).bit_length(), 1)
    low_bits = key_bits // 2
    if key_bits - low_bits + bits <= 63:
        # too wide for one packed sort (large meshes: node pairs need 2 x log2(nodes)
        # bits): two, least significant half first, each stable by its position; the
        # work arrays are reused (fresh memory is slow to touch on large meshes)
        position = np.arange(k, dtype=np.int64)
        first = np.bitwise_and(key, np.int64((1 << low_bits) - 1))
        _packed_order(first, position, bits)
        second = np.take(key, first)
        second >>= np.int64(low_bits)
        _packed_order(second, position, bits)
        order = np.take(first, second, out=position)
        return order, np.take(key, order, out=first)
    order = np.argsort(key, kind="stable")
    return order, key[order]


def _packed_order(work: np.ndarray, position: np.ndarray, bits: int) -> None:
    """Replace non-negative keys ``work`` by their stable ascending order, in place
    (``position`` is 0..n-1; key << bits | position must stay below 2^63)."""
    work <<= np.int64(bits)
    work |= position
    work.sort()
    work &= np.int64((1 << bits) - 1)


def unique_keys(key: np.ndarray, bound: int, ends: bool = False) -> tuple[np.ndarray, ...]:
    """``np.unique(key, return_inverse=True, return_counts=True)`` for int64 keys in
    [0, bound), using :func:`sort_keys`; the inverse and the counts are int32 when
    :func:`index_dtype` allows. With ``ends`` also the position of each distinct key's
    first and last occurrence (int32 likewise)."""
    k = key.size
    width = index_dtype(k)  # int32 when the keys are few enough: half the memory
    if k == 0:
        empty = np.zeros(0, dtype=np.int64)
        narrow = np.zeros(0, dtype=width)
        return (empty, narrow, narrow, narrow, narrow) if ends else (empty, narrow, narrow)
    order, sorted_key = sort_keys(key, bound)
    new = np.empty(k, dtype=bool)
    new[0] = True
    np.not_equal(sorted_key[1:], sorted_key[:-1], out=new[1:])
    starts = np.flatnonzero(new)
    uniq = sorted_key[starts]
    del sorted_key
    rank = np.cumsum(new, dtype=width)
    del new
    rank -= 1
    inverse = np.empty(k, dtype=width)
    inverse[order] = rank
    del rank
    counts = np.empty(starts.size, dtype=width)
    np.subtract(starts[1:], starts[:-1], out=counts[:-1], casting="unsafe")
    counts[-1] = k - starts[-1]
    if not ends:
        return uniq, inverse, counts
    first = order[starts].astype(width)
    starts += counts
    starts -= 1
    last = order[starts].astype(width)
    return uniq, inverse, counts, first, last


def interior_pairs(table: EdgeTable) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Element pairs across every edge used exactly twice (manifold interior edges).

    Returns (first, second, same_direction): element indices (p,) and whether the two
    elements traverse the shared edge in the same direction (an orientation clash).
    Edges with three or more uses are left out: orientation is undefined across them.
    """
    two = table.uses[table.edge] == 2
    uses = np.flatnonzero(two)
    order = uses[sort_keys(table.edge[uses].astype(np.int64), table.n_edges)[0]]
    first, second = order[0::2], order[1::2]
    same = table.forward[first] == table.forward[second]
    return table.element[first].astype(np.int64), table.element[second].astype(np.int64), same


def connected_labels(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Connected-component label of each of ``n`` vertices of the graph with edges a-b.

    The label is the smallest vertex index of the component. Vectorised hook-and-compress:
    each round every root hooks onto the smallest root it touches, then the label trees
    are flattened by pointer jumping; the number of roots at least halves per round, so
    the rounds grow with log(n), not with the mesh size.
    """
    label = np.arange(n, dtype=np.int64)
    if a.size == 0:
        return label
    if 4 * a.size < n:  # few edges (free edges, node pairs): label only their vertices
        touched, inverse = np.unique(np.concatenate([a, b]), return_inverse=True)
        inverse = inverse.ravel()
        small = connected_labels(touched.size, inverse[: a.size], inverse[a.size :])
        label[touched] = touched[small]  # touched ascends: smallest vertex stays smallest
        return label
    while True:
        ra, rb = label[a], label[b]
        differ = ra != rb
        if not differ.any():
            return label
        ra, rb = ra[differ], rb[differ]
        low = np.minimum(ra, rb)
        hooked = label.copy()
        np.minimum.at(hooked, ra, low)
        np.minimum.at(hooked, rb, low)
        while True:
            jumped = hooked[hooked]
            if np.array_equal(jumped, hooked):
                break
            hooked = jumped
        label = hooked


@dataclass(frozen=True)
class OrientationGroups:
    """Orientation of every element relative to the others in its connected patch.

    ``patch`` (n,) the patch label (smallest element index in the patch), ``sign`` (n,)
    +1 or -1: elements of one patch with equal sign are consistently oriented,
    ``flipped`` (n,) bool: the element is in the smaller orientation group of its patch
    (ties: the group not holding the patch's lowest element index), ``twisted`` (n,) bool:
    the patch is non-orientable (a Moebius-like band), so no consistent choice exists.
    """

    patch: np.ndarray
    sign: np.ndarray
    flipped: np.ndarray
    twisted: np.ndarray


def orientation_groups(
    n: int, first: np.ndarray, second: np.ndarray, same: np.ndarray
) -> OrientationGroups:
    """Split ``n`` elements into consistently oriented groups from their edge pairs.

    Each element i gets two vertices, i (kept) and n + i (flipped). A pair that agrees
    links kept-kept and flipped-flipped; a pair that clashes links kept-flipped. After
    connected components, element i agrees with the elements whose kept vertex shares
    its component; if i and n + i share one the patch cannot be oriented.
    """
    a = np.concatenate([first, first + n])
    b = np.concatenate([np.where(same, second + n, second), np.where(same, second, second + n)])
    label = connected_labels(2 * n, a, b)
    kept, flipped_v = label[:n], label[n:]
    twisted = kept == flipped_v
    # Every element i of a patch has i and n + i in the patch's one or two components,
    # so the smaller of its two labels is the patch's smallest element index.
    patch = np.minimum(kept, flipped_v)
    sign = np.where(kept <= flipped_v, 1, -1).astype(np.int8)
    # Group sizes per (patch, sign); an element is flipped if its group is the smaller.
    plus = np.bincount(patch, weights=(sign > 0), minlength=n)
    minus = np.bincount(patch, weights=(sign < 0), minlength=n)
    mine = np.where(sign > 0, plus[patch], minus[patch])
    other = np.where(sign > 0, minus[patch], plus[patch])
    anchor_sign = sign[patch]
    flipped = (mine < other) | ((mine == other) & (sign != anchor_sign))
    flipped &= ~twisted
    return OrientationGroups(patch=patch, sign=sign, flipped=flipped, twisted=twisted)


def flipped_elements(mesh: ElementMesh, table: EdgeTable | None = None) -> OrientationGroups:
    """Orientation groups of the audited elements of ``mesh`` (see :class:`OrientationGroups`).

    ``table``: the mesh's :func:`edge_table`, when the caller already has it.
    """
    first, second, same = interior_pairs(table if table is not None else edge_table(mesh))
    return orientation_groups(mesh.n_elements, first, second, same)
