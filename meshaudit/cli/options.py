"""What the commands share: the parser, the options of check and compare, the settings
every command resolves the same way, and the terminal console.

Imported for ``meshaudit --help``: nothing here loads numpy or rich until it is used.
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..errors import MeshAuditError

if TYPE_CHECKING:
    from ..judge.profiles import Profile
    from ..material import Material
    from ..outputs.console import PlainConsole
    from .config import Settings

#: Built-in values of the options a configuration file may set.
DEFAULTS = {"profile": "standard", "fail_on": "fail", "top": 10}


class Parser(argparse.ArgumentParser):
    """argparse that reports a bad option in one line (and exit status 2)."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise MeshAuditError(f"{message} (see '{self.prog} --help')")


def positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"expected 0 or more, got {value}")
    return value


def add_common_options(cmd: argparse.ArgumentParser) -> None:
    """Options shared by check and compare; unset ones come from the configuration file."""
    cmd.add_argument(
        "--format",
        dest="file_format",
        metavar="NAME",
        help="meshio format name, when the extension does not tell it",
    )
    cmd.add_argument(
        "-p",
        "--profile",
        metavar="NAME|FILE",
        help="built-in profile (standard, strict, lenient) or a TOML file (default: the "
        "configuration file's limits, else standard)",
    )
    cmd.add_argument(
        "--fail-on",
        choices=("fail", "warn"),
        help="which element verdict fails the mesh (default: fail)",
    )
    add_config_options(
        cmd,
        "configuration file (default: meshaudit.toml or pyproject.toml [tool.meshaudit] "
        "found upward from the mesh, then from the working directory)",
    )


def add_config_options(cmd: argparse.ArgumentParser, help_text: str) -> None:
    """--config FILE and --no-config."""
    cmd.add_argument("--config", type=Path, metavar="FILE", help=help_text)
    cmd.add_argument("--no-config", action="store_true", help="ignore configuration files")


def add_material_option(cmd: argparse.ArgumentParser) -> None:
    """--material E=...,nu=...,rho=...[,t=...][,plane=strain]."""
    cmd.add_argument(
        "--material",
        metavar="E=..,nu=..,rho=..[,t=..]",
        help="measure the stable time step and the bending error with this material "
        "(consistent units; the time step comes out in their unit of time); plane stress "
        "unless plane=strain; default: the configuration's [materials], else none",
    )


def materials_of(args: argparse.Namespace, settings: Settings) -> dict[str, Material] | None:
    """The materials of an audit: the configuration's ``[materials]`` (region name ->
    material, ``default`` for the rest), with ``--material`` as the default when given
    (the region entries stay). None when neither gives one: nothing is measured."""
    from ..material import DEFAULT, parse_material

    table = dict(settings.materials)
    given = getattr(args, "material", None)
    if given is not None:
        table[DEFAULT] = parse_material(given)
    return table or None


@dataclass(frozen=True)
class Resolved:
    """The options of one command for one mesh: the command line's where given, else the
    configuration file's, else the built-in :data:`DEFAULTS`."""

    settings: Settings
    profile: Profile | str
    fail_on: str
    top: int


def resolve(args: argparse.Namespace, mesh: Path) -> Resolved:
    """Read the configuration that applies to ``mesh`` (unless ``--no-config``) and
    resolve ``--profile``, ``--fail-on`` and ``--top`` (options a command does not have
    count as not given)."""
    from .config import settings_for

    settings = settings_for(mesh, args.config, not args.no_config)

    def value(name: str) -> Any:
        given = getattr(args, name, None)
        if given is not None:
            return given
        configured = getattr(settings, name)
        return configured if configured is not None else DEFAULTS[name]

    return Resolved(settings, value("profile"), value("fail_on"), value("top"))


def console(log_width: int = 120) -> PlainConsole:
    """The terminal console every command prints with (``log_width`` columns when standard
    output is not a terminal)."""
    from ..outputs.console import terminal_console

    return terminal_console(log_width)
