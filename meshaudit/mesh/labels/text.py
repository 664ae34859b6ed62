"""Integers at the start of text lines, read with numpy over whole sections.

The light label passes need only the first one or two numbers of each line of a large
section (a gmsh 2.2 node or element line, an Abaqus node line). Python's own line loop
costs about a microsecond a line; here all lines move together: numpy steps every line's
read position past blanks, gathers the next few bytes of every line into a small matrix
and turns the digits into numbers, a chunk of lines at a time.
"""

from __future__ import annotations

import warnings

import numpy as np

#: Bytes of a number looked at first; longer numbers are read again with MAX_WIDTH.
FIRST_WIDTH = 8
#: A sign and 18 digits: every integer that fits in 64 bits with room to spare.
MAX_WIDTH = 19
#: Most blank bytes skipped before or between the numbers wanted.
MAX_BLANKS = 64
#: Lines handled per numpy pass: the temporary matrices (a few hundred KB) stay in the
#: CPU cache; measured about twice as fast as 1 << 16.
LINES_PER_PASS = 1 << 14
#: Bytes scanned for line ends per numpy pass.
BYTES_PER_PASS = 1 << 22

_TOO_LARGE = np.iinfo(np.int64).max  # numpy's text parser saturates there
_NEWLINE = 10
_PLUS, _MINUS, _ZERO = 43, 45, 48
_POWERS = 10 ** np.arange(MAX_WIDTH, dtype=np.int64)


class TextLabelError(ValueError):
    """The text is not laid out as the pass expects (the caller falls back)."""


def as_bytes(data: bytes | bytearray | memoryview) -> np.ndarray:
    """A read-only uint8 view of ``data`` (no copy)."""
    return np.frombuffer(data, dtype=np.uint8)


def separator_table(separators: bytes) -> np.ndarray:
    """(256,) bool: which byte values separate numbers."""
    table = np.zeros(256, dtype=bool)
    table[np.frombuffer(separators, dtype=np.uint8)] = True
    return table


def line_bounds(buf: np.ndarray, start: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (exclusive, the newline not included) offsets of every line of
    ``buf[start:stop]``; a final newline does not open an empty last line."""
    parts = [
        np.flatnonzero(buf[lo : min(lo + BYTES_PER_PASS, stop)] == _NEWLINE) + lo
        for lo in range(start, stop, BYTES_PER_PASS)
    ]
    breaks = np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)
    starts = np.empty(breaks.size + 1, dtype=np.int64)
    starts[0] = start
    starts[1:] = breaks + 1
    ends = np.empty(breaks.size + 1, dtype=np.int64)
    ends[:-1] = breaks
    ends[-1] = stop
    if starts[-1] >= stop:  # the section ends with a newline (or is empty)
        return starts[:-1], ends[:-1]
    return starts, ends


def skip_blanks(buf: np.ndarray, pos: np.ndarray, ends: np.ndarray, blank: np.ndarray) -> None:
    """Move each ``pos`` (in place) past the blank bytes it stands on, never past its
    line end; TextLabelError after :data:`MAX_BLANKS` blanks."""
    last = buf.size - 1
    rows = np.arange(pos.size)
    for _ in range(MAX_BLANKS + 1):
        at = pos[rows]
        on_blank = (at < ends[rows]) & blank[buf[np.minimum(at, last)]]
        rows = rows[on_blank]
        if rows.size == 0:
            return
        pos[rows] += 1
    raise TextLabelError("a line has more blank space than the label pass reads")


def leading_integers(
    buf: np.ndarray,
    starts: np.ndarray,
    ends: np.ndarray,
    count: int,
    separators: bytes = b" \t\r",
) -> tuple[np.ndarray, np.ndarray]:
    """The first ``count`` integers of each line ``buf[starts[i]:ends[i]]``.

    Returns ``(values, found)``: values (m, count) int64 (-1 where a line has fewer
    numbers) and found (m,) how many of the ``count`` numbers each line has (0 for a blank
    line). Numbers are separated by any byte of ``separators`` (blank space always).
    Raises :class:`TextLabelError` when a wanted token is not an integer of at most 18
    digits, or a line has a lot of blank space.
    """
    blank = separator_table(separators + b" ")
    m = starts.size
    values = np.full((m, count), -1, dtype=np.int64)
    found = np.zeros(m, dtype=np.int64)
    for lo in range(0, m, LINES_PER_PASS):
        hi = min(lo + LINES_PER_PASS, m)
        pos = starts[lo:hi].copy()
        end = ends[lo:hi]
        rows = np.arange(hi - lo)
        for k in range(count):
            skip_blanks(buf, pos, end, blank)
            rows = rows[pos[rows] < end[rows]]
            if rows.size == 0:
                break
            number, stop = _numbers_at(buf, pos[rows], end[rows], blank)
            values[lo + rows, k] = number
            found[lo + rows] += 1
            pos[rows] = stop
    return values, found


def _numbers_at(
    buf: np.ndarray, pos: np.ndarray, ends: np.ndarray, blank: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The integer token starting at each ``pos`` (at a non-blank byte) and where it ends.

    Tokens run to the next blank byte or the line end; a token too long for
    :data:`FIRST_WIDTH` bytes is read again with :data:`MAX_WIDTH`.
    """
    numbers = np.empty(pos.size, dtype=np.int64)
    stops = np.empty(pos.size, dtype=np.int64)
    todo = np.arange(pos.size)
    for width in (FIRST_WIDTH, MAX_WIDTH + 1):
        cols = np.arange(width)
        at = pos[todo, None] + cols
        inside = at < ends[todo, None]
        np.minimum(at, buf.size - 1, out=at)
        block = buf[at]
        ended = ~inside | blank[block]
        length = np.where(ended.any(axis=1), ended.argmax(axis=1), width)
        done = length < width
        rows = todo[done]
        numbers[rows] = _digits_value(block[done], length[done])
        stops[rows] = pos[rows] + length[done]
        todo = todo[~done]
        if todo.size == 0:
            return numbers, stops
    raise TextLabelError("a label is longer than 18 digits")


def _digits_value(block: np.ndarray, length: np.ndarray) -> np.ndarray:
    """Value of the text ``block[i, :length[i]]`` (an optional sign, then digits).

    The digits are read left-aligned as one number of ``width`` places (a product with
    the powers of ten) and shifted right by the places the token does not use; in
    float64 while that is exact (below 2**53), else in int64.
    """
    width = block.shape[1]
    cols = np.arange(width)
    sign = block[:, 0]
    first = ((sign == _PLUS) | (sign == _MINUS)).astype(np.int64)
    digits = block - np.uint8(_ZERO)  # wraps below "0": any non-digit reads above 9
    in_number = (cols >= first[:, None]) & (cols < length[:, None])
    if bool((in_number & (digits > 9)).any()) or bool((length <= first).any()):
        raise TextLabelError("a label is not an integer")
    if bool((length - first > 18).any()):
        raise TextLabelError("a label is longer than 18 digits")
    digits[~in_number] = 0
    if width <= 15:
        placed = digits.astype(np.float64) @ (10.0 ** (width - 1 - cols))
        value = (placed / 10.0 ** (width - length)).astype(np.int64)
    else:
        place = np.clip(length[:, None] - 1 - cols, 0, MAX_WIDTH - 1)
        value = (digits.astype(np.int64) * _POWERS[place]).sum(axis=1)
    return np.where(sign == _MINUS, -value, value)


def integers(text: bytes, expected: int | None = None) -> np.ndarray:
    """Every whitespace-separated integer of ``text`` (int64); TextLabelError when a token
    is not an integer or does not fit in 64 bits or, with ``expected``, when the count
    differs."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            values = np.fromstring(text, dtype=np.int64, sep=" ")
        except (ValueError, DeprecationWarning) as exc:
            raise TextLabelError(f"not a list of integers ({exc})") from None
    if values.size == 1 and not text.strip():  # numpy reads blank text as one 0
        values = values[:0]
    if values.size and (values.max() == _TOO_LARGE or values.min() == -_TOO_LARGE - 1):
        raise TextLabelError("an integer does not fit in 64 bits")
    if expected is not None and values.size != expected:
        raise TextLabelError(f"{values.size} integers where {expected} were expected")
    return values
