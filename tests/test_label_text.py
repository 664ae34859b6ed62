"""The vectorised line reader of the label passes against Python's own parsing.

Reference: ``int`` of the fields ``str.split`` gives for each line (Python's parser).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from meshaudit.mesh.labels.text import (
    TextLabelError,
    as_bytes,
    integers,
    leading_integers,
    line_bounds,
)

space = st.sampled_from([" ", "  ", "\t", " \t "])
number = st.integers(min_value=-(10**15), max_value=10**15)
line = st.tuples(
    st.sampled_from(["", " ", "\t"]),
    st.lists(number, min_size=0, max_size=5),
    space,
    st.sampled_from(["", " 1.5e+00", " x", " 2.0 3.0"]),
)


def _text(lines) -> str:
    """The lines; a tail (floats or words after the numbers) only after two numbers."""
    return "\n".join(
        lead + sep.join(map(str, nums)) + (tail if len(nums) >= 2 else "")
        for lead, nums, sep, tail in lines
    )


@given(st.lists(line, min_size=1, max_size=40), st.sampled_from(["", "\n"]))
def test_first_two_integers_of_every_line_match_python(lines, end):
    text = _text(lines) + end
    buf = as_bytes(text.encode())
    starts, ends = line_bounds(buf, 0, buf.size)
    expected_lines = text.split("\n")
    if expected_lines[-1] == "":  # a final newline ends the last line, opens none
        expected_lines.pop()
    assert starts.size == len(expected_lines)
    values, found = leading_integers(buf, starts, ends, 2)
    for k, (_lead, nums, _sep, _tail) in enumerate(lines[: len(expected_lines)]):
        want = [int(v) for v in expected_lines[k].split()[:2]]
        assert want == nums[:2]  # the reference reading of the line
        assert found[k] == len(want)
        assert values[k, : len(want)].tolist() == want


def test_commas_separate_abaqus_fields_and_blank_lines_count_zero():
    text = b"1001, 0.0, 0.0\n\n  1003 ,10.0\n   \n"
    buf = as_bytes(text)
    starts, ends = line_bounds(buf, 0, buf.size)
    values, found = leading_integers(buf, starts, ends, 1, b" \t,")
    assert found.tolist() == [1, 0, 1, 0]
    assert values[found == 1, 0].tolist() == [1001, 1003]


def test_text_the_reader_cannot_follow_is_refused():
    for text in (b"12a 3\n", b"1.5 2\n", b" " * 100 + b"7\n", b"9" * 40 + b" 1\n"):
        buf = as_bytes(text)
        starts, ends = line_bounds(buf, 0, buf.size)
        with pytest.raises(TextLabelError):
            leading_integers(buf, starts, ends, 1)


def test_whole_sections_of_integers():
    assert integers(b"1 2\n3\r\n  4 ").tolist() == [1, 2, 3, 4]
    assert integers(b"   ").tolist() == []  # numpy alone reads blank text as one 0
    with pytest.raises(TextLabelError):
        integers(b"1 2 x")
    with pytest.raises(TextLabelError):
        integers(b"99999999999999999999")  # past 64 bits: numpy would saturate
    with pytest.raises(TextLabelError):
        integers(b"1 2 3", expected=2)
    np.testing.assert_array_equal(integers(b"-5 +6"), [-5, 6])
