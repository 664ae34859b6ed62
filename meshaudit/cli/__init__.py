"""Command line: a thin layer over the Python API and the output modules.

``main`` parses the arguments and runs the command: each command is a module of this
package with ``add(subparsers)``, which defines its arguments, and ``run(args)``, which
returns the exit status (see :mod:`meshaudit.results.status`). Exit status 2 and one
line on stderr when the input cannot be audited; 128 + N when stopped by signal N
(temporary files removed; see :mod:`meshaudit.outputs.process`). ``meshaudit --help``
imports neither numpy nor rich: command modules load them when they run.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from .. import __version__
from ..errors import MeshAuditError
from ..results.status import EXIT_UNUSABLE
from . import check, compare, explain, fix, init, profiles
from .options import Parser

#: The commands, in the order ``--help`` lists them.
COMMANDS = (check, fix, explain, profiles, compare, init)


def build_parser() -> argparse.ArgumentParser:
    parser = Parser(
        prog="meshaudit",
        description="Audit the element quality of a 2-D or shell finite-element mesh.",
    )
    parser.add_argument("--version", action="version", version=f"meshaudit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    for command in COMMANDS:
        command.add(sub).set_defaults(run=command.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``meshaudit`` console script; returns the exit status.

    SIGINT, SIGTERM and SIGHUP stop it cleanly (temporary files removed) with exit status
    128 + the signal number; see :mod:`meshaudit.outputs.process`.
    """
    from ..outputs.process import stopping_signals_raise

    with stopping_signals_raise():
        return _main(argv)


def _main(argv: Sequence[str] | None) -> int:
    from ..outputs.process import Interrupted, say, silence_stdout

    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if args.command is None:
            parser.print_usage(sys.stderr)
            names = [c.__name__.rsplit(".", 1)[-1] for c in COMMANDS]
            listed = ", ".join(names[:-1]) + " or " + names[-1]
            raise MeshAuditError(f"a command is required: {listed} (see 'meshaudit --help')")
        return args.run(args)
    except MeshAuditError as exc:
        say(f"meshaudit: error: {exc}")
        return EXIT_UNUSABLE
    except KeyboardInterrupt as exc:
        signum = exc.signum if isinstance(exc, Interrupted) else 2
        name = exc.name if isinstance(exc, Interrupted) else "SIGINT"
        say(f"meshaudit: interrupted by {name}")
        return 128 + signum
    except BrokenPipeError:
        silence_stdout()
        return EXIT_UNUSABLE
    except Exception as exc:  # never show a traceback to a user
        say(f"meshaudit: internal error: {type(exc).__name__}: {exc}")
        return EXIT_UNUSABLE
