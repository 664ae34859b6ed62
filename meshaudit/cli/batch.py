"""``meshaudit check`` over one or many meshes, with configuration files applied.

Exit status of a run over several meshes (worst wins, see
:mod:`meshaudit.results.status`): 2 when any input cannot be audited (missing,
unreadable, no match for a pattern, bad configuration), else 1 when any mesh fails, else
0. Meshes that can be audited are audited, and their reports written, even when another
input is unusable.
"""

from __future__ import annotations

import argparse
import glob
import os
from pathlib import Path

import numpy as np

from ..errors import MeshAuditError, OutputError
from ..paths import reason
from ..results.status import EXIT_UNUSABLE, Outcome, exit_status, failure_reason
from .options import materials_of, resolve

#: File extension of each report kind, used when a directory is given.
REPORT_SUFFIX = {"json": ".json", "csv": ".csv", "junit": ".xml"}
GLOB_CHARS = frozenset("*?[")
#: Other per-mesh outputs of check (plots, annotated mesh, HTML): a {stem} pattern only.
STEM_ONLY_OUTPUTS = ("plot", "annotate", "html")


def expand_inputs(patterns: list[str]) -> list[tuple[str, str | None]]:
    """(path, error) per input: existing paths as given, glob patterns expanded (sorted).

    A pattern that matches no file gives one entry with an error message.
    """
    out: list[tuple[str, str | None]] = []
    for pattern in patterns:
        if os.path.exists(pattern) or not GLOB_CHARS & set(pattern):
            out.append((pattern, None))
            continue
        matches = sorted(p for p in glob.glob(pattern, recursive=True) if os.path.isfile(p))
        if not matches:
            out.append((pattern, f"{pattern}: no file matches this pattern"))
        out.extend((m, None) for m in matches)
    seen: set[str] = set()
    unique = []
    for path, err in out:
        if path not in seen:
            seen.add(path)
            unique.append((path, err))
    return unique


def _is_template(text: str) -> bool:
    """A report option naming a directory (existing, or ending in '/') or a {stem} pattern."""
    return os.path.isdir(text) or text.endswith(("/", "\\")) or "{stem}" in text


def check_report_options(args: argparse.Namespace) -> None:
    """With several meshes, each report option must be a directory or a {stem} pattern
    (other per-mesh outputs, such as plots, a {stem} pattern)."""
    for kind in REPORT_SUFFIX:
        given = getattr(args, kind)
        if given is not None and not _is_template(str(given)):
            raise OutputError(
                f"--{kind} {given}: with several meshes, give a directory or a file name "
                "containing {stem}"
            )
    for kind in STEM_ONLY_OUTPUTS:
        given = getattr(args, kind, None)
        if given is not None and "{stem}" not in str(given):
            raise OutputError(
                f"--{kind} {given}: with several meshes, give a file name containing {{stem}}"
            )


def _destination(given: str, kind: str, mesh: Path) -> tuple[Path, bool]:
    """Where a report given on the command line goes for ``mesh``; and whether it was
    derived from a directory or a ``{stem}`` pattern (then its directory is created)."""
    if os.path.isdir(given) or given.endswith(("/", "\\")):
        return Path(given) / f"{mesh.stem}{REPORT_SUFFIX[kind]}", True
    if "{stem}" in given:
        return Path(given.replace("{stem}", mesh.stem)), True
    return Path(given), False


def apply_settings(args: argparse.Namespace, mesh: Path, many: bool) -> argparse.Namespace:
    """A copy of ``args`` for one mesh: configuration file values fill every option the
    command line left unset, report paths are resolved, and ``regions`` is added."""
    resolved = resolve(args, mesh)
    settings = resolved.settings
    out = argparse.Namespace(**vars(args))
    out.mesh = str(mesh)
    out.config_path = settings.path
    out.regions = settings.regions
    out.materials = materials_of(args, settings)
    out.profile, out.fail_on, out.top = resolved.profile, resolved.fail_on, resolved.top
    for kind in REPORT_SUFFIX:
        given = getattr(args, kind)
        templated = True
        if given is not None:
            dest, templated = _destination(str(given), kind, mesh)
        elif kind in settings.reports:
            template = settings.reports[kind]
            if template.endswith(("/", "\\")):  # a directory: one file per mesh
                template += "{stem}" + REPORT_SUFFIX[kind]
            if many and "{stem}" not in template:
                raise OutputError(
                    f"{settings.path}: {kind} = {template!r} would be written once per mesh; "
                    "use {stem} in it"
                )
            dest = Path(template.replace("{stem}", mesh.stem))
            dest = dest if dest.is_absolute() else settings.base_dir / dest
        else:
            dest = None
        if dest is not None and templated:
            _make_parent(dest)
        setattr(out, kind, dest)
    for kind in STEM_ONLY_OUTPUTS:
        given = getattr(args, kind, None)
        if given is not None and "{stem}" in str(given):
            dest = Path(str(given).replace("{stem}", mesh.stem))
            _make_parent(dest)
            setattr(out, kind, dest)
    return out


def _make_parent(dest: Path) -> None:
    try:
        dest.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{dest}: cannot create directory {dest.parent}: {reason(exc)}") from None


def check_many(
    args: argparse.Namespace, inputs: list[tuple[str, str | None]], check_one
) -> list[Outcome]:
    """Run ``check_one(args_for_mesh) -> Report`` on every input, collecting outcomes.

    ``check_one`` audits one mesh and writes its reports (it prints nothing).
    Errors of one input are recorded and do not stop the others.
    """
    outcomes = []
    written: dict[Path, str] = {}
    for path, error in inputs:
        if error is not None:
            outcomes.append(Outcome(path, EXIT_UNUSABLE, error=error))
            continue
        try:
            one = apply_settings(args, Path(path), many=True)
            _claim_destinations(one, path, written)
            report = check_one(one)
        except MeshAuditError as exc:
            outcomes.append(Outcome(path, EXIT_UNUSABLE, error=str(exc)))
            continue
        finite = report.score[np.isfinite(report.score)]
        outcomes.append(
            Outcome(
                path,
                exit_status(report.passed),
                elements=len(report),
                counts=report.verdict_counts(),
                worst_score=float(finite.min()) if finite.size else None,
                profile=report.profile.name,
                not_audited=report.summary.skipped_text(),
                why=failure_reason(report),
            )
        )
    return outcomes


def _claim_destinations(args: argparse.Namespace, mesh: str, written: dict[Path, str]) -> None:
    """Refuse a report path another mesh of this run already wrote to."""
    for kind in (*REPORT_SUFFIX, *STEM_ONLY_OUTPUTS):
        dest = getattr(args, kind, None)
        if dest is None:
            continue
        key = Path(os.path.realpath(dest))
        if key in written:
            raise OutputError(
                f"{dest}: the report of {written[key]} is already there; meshes with the "
                "same name need separate report directories"
            )
        written[key] = mesh
