"""How the command-line process meets its surroundings: signals that stop it and a
standard output that cannot take its text.

Signals: SIGINT (Ctrl-C), SIGTERM (CI cancellation, ``timeout``, ``kill``) and SIGHUP (the
terminal closed) all raise :class:`Interrupted`, a ``KeyboardInterrupt``, in the main
thread. Everything that cleans up on an interruption (the temporary report files of
:mod:`meshaudit.outputs.atomic`) therefore cleans up on each of them, and the command
exits with status 128 + the signal number (130, 143, 129) after one line on stderr. Once
the first signal has arrived, later ones are ignored so the cleanup can finish (SIGKILL
still stops the process). A signal its parent told the process to ignore (``nohup``, a
background job) stays ignored.

Standard output: the terminal report is written after the report files. When standard
output is a pipe whose reader has gone (``| head -1``) or a full device, the rest of the
terminal text is dropped (a full or failing output also gets one warning line on stderr)
and the exit status stays the verdict: the report files are complete.
"""

from __future__ import annotations

import contextlib
import errno
import os
import signal
import sys
import threading
from collections.abc import Iterator

#: Signals that stop the command the way Ctrl-C does.
STOPPING = tuple(
    getattr(signal, name) for name in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, name)
)


class Interrupted(KeyboardInterrupt):
    """The process received ``signum``; exit status 128 + ``signum``."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum

    @property
    def status(self) -> int:
        return 128 + self.signum

    @property
    def name(self) -> str:
        return signal.Signals(self.signum).name


#: While above 0, a stopping signal is recorded in _PENDING instead of raising.
_HELD = [0]
_PENDING: list[int] = []


def _raise(signum: int, frame: object) -> None:
    for sig in STOPPING:  # let the cleanup of this interruption finish
        signal.signal(sig, signal.SIG_IGN)
    if _HELD[0]:
        _PENDING.append(signum)
        return
    raise Interrupted(signum)


@contextlib.contextmanager
def stopping_signals_raise() -> Iterator[None]:
    """Within the block, each stopping signal raises :class:`Interrupted` (unless it was
    ignored on entry); the previous handlers are restored on exit."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {}
    for sig in STOPPING:
        handler = signal.getsignal(sig)
        if handler in (signal.SIG_DFL, signal.default_int_handler):
            previous[sig] = handler
            signal.signal(sig, _raise)
    try:
        yield
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)


@contextlib.contextmanager
def stopping_signals_held() -> Iterator[None]:
    """Delay a stopping signal until the block ends (a few renames that must all happen or
    none); it raises :class:`Interrupted` right after the block."""
    _HELD[0] += 1
    try:
        yield
    finally:
        _HELD[0] -= 1
        if not _HELD[0] and _PENDING:
            signum = _PENDING.pop()
            _PENDING.clear()
            raise Interrupted(signum)


def say(line: str) -> None:
    """Print one line on stderr; a stderr that cannot take it is ignored."""
    from .safe_text import one_line

    try:
        print(one_line(line), file=sys.stderr, flush=True)
    except (OSError, ValueError):
        pass


def silence_stdout() -> None:
    """Point standard output at the null device, so that nothing more (not even the
    interpreter's flush at exit) fails on it."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
        os.close(null)
    except (OSError, ValueError, AttributeError):
        pass


@contextlib.contextmanager
def terminal_output() -> Iterator[None]:
    """Write terminal text after the reports: a standard output that cannot take it drops
    the text (see the module docstring) instead of failing the command."""
    try:
        yield
        sys.stdout.flush()
    except OSError as exc:
        silence_stdout()
        if exc.errno != errno.EPIPE:
            what = exc.strerror or type(exc).__name__
            say(f"meshaudit: warning: standard output: {what}; terminal report dropped")
