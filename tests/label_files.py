"""Hand-numbered mesh files for the numbering tests: a corner of the bracket plate's web.

Every number here is written by hand and is the reference: the files are built from these
tables (gmsh 2.2 / 4.1, ASCII and binary, with struct for the binary layouts of the gmsh
file format documentation) and the reports must show the same numbers.

The part: a 30 x 20 mm web corner, nodes on a 10 mm grid (4 x 3 nodes), six cells. Line
elements along the boundary come first in the file, so the first quad is element 394.
Cell (2, 0) is wound clockwise (a reversed quad, tag 396); cell (0, 1) is split into two
triangles (tags 401, 402), so the element types run line, quad, triangle, quad.
"""

from __future__ import annotations

import struct
from pathlib import Path

#: Node tags in file order (row by row from y = 0, x = 0..30): start at 321, with gaps.
NODE_TAGS = [321, 322, 324, 327, 331, 336, 342, 349, 357, 366, 376, 387]
NODE_XY = [(10.0 * i, 10.0 * j) for j in range(3) for i in range(4)]


def n(i: int, j: int) -> int:
    """Tag of the grid node at column i (x = 10 i) and row j (y = 10 j)."""
    return NODE_TAGS[4 * j + i]


#: gmsh element type numbers (gmsh file format documentation): 1 line, 2 triangle, 3 quad.
LINE, TRIANGLE, QUAD = 1, 2, 3

#: (tag, gmsh type, node tags) in file order.
ELEMENTS = [
    # boundary lines: bottom, right, top, left
    (384, LINE, [n(0, 0), n(1, 0)]),
    (385, LINE, [n(1, 0), n(2, 0)]),
    (386, LINE, [n(2, 0), n(3, 0)]),
    (387, LINE, [n(3, 0), n(3, 1)]),
    (388, LINE, [n(3, 1), n(3, 2)]),
    (389, LINE, [n(3, 2), n(2, 2)]),
    (390, LINE, [n(2, 2), n(1, 2)]),
    (391, LINE, [n(1, 2), n(0, 2)]),
    (392, LINE, [n(0, 2), n(0, 1)]),
    (393, LINE, [n(0, 1), n(0, 0)]),
    # bottom row of quads, counter-clockwise except 396
    (394, QUAD, [n(0, 0), n(1, 0), n(1, 1), n(0, 1)]),
    (395, QUAD, [n(1, 0), n(2, 0), n(2, 1), n(1, 1)]),
    (396, QUAD, [n(2, 0), n(2, 1), n(3, 1), n(3, 0)]),  # clockwise: reversed
    # top row: cell (0, 1) as two triangles, then two quads
    (401, TRIANGLE, [n(0, 1), n(1, 1), n(1, 2)]),
    (402, TRIANGLE, [n(0, 1), n(1, 2), n(0, 2)]),
    (398, QUAD, [n(1, 1), n(2, 1), n(2, 2), n(1, 2)]),
    (399, QUAD, [n(2, 1), n(3, 1), n(3, 2), n(2, 2)]),
]
AUDITED_TAGS = [394, 395, 396, 401, 402, 398, 399]  # quads and triangles, file order
REVERSED_TAG = 396
REVERSED_NODES = [n(2, 0), n(2, 1), n(3, 1), n(3, 0)]  # 324, 342, 349, 327

#: The coincident-node variant: the cells of column 2 use copies of the nodes at x = 20
#: (tags 501, 502, 503) instead of the nodes their neighbours use: the part is cut there.
COPIES = {n(2, 0): 501, n(2, 1): 502, n(2, 2): 503}
COINCIDENT_PAIRS = [(n(2, 0), 501), (n(2, 1), 502), (n(2, 2), 503)]  # (324, 342, 376)


def cut_mesh() -> tuple[list[int], list[tuple[float, float]], list[tuple[int, int, list[int]]]]:
    """Nodes and elements of the variant with the cut at x = 20 (no reversed element)."""
    tags = NODE_TAGS + list(COPIES.values())
    xy = NODE_XY + [NODE_XY[NODE_TAGS.index(t)] for t in COPIES]
    elements = []
    for tag, kind, nodes in ELEMENTS:
        if tag == REVERSED_TAG:
            nodes = [n(2, 0), n(3, 0), n(3, 1), n(2, 1)]
        if tag in (396, 399):  # column 2 takes the copies
            nodes = [COPIES.get(v, v) for v in nodes]
        elements.append((tag, kind, nodes))
    return tags, xy, elements


def gmsh22_ascii(tags=NODE_TAGS, xy=NODE_XY, elements=ELEMENTS) -> str:
    lines = ["$MeshFormat", "2.2 0 8", "$EndMeshFormat", "$Nodes", str(len(tags))]
    lines += [f"{t} {x:g} {y:g} 0" for t, (x, y) in zip(tags, xy)]
    lines += ["$EndNodes", "$Elements", str(len(elements))]
    # tag, type, 2 tags (physical 1, elementary 1), nodes
    lines += [f"{t} {k} 2 1 1 " + " ".join(map(str, v)) for t, k, v in elements]
    lines += ["$EndElements", ""]
    return "\n".join(lines)


def gmsh41_ascii(tags=NODE_TAGS, xy=NODE_XY, elements=ELEMENTS) -> str:
    lines = ["$MeshFormat", "4.1 0 8", "$EndMeshFormat", "$Nodes"]
    split = 5  # two node entity blocks: the first five nodes, then the rest
    parts = [(tags[:split], xy[:split]), (tags[split:], xy[split:])]
    lines.append(f"2 {len(tags)} {min(tags)} {max(tags)}")
    for entity, (ts, ps) in enumerate(parts, start=1):
        lines.append(f"2 {entity} 0 {len(ts)}")
        lines += [str(t) for t in ts]
        lines += [f"{x:g} {y:g} 0" for x, y in ps]
    lines.append("$EndNodes")
    blocks = _runs(elements)
    all_tags = [t for t, _, _ in elements]
    lines += ["$Elements", f"{len(blocks)} {len(elements)} {min(all_tags)} {max(all_tags)}"]
    for entity, (kind, rows) in enumerate(blocks, start=1):
        dim = 1 if kind == LINE else 2
        lines.append(f"{dim} {entity} {kind} {len(rows)}")
        lines += [f"{t} " + " ".join(map(str, v)) for t, v in rows]
    lines += ["$EndElements", ""]
    return "\n".join(lines)


def gmsh22_binary(elements=ELEMENTS) -> bytes:
    """Binary 2.2; meshio reads binary 2.2 nodes only when tagged 1..n in order, so the
    nodes here are 1..12 (same places) and the elements' node tags are renumbered."""
    renumber = {t: k + 1 for k, t in enumerate(NODE_TAGS)}
    out = [b"$MeshFormat\n2.2 1 8\n", struct.pack("<i", 1), b"\n$EndMeshFormat\n"]
    out.append(f"$Nodes\n{len(NODE_TAGS)}\n".encode())
    for k, (x, y) in enumerate(NODE_XY):
        out.append(struct.pack("<iddd", k + 1, x, y, 0.0))
    out.append(f"\n$EndNodes\n$Elements\n{len(elements)}\n".encode())
    for kind, rows in _runs(elements):  # one header per run of one type
        out.append(struct.pack("<iii", kind, len(rows), 2))
        for t, v in rows:
            out.append(struct.pack(f"<{3 + len(v)}i", t, 1, 1, *(renumber[x] for x in v)))
    out.append(b"\n$EndElements\n")
    return b"".join(out)


def gmsh41_binary(tags=NODE_TAGS, xy=NODE_XY, elements=ELEMENTS) -> bytes:
    out = [b"$MeshFormat\n4.1 1 8\n", struct.pack("<i", 1), b"\n$EndMeshFormat\n$Nodes\n"]
    split = 5
    parts = [(tags[:split], xy[:split]), (tags[split:], xy[split:])]
    out.append(struct.pack("<4Q", 2, len(tags), min(tags), max(tags)))
    for entity, (ts, ps) in enumerate(parts, start=1):
        out.append(struct.pack("<iiiQ", 2, entity, 0, len(ts)))
        out.append(struct.pack(f"<{len(ts)}Q", *ts))
        for x, y in ps:
            out.append(struct.pack("<ddd", x, y, 0.0))
    out.append(b"\n$EndNodes\n$Elements\n")
    blocks = _runs(elements)
    all_tags = [t for t, _, _ in elements]
    out.append(struct.pack("<4Q", len(blocks), len(elements), min(all_tags), max(all_tags)))
    for entity, (kind, rows) in enumerate(blocks, start=1):
        out.append(struct.pack("<iiiQ", 1 if kind == LINE else 2, entity, kind, len(rows)))
        for t, v in rows:
            out.append(struct.pack(f"<{1 + len(v)}Q", t, *v))
    out.append(b"\n$EndElements\n")
    return b"".join(out)


def _runs(elements):
    """Consecutive elements of one type: [(type, [(tag, nodes), ...]), ...]."""
    runs: list[tuple[int, list[tuple[int, list[int]]]]] = []
    for tag, kind, nodes in elements:
        if not runs or runs[-1][0] != kind:
            runs.append((kind, []))
        runs[-1][1].append((tag, nodes))
    return runs


def nastran_card(*fields: object) -> str:
    """One small-field Nastran bulk data card: 8 columns per field."""
    return "".join(f"{f!s:<8}" for f in fields)


def write_gmsh(directory: Path, variant: str) -> Path:
    """Write the web corner as ``variant``: 22a, 22b, 41a or 41b."""
    path = directory / f"web_{variant}.msh"
    if variant == "22a":
        path.write_text(gmsh22_ascii())
    elif variant == "41a":
        path.write_text(gmsh41_ascii())
    elif variant == "22b":
        path.write_bytes(gmsh22_binary())
    else:
        path.write_bytes(gmsh41_binary())
    return path


#: Node tags each variant reports for the reversed quad (binary 2.2 nodes are 1..n).
def reversed_nodes(variant: str) -> list[int]:
    if variant == "22b":
        return [NODE_TAGS.index(t) + 1 for t in REVERSED_NODES]
    return REVERSED_NODES
