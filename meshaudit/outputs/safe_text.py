"""Text from outside (file names, region and profile names, messages quoting them) made
safe for each output.

A file name may hold any byte but ``/`` and NUL: control characters (an escape sequence
that recolours or clears a terminal, a character XML 1.0 forbids) and bytes that are not
UTF-8 (which Python carries as lone surrogates and no UTF-8 file can hold). Each such
character is written as a visible escape, ``\\xNN`` (the byte of a name that is not UTF-8
too) or ``\\uNNNN``, so the name still reads and nothing is interpreted:

- :func:`xml_safe` for XML (JUnit): the characters XML 1.0 does not allow;
- :func:`html_safe` for HTML: those plus the C1 controls and DEL;
- :func:`one_line` for one line on stderr: every control character, newlines included;
- :func:`terminal_safe` for the terminal (:class:`.console.PlainConsole`): every control
  character but the newline.
"""

from __future__ import annotations

import re

#: Characters XML 1.0 does not allow (its Char production), and lone surrogates.
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
#: Characters HTML calls controls or noncharacters (whitespace kept), and lone surrogates.
_NOT_HTML = re.compile("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f\ud800-\udfff\ufdd0-\ufdef\ufffe\uffff]")
#: Every control character (C0, DEL, C1) and lone surrogates.
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\ud800-\udfff]")
#: The same, newline kept (rich lays out lines with it).
_CONTROL_BUT_NEWLINE = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\ud800-\udfff]")


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    if 0xDC80 <= code <= 0xDCFF:  # a byte that is not UTF-8, as os.fsdecode carries it
        return f"\\x{code - 0xDC00:02x}"
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def xml_safe(text: str) -> str:
    """``text`` with every character XML 1.0 forbids written as a visible escape."""
    return _NOT_XML.sub(_escape, text)


def html_safe(text: str) -> str:
    """``text`` with every control character HTML forbids written as a visible escape."""
    return _NOT_HTML.sub(_escape, text)


def terminal_safe(text: str) -> str:
    """``text`` with every control character but the newline written as a visible escape."""
    return _CONTROL_BUT_NEWLINE.sub(_escape, text)


def one_line(text: str) -> str:
    """``text`` on one line, every control character written as a visible escape."""
    return _CONTROL.sub(_escape, text)
