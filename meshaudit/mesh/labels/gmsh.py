"""Element and node tags of a gmsh ``.msh`` file (format 2.2 and 4.1, ASCII and binary).

meshio reads a ``.msh`` file's nodes and cells but drops their tags. This pass reads only
the tags, walking the sections the way meshio's readers do, so the tags line up with
meshio's blocks and rows (checked afterwards by :func:`.common.check_alignment`):

- nodes: meshio keeps them in file order (4.1: entity block after entity block);
- 4.1 elements: one meshio cell block per entity block of ``$Elements``, rows in file
  order;
- 2.2 elements: a new meshio cell block wherever the element type (as meshio names it)
  differs from the previous element's; rows in file order.

Binary sections are read with numpy straight from the bytes; ASCII sections with numpy
over the section text (:mod:`.text`): no Python loop over elements or nodes, only over
entity blocks and section headers.
"""

from __future__ import annotations

import mmap
from os import PathLike

import numpy as np

from .common import FileLabels, LabelBlock, LabelsUnavailable
from .text import TextLabelError, as_bytes, integers, leading_integers, line_bounds

INT = np.dtype("<i4")
DOUBLE = np.dtype("<f8")


def read_gmsh(path: str | PathLike[str]) -> FileLabels:
    """Element tags per meshio cell block and node tags per meshio point of ``path``.

    Raises :class:`LabelsUnavailable` when the file is not laid out as expected.
    """
    with open(path, "rb") as fh:
        try:
            mm = mmap.mmap(fh.fileno(), 0, access=mmap.ACCESS_READ)
        except ValueError:  # an empty file cannot be mapped
            raise LabelsUnavailable("empty file") from None
        # ``mm`` finds section ends (its slices are copies, so it can be closed here);
        # binary numbers are read through a numpy map of the same file, whose views
        # copy only the columns wanted (a column of tags, not the whole connectivity)
        with mm:
            try:
                return _Reader(mm, np.memmap(path, dtype=np.uint8, mode="r")).read()
            except (TextLabelError, ValueError, IndexError, KeyError) as exc:
                raise LabelsUnavailable(f"unexpected layout ({exc})") from None


class _Reader:
    """Walks the sections of one mapped ``.msh`` file."""

    def __init__(self, mm: mmap.mmap, array: np.ndarray) -> None:
        self.mm = mm
        self.array = array
        self.pos = 0
        self.binary = False
        self.size_t = np.dtype("<u8")
        self.v41 = True

    # -- moving through the file ------------------------------------------------------
    def line(self) -> bytes:
        end = self.mm.find(b"\n", self.pos)
        if end < 0:
            end = len(self.mm)
        text = self.mm[self.pos : end]
        self.pos = end + 1
        return text

    def skip(self, nbytes: int) -> None:
        if nbytes < 0 or self.pos + nbytes > len(self.mm):
            raise LabelsUnavailable("the file ends inside a section")
        self.pos += nbytes

    def numbers(self, dtype: np.dtype, count: int) -> np.ndarray:
        """A view of the next ``count`` numbers of type ``dtype`` (no copy)."""
        nbytes = dtype.itemsize * count
        if count < 0 or self.pos + nbytes > len(self.mm):
            raise LabelsUnavailable("the file ends inside a section")
        out = self.array[self.pos : self.pos + nbytes].view(dtype)
        self.pos += nbytes
        return out

    def to_end(self, name: bytes) -> int:
        """Move past the line ``$End<name>`` (alone on its line, as meshio looks for it);
        return where that line starts."""
        marker = b"$End" + name
        at = self.pos
        while True:
            at = self.mm.find(marker, at)
            if at < 0:
                raise LabelsUnavailable(f"${name.decode(errors='replace')} is not closed")
            start = max(self.mm.rfind(b"\n", 0, at) + 1, self.pos)
            end = self.mm.find(b"\n", at)
            end = len(self.mm) if end < 0 else end
            if self.mm[start:end].strip() == marker:
                self.pos = end + 1
                return start
            at += 1

    # -- sections -------------------------------------------------------------------
    def read(self) -> FileLabels:
        first = self.line().strip()
        while first == b"$Comments":
            self.to_end(b"Comments")
            first = self.line().strip()
        if first != b"$MeshFormat":
            raise LabelsUnavailable("no $MeshFormat header")
        version, kind, size = self.line().split()[:3]
        self.binary = kind == b"1"
        self.size_t = np.dtype(f"<u{int(size)}")
        if self.binary and int(self.numbers(INT, 1)[0]) != 1:
            raise LabelsUnavailable("binary file of the other byte order")
        self.to_end(b"MeshFormat")
        self.v41 = _reader_version(version.decode()) == "4.1"
        nodes: np.ndarray | None = None
        blocks: list[LabelBlock] | None = None
        while self.pos < len(self.mm):
            head = self.line().strip()
            if not head:
                continue
            if not head.startswith(b"$"):
                raise LabelsUnavailable("text outside a section")
            name = head[1:].strip()
            if name == b"Nodes":
                if nodes is not None:
                    raise LabelsUnavailable("two $Nodes sections")
                nodes = self.nodes()
            elif name == b"Elements":
                if blocks is not None:
                    raise LabelsUnavailable("two $Elements sections")
                blocks = self.elements()
            else:
                self.to_end(name)
        if nodes is None or blocks is None:
            raise LabelsUnavailable("no $Nodes or no $Elements section")
        return FileLabels(blocks, nodes)

    def body(self, name: bytes) -> bytes:
        """The text of an ASCII section from here to its end line (and move past it)."""
        start = self.pos
        stop = self.to_end(name)
        return self.mm[start:stop]

    def nodes(self) -> np.ndarray:
        if self.binary:
            tags = self.nodes_41_binary() if self.v41 else self.nodes_22_binary()
            self.to_end(b"Nodes")
            return tags
        text = self.body(b"Nodes")
        return nodes_41_ascii(text) if self.v41 else nodes_22_ascii(text)

    def elements(self) -> list[LabelBlock]:
        if self.binary:
            blocks = self.elements_41_binary() if self.v41 else self.elements_22_binary()
            self.to_end(b"Elements")
            return blocks
        text = self.body(b"Elements")
        return elements_41_ascii(text) if self.v41 else elements_22_ascii(text)

    # -- binary ---------------------------------------------------------------------
    def nodes_22_binary(self) -> np.ndarray:
        count = int(self.line())
        self.skip(count * (INT.itemsize + 3 * DOUBLE.itemsize))
        # meshio refuses a binary 2.2 file whose node tags are not 1..n in order
        return np.arange(1, count + 1, dtype=np.int64)

    def nodes_41_binary(self) -> np.ndarray:
        n_blocks, total = (int(v) for v in self.numbers(self.size_t, 4)[:2])
        tags = np.empty(total, dtype=np.int64)
        done = 0
        for _ in range(n_blocks):
            _dim, _entity, parametric = self.numbers(INT, 3)
            n = int(self.numbers(self.size_t, 1)[0])
            if parametric != 0 or done + n > total:
                raise LabelsUnavailable("parametric nodes or a wrong node count")
            tags[done : done + n] = self.numbers(self.size_t, n)
            self.skip(3 * n * DOUBLE.itemsize)
            done += n
        if done != total:
            raise LabelsUnavailable("node blocks do not add up to the node count")
        return tags

    def elements_41_binary(self) -> list[LabelBlock]:
        types, sizes = _meshio_types()
        n_blocks = int(self.numbers(self.size_t, 4)[0])
        blocks = []
        for _ in range(n_blocks):
            _dim, _entity, gmsh_type = (int(v) for v in self.numbers(INT, 3))
            n = int(self.numbers(self.size_t, 1)[0])
            cell_type = types[gmsh_type]
            k = sizes[cell_type]
            data = self.numbers(self.size_t, n * (1 + k)).reshape(n, 1 + k)
            blocks.append(_block(cell_type, data[:, 0], data[:, 1:]))
        return blocks

    def elements_22_binary(self) -> list[LabelBlock]:
        types, sizes = _meshio_types()
        total = int(self.line())
        runs: list[tuple[str, list[np.ndarray]]] = []
        done = 0
        while done < total:
            gmsh_type, n, n_tags = (int(v) for v in self.numbers(INT, 3))
            cell_type = types[gmsh_type]
            k = sizes[cell_type]
            if n <= 0:
                raise LabelsUnavailable("an empty element group")
            data = self.numbers(INT, n * (1 + n_tags + k)).reshape(n, 1 + n_tags + k)
            if not runs or runs[-1][0] != cell_type:
                runs.append((cell_type, []))
            runs[-1][1].append(np.column_stack([data[:, 0], data[:, -k:]]))
            done += n
        blocks = []
        for cell_type, parts in runs:
            data = np.concatenate(parts) if len(parts) > 1 else parts[0]
            blocks.append(_block(cell_type, data[:, 0], data[:, 1:]))
        return blocks


# -- ASCII ------------------------------------------------------------------------------
def nodes_22_ascii(text: bytes) -> np.ndarray:
    """Node tags of a 2.2 ``$Nodes`` body: a count line, then 'tag x y z' lines."""
    buf = as_bytes(text)
    starts, ends = line_bounds(buf, 0, buf.size)
    count = int(text[: ends[0]])
    if starts.size < count + 1:
        raise LabelsUnavailable("fewer node lines than the node count")
    values, found = leading_integers(buf, starts[1 : count + 1], ends[1 : count + 1], 1)
    if not bool((found == 1).all()):
        raise LabelsUnavailable("a node line without a tag")
    return values[:, 0]


def nodes_41_ascii(text: bytes) -> np.ndarray:
    """Node tags of a 4.1 ``$Nodes`` body: a header line, then per entity block a header
    line, its tags one per line, then its coordinates one node per line."""
    buf = as_bytes(text)
    starts, ends = line_bounds(buf, 0, buf.size)
    n_blocks, total = (int(v) for v in text[: ends[0]].split()[:2])
    tags = np.empty(total, dtype=np.int64)
    line, done = 1, 0
    for _ in range(n_blocks):
        _dim, _entity, parametric, n = (int(v) for v in text[starts[line] : ends[line]].split())
        if parametric != 0 or done + n > total or line + 2 * n >= starts.size:
            raise LabelsUnavailable("parametric nodes or a wrong node count")
        if n:
            tags[done : done + n] = integers(text[starts[line + 1] : ends[line + n]], n)
        line += 1 + 2 * n
        done += n
    if done != total:
        raise LabelsUnavailable("node blocks do not add up to the node count")
    return tags


def elements_41_ascii(text: bytes) -> list[LabelBlock]:
    """Element tags of a 4.1 ``$Elements`` body, one block per entity block."""
    types, sizes = _meshio_types()
    tokens = integers(text)
    n_blocks = int(tokens[0])
    at = 4
    blocks = []
    for _ in range(n_blocks):
        gmsh_type, n = int(tokens[at + 2]), int(tokens[at + 3])
        cell_type = types[gmsh_type]
        k = sizes[cell_type]
        at += 4
        if at + n * (1 + k) > tokens.size:
            raise LabelsUnavailable("the element section ends early")
        data = tokens[at : at + n * (1 + k)].reshape(n, 1 + k)
        blocks.append(_block(cell_type, data[:, 0], data[:, 1:]))
        at += n * (1 + k)
    return blocks


def elements_22_ascii(text: bytes) -> list[LabelBlock]:
    """Element tags of a 2.2 ``$Elements`` body: a count line, then one line per element
    ('tag type n-tags tags... nodes...'); a new block where the meshio type changes."""
    types, sizes = _meshio_types()
    buf = as_bytes(text)
    starts, ends = line_bounds(buf, 0, buf.size)
    count = int(text[: ends[0]])
    if starts.size < count + 1:
        raise LabelsUnavailable("fewer element lines than the element count")
    starts, ends = starts[1 : count + 1], ends[1 : count + 1]
    values, found = leading_integers(buf, starts, ends, 2)
    if not bool((found == 2).all()):
        raise LabelsUnavailable("an element line without a tag and a type")
    names = list(sizes)
    table = np.full(max(types) + 1, -1, dtype=np.int64)
    for gmsh_type, cell_type in types.items():
        table[gmsh_type] = names.index(cell_type)
    gmsh_types = values[:, 1]
    if gmsh_types.min() < 0 or gmsh_types.max() >= table.size:
        raise LabelsUnavailable("an element type meshio does not know")
    kind = table[gmsh_types]
    if kind.min() < 0:
        raise LabelsUnavailable("an element type meshio does not know")
    cuts = np.concatenate([[0], np.flatnonzero(kind[1:] != kind[:-1]) + 1, [count]])
    blocks = []
    for lo, hi in zip(cuts[:-1].tolist(), cuts[1:].tolist()):
        cell_type = names[int(kind[lo])]
        k = sizes[cell_type]

        def nodes_of(rows: np.ndarray, lo: int = lo, k: int = k) -> np.ndarray:
            lines = [text[starts[lo + r] : ends[lo + r]].split() for r in rows.tolist()]
            return np.array([[int(v) for v in parts[-k:]] for parts in lines], dtype=np.int64)

        blocks.append(LabelBlock(cell_type, values[lo:hi, 0].copy(), nodes_of))
    return blocks


# -- shared -----------------------------------------------------------------------------
def _reader_version(text: str) -> str:
    """Which of meshio's gmsh readers takes a file of version ``text`` ("2.2" or "4.1";
    meshio also reads "4.0", whose layout this pass does not follow)."""
    major = text if text in ("2", "2.2", "4", "4.0", "4.1") else text.split(".")[0]
    if major in ("2", "2.2"):
        return "2.2"
    if major in ("4", "4.1"):
        return "4.1"
    raise LabelsUnavailable(f"gmsh format {text} (tags are read from 2.2 and 4.1 files)")


def _block(cell_type: str, labels: np.ndarray, nodes: np.ndarray) -> LabelBlock:
    return LabelBlock(
        cell_type,
        labels.astype(np.int64),
        lambda rows: nodes[rows].astype(np.int64),
    )


def _meshio_types() -> tuple[dict[int, str], dict[str, int]]:
    """meshio's own gmsh element type table and node counts, so the blocks are named and
    sized exactly as meshio's reader names and sizes them."""
    try:
        from meshio._common import num_nodes_per_cell
        from meshio.gmsh.common import _gmsh_to_meshio_type
    except ImportError:  # a meshio without these tables: no tags
        raise LabelsUnavailable("this meshio has no gmsh type table") from None
    types = {int(k): t for k, t in _gmsh_to_meshio_type.items() if t in num_nodes_per_cell}
    sizes = {t: int(num_nodes_per_cell[t]) for t in dict.fromkeys(types.values())}
    return types, sizes
