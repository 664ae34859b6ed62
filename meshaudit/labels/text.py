"""Integers at the start of text lines, read with numpy over whole sections.

The light label passes need only the first one or two numbers of each line of a large
section (a gmsh 2.2 node or element line, an Abaqus node line). Python's own line loop
costs about a microsecond a line; here every line's first bytes are gathered into one
small matrix per pass, everything after the wanted numbers is blanked, and numpy parses
what is left in one call.
"""

from __future__ import annotations

import warnings

import numpy as np

#: Bytes looked at per wanted number: enough for a 20-digit label and a few spaces.
WINDOW_PER_NUMBER = 28
#: Lines gathered per pass (bounds the temporary matrices to a few MB).
LINES_PER_PASS = 1 << 16

_TOO_LARGE = np.iinfo(np.int64).max  # numpy's parser saturates there
_NEWLINE = 10
_SPACE = 32
_DIGITS = np.zeros(256, dtype=bool)
_DIGITS[np.frombuffer(b"0123456789+-", dtype=np.uint8)] = True


class TextLabelError(ValueError):
    """The text is not laid out as the pass expects (the caller falls back)."""


def as_bytes(data: bytes | bytearray | memoryview) -> np.ndarray:
    """A read-only uint8 view of ``data`` (no copy)."""
    return np.frombuffer(data, dtype=np.uint8)


def line_bounds(buf: np.ndarray, start: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (exclusive, the newline not included) offsets of every line of
    ``buf[start:stop]``; a final newline does not open an empty last line."""
    breaks = np.flatnonzero(buf[start:stop] == _NEWLINE)
    breaks += start
    starts = np.empty(breaks.size + 1, dtype=np.int64)
    starts[0] = start
    starts[1:] = breaks + 1
    ends = np.empty(breaks.size + 1, dtype=np.int64)
    ends[:-1] = breaks
    ends[-1] = stop
    if starts[-1] >= stop:  # the section ends with a newline
        return starts[:-1], ends[:-1]
    return starts, ends


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
    line). Tokens are separated by any byte of ``separators``. Raises
    :class:`TextLabelError` when a wanted token is not an integer or does not end within
    the bytes looked at (a very long number or a lot of leading space).
    """
    m = starts.size
    values = np.full((m, count), -1, dtype=np.int64)
    found = np.zeros(m, dtype=np.int64)
    width = WINDOW_PER_NUMBER * count
    is_sep = np.zeros(256, dtype=bool)
    is_sep[np.frombuffer(separators, dtype=np.uint8)] = True
    is_sep[_SPACE] = True
    columns = np.arange(width, dtype=np.int64)
    last = buf.size - 1
    for lo in range(0, m, LINES_PER_PASS):
        hi = min(lo + LINES_PER_PASS, m)
        where = starts[lo:hi, None] + columns
        inside = where < ends[lo:hi, None]
        np.minimum(where, last, out=where)
        block = buf[where]
        block[~inside] = _SPACE
        blank = is_sep[block]
        opens = ~blank
        opens[:, 1:] &= blank[:, :-1]
        token = np.cumsum(opens, axis=1, dtype=np.uint8)
        keep = ~blank & (token <= count)
        per_line = np.minimum(token[:, -1], count).astype(np.int64)
        line_fits = (ends[lo:hi] - starts[lo:hi]) <= width
        if not bool((line_fits | (token[:, -1] > count)).all()):
            raise TextLabelError("a line starts with more text than the label pass reads")
        if not bool(_DIGITS[block[keep]].all()):
            raise TextLabelError("a label is not an integer")
        block[~keep] = _SPACE
        text = np.concatenate([block, np.full((hi - lo, 1), _SPACE, np.uint8)], axis=1)
        parsed = integers(text.tobytes(), int(per_line.sum()))
        full = per_line == count
        if bool(full.all()):
            values[lo:hi] = parsed.reshape(-1, count)
        else:
            rows = np.repeat(np.arange(lo, hi), per_line)
            first = np.cumsum(per_line) - per_line
            cols = np.arange(parsed.size) - np.repeat(first, per_line)
            values[rows, cols] = parsed
        found[lo:hi] = per_line
    return values, found


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
