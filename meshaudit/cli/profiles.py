"""``meshaudit profiles``: every limit of a profile with its unit, direction and source.

Without arguments: the built-in profiles. With names or TOML files: those profiles. With
``--config FILE`` (or when a configuration is found from the working directory and
``--configured`` is given): the limits that configuration applies, region by region.
Each profile is followed by the severities of the mesh-level findings.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from ..errors import MeshAuditError

if TYPE_CHECKING:  # rich, the profiles and the metrics load on use: --help starts fast
    from rich.console import Console
    from rich.table import Table

    from ..judge.profiles import Profile


def add(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    cmd = sub.add_parser(
        "profiles", help="list the built-in profiles with every limit and its source"
    )
    cmd.add_argument(
        "profiles",
        nargs="*",
        metavar="NAME|FILE",
        help="profiles to list (default: every built-in profile)",
    )
    cmd.add_argument(
        "--configured",
        action="store_true",
        help="list the limits of the configuration file found from the working directory",
    )
    cmd.add_argument(
        "--config", type=Path, metavar="FILE", help="list the limits of this configuration file"
    )
    return cmd


def profile_table(profile: Profile, title: str | None = None) -> Table:
    from rich.table import Table

    from ..cells.registry import CELL_TYPES
    from ..metrics import METRIC_INFO, unit_of

    t = Table(title=title or f"{profile.name}: {profile.description}", title_justify="left")
    for col in ("family", "metric", "unit", "worse when", "warn", "fail", "source"):
        t.add_column(
            col, justify="right" if col in ("warn", "fail") else "left", no_wrap=col != "source"
        )
    for family, limits in profile.limits.items():
        for metric, lim in limits.items():
            info = METRIC_INFO[metric]
            worse = "above" if info.worse == "high" else "below"
            cells = ["-" if v is None else f"{v:g}" for v in (lim.warn, lim.fail)]
            dims = {c.dimension for c in CELL_TYPES.values() if c.family == family}
            t.add_row(family, metric, unit_of(metric, dims), worse, *cells, lim.source)
    return t


def _selected(args: argparse.Namespace) -> list[tuple[str | None, Profile]]:
    from ..judge.profiles import BUILTIN, load_profile
    from .config import settings_for

    if args.config is not None or args.configured:
        settings = settings_for(None, args.config, True)
        if settings.path is None:
            raise MeshAuditError("no meshaudit.toml or [tool.meshaudit] found from here")
        base = settings.profile or BUILTIN["standard"]
        out: list[tuple[str | None, Profile]] = [
            (f"{settings.path}: every element not in a region ({base.name})", base)
        ]
        for name, prof in settings.regions.items():
            out.append((f"{settings.path}: region {name!r} ({prof.description})", prof))
        return out
    if args.profiles:
        return [(None, load_profile(spec)) for spec in args.profiles]
    return [(None, prof) for prof in BUILTIN.values()]


def run(args: argparse.Namespace) -> int:
    """The ``profiles`` command: print the selected profiles; returns exit status 0."""
    from ..outputs.process import terminal_output
    from ..results.status import EXIT_PASS
    from .options import console

    with terminal_output():
        show(args, console())
    return EXIT_PASS


def show(args: argparse.Namespace, console: Console) -> None:
    """Print the profiles ``args`` select on ``console``."""
    for title, profile in _selected(args):
        console.print(profile_table(profile, title))
        console.print(findings_table(profile))


def findings_table(profile: Profile) -> Table:
    """Severity of each mesh-level finding kind under ``profile``, with the reason for the
    built-in default, and the two tolerances of the checks."""
    from rich.table import Table

    from ..judge.finding_kinds import KINDS

    settings = profile.findings
    t = Table(
        title=f"{profile.name}: mesh-level findings (coincident tolerance "
        f"{settings.coincident_tolerance:g} x shortest adjacent edge, overlap fraction "
        f"{settings.overlap_fraction:g})",
        title_justify="left",
    )
    for col in ("finding", "severity", "default", "why the default"):
        t.add_column(col, no_wrap=col != "why the default")
    for kind in KINDS:
        t.add_row(kind.name, settings.severity[kind.name], kind.severity, kind.rationale)
    return t
