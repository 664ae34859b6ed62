"""The mesh-level findings of an audit with a material (see :mod:`meshaudit.metrics.stiffness`).

* ``constant_strain_failure``: elements that fail the constant-strain check;
* ``small_time_step``: elements whose stable time step is below
  :data:`SMALL_STEP_FRACTION` of the median over the elements that have one. An explicit
  run takes the smallest step of the whole mesh, so a few such elements multiply its
  cost; no absolute limit fits every model, this relative one does.
"""

from __future__ import annotations

import numpy as np

from ..engine.materials import MaterialMap
from ..judge.profiles import Profile
from .findings import Finding

#: An element whose stable time step is below this fraction of the mesh's median is a
#: ``small_time_step`` finding: meshaudit default, no published source (one element ten
#: times stiffer-per-mass than the rest makes the explicit run ten times longer).
SMALL_STEP_FRACTION = 0.1


def small_steps(steps: np.ndarray) -> tuple[np.ndarray, float]:
    """(positions of the elements whose step is positive and below
    :data:`SMALL_STEP_FRACTION` times the median, that median). Elements with a step of 0
    (not valid) or none (no material) do not count towards the median."""
    valid = np.isfinite(steps) & (steps > 0)
    if not valid.any():
        return np.zeros(0, dtype=np.int64), float("nan")
    median = float(np.median(steps[valid]))
    return np.flatnonzero(valid & (steps < SMALL_STEP_FRACTION * median)), median


def stiffness_findings(
    steps: np.ndarray, failed: np.ndarray, ids: np.ndarray, profile: Profile
) -> list[Finding]:
    """The findings of the kinds above that occur and are enabled in ``profile``."""
    rows, median = small_steps(steps)
    found = (
        (
            "constant_strain_failure",
            np.flatnonzero(failed),
            "do not reproduce a constant strain field (imposed u = eps x: strains off eps, "
            "or det J <= 0, at a Gauss point)",
        ),
        (
            "small_time_step",
            rows,
            f"have a stable time step below {SMALL_STEP_FRACTION:g} of the median "
            f"({median:.4g}): they set the step of an explicit run",
        ),
    )
    settings = profile.findings
    return [
        Finding(
            kind=kind,
            severity=settings.severity[kind],
            count=int(rows.size),
            element_ids=ids[rows],
            node_ids=np.zeros(0, dtype=np.int64),
            element_index=rows,
            message=f"{rows.size:,} elements {what}",
        )
        for kind, rows, what in found
        if rows.size and settings.enabled(kind)
    ]


def material_notes(materials: MaterialMap) -> list[str]:
    """Report notes: elements without a material (their stiffness metrics undefined)."""
    without = materials.without()
    if not without:
        return []
    return [
        f"{without:,} elements have no material (no [materials] entry covers their region "
        "and there is no default): stable_time_step and bending_error not defined for them"
    ]
