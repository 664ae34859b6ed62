"""Quality profiles: a warn and a fail limit per metric and element family.

Whether a limit is a ceiling or a floor follows from the metric (see
:data:`meshaudit.metrics.METRICS`): aspect ratio breaches when it rises above the
limit, scaled Jacobian when it falls below it. An element that is invalid (inverted,
non-convex, self-intersecting, degenerate) always fails, whatever the profile says.

A user profile is a TOML file::

    name = "bracket-fine"
    extends = "standard"          # optional, the built-in it starts from
    [quad]
    aspect_ratio = { warn = 4, fail = 8, source = "our stress group, 2026" }
    skew = {}                     # an empty table switches a limit off
    [triangle]
    min_angle = { warn = 25, fail = 15 }
    [findings]                    # mesh-level findings: "off", "info", "warn" or "fail"
    orphan_nodes = "info"
    coincident_tolerance = 1e-5   # relative to the shortest adjacent edge
"""

from __future__ import annotations

import math
import os
import sys
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from .errors import ProfileError
from .finding_kinds import KIND_NAMES, SEVERITIES, FindingSettings
from .metrics import METRIC_INFO


def toml_module() -> Any:
    """tomllib (tomli before Python 3.11), imported on first use: most runs read no TOML."""
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover
        import tomli as tomllib
    return tomllib


FAMILIES = ("quad", "triangle")

COMMON = "common practice, no single source"
OWN = "meshaudit default, no published source"


@dataclass(frozen=True)
class Limit:
    """Warn and fail thresholds of one metric; ``None`` means no such threshold."""

    warn: float | None
    fail: float | None
    source: str = COMMON


@dataclass(frozen=True)
class Profile:
    """A named set of limits: family -> metric -> :class:`Limit`."""

    name: str
    description: str
    limits: dict[str, dict[str, Limit]] = field(default_factory=dict)
    origin: str = "built-in"
    findings: FindingSettings = field(default_factory=FindingSettings)

    def limit(self, family: str, metric: str) -> Limit | None:
        return self.limits.get(family, {}).get(metric)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "description": self.description,
            "origin": self.origin,
            "limits": {
                fam: {
                    m: {
                        "warn": lim.warn,
                        "fail": lim.fail,
                        "worse": METRIC_INFO[m].worse,
                        "source": lim.source,
                    }
                    for m, lim in metrics.items()
                }
                for fam, metrics in self.limits.items()
            },
            "findings": self.findings.to_dict(),
        }


def _limits(table: dict[str, tuple[float, float, str]]) -> dict[str, Limit]:
    return {m: Limit(w, f, s) for m, (w, f, s) in table.items()}


_COND = OWN + "; set to agree with the aspect-ratio limits (5:1 rectangle reads 2.6)"
_JR = OWN + "; Gauss-point ratio, taper 0.5 alone reads 1.8"

#: Midside-node limits (quadratic elements; linear ones read NaN and never breach).
#: Along: det J vanishes at a corner when its edge's midside node reaches the quarter
#: point, 0.25 (Henshell and Shaw 1975; Barsoum 1976, from memory); the warn and fail
#: limits keep a working margin below it. Across: a midside node at h off the chord bends
#: the edge's end tangents by atan(4 h / L) (14 deg at 0.0625, 31 deg at 0.15).
_ALONG = OWN + "; margin below the quarter point 0.25 where det J vanishes at the corner"
_ACROSS = OWN + "; 0.15 tilts the edge's end tangents 31 deg off the chord, 0.3 tilts 50 deg"
_JR6 = _JR + "; applies to triangle6 (a linear triangle always reads 1)"


def _midside(along: tuple[float, float], across: tuple[float, float], note: str = "") -> dict:
    return {
        "midside_offset_along": (*along, _ALONG + note),
        "midside_offset_across": (*across, _ACROSS + note),
    }


STANDARD = Profile(
    "standard",
    "General structural analysis with linear and quadratic 2-D and shell elements.",
    {
        "quad": _limits(
            {
                "scaled_jacobian": (0.5, 0.2, COMMON),
                "jacobian_ratio": (2.5, 5.0, _JR),
                "aspect_ratio": (5.0, 10.0, COMMON),
                "skew": (30.0, 45.0, COMMON),
                "taper": (0.5, 0.8, COMMON),
                "warp": (10.0, 20.0, COMMON),
                "min_angle": (45.0, 30.0, COMMON),
                "max_angle": (135.0, 160.0, COMMON),
                "condition": (3.0, 6.0, _COND),
                **_midside((0.1, 0.2), (0.15, 0.3)),
            }
        ),
        "triangle": _limits(
            {
                "scaled_jacobian": (0.5, 0.2, COMMON),
                "aspect_ratio": (3.0, 6.0, COMMON),
                "min_angle": (30.0, 15.0, COMMON),
                "max_angle": (120.0, 150.0, COMMON),
                "condition": (2.0, 4.0, OWN),
                "jacobian_ratio": (2.5, 5.0, _JR6),
                **_midside((0.1, 0.2), (0.15, 0.3)),
            }
        ),
    },
)

_TIGHT = OWN + "; tighter variant of 'standard'"
_LOOSE = OWN + "; looser variant of 'standard'"

STRICT = Profile(
    "strict",
    "Regions where stresses are read directly (fillets, notches, contact zones).",
    {
        "quad": _limits(
            {
                "scaled_jacobian": (0.7, 0.5, _TIGHT),
                "jacobian_ratio": (1.8, 3.0, _TIGHT),
                "aspect_ratio": (3.0, 5.0, _TIGHT),
                "skew": (20.0, 35.0, _TIGHT),
                "taper": (0.3, 0.5, _TIGHT),
                "warp": (5.0, 10.0, _TIGHT),
                "min_angle": (60.0, 45.0, _TIGHT),
                "max_angle": (120.0, 135.0, _TIGHT),
                "condition": (2.0, 3.0, _TIGHT),
                **_midside((0.05, 0.1), (0.1, 0.2), "; tighter variant"),
            }
        ),
        "triangle": _limits(
            {
                "scaled_jacobian": (0.7, 0.5, _TIGHT),
                "aspect_ratio": (2.0, 3.0, _TIGHT),
                "min_angle": (40.0, 30.0, _TIGHT),
                "max_angle": (100.0, 120.0, _TIGHT),
                "condition": (1.5, 2.0, _TIGHT),
                "jacobian_ratio": (1.8, 3.0, _TIGHT),
                **_midside((0.05, 0.1), (0.1, 0.2), "; tighter variant"),
            }
        ),
    },
)

LENIENT = Profile(
    "lenient",
    "Stiffness or load-path models where local stress accuracy is not the goal.",
    {
        "quad": _limits(
            {
                "scaled_jacobian": (0.3, 0.1, _LOOSE),
                "jacobian_ratio": (5.0, 10.0, _LOOSE),
                "aspect_ratio": (10.0, 20.0, _LOOSE),
                "skew": (45.0, 60.0, _LOOSE),
                "taper": (0.7, 0.9, _LOOSE),
                "warp": (20.0, 35.0, _LOOSE),
                "min_angle": (30.0, 15.0, _LOOSE),
                "max_angle": (150.0, 170.0, _LOOSE),
                "condition": (6.0, 12.0, _LOOSE),
                **_midside((0.15, 0.22), (0.2, 0.4), "; looser variant"),
            }
        ),
        "triangle": _limits(
            {
                "scaled_jacobian": (0.3, 0.1, _LOOSE),
                "aspect_ratio": (6.0, 12.0, _LOOSE),
                "min_angle": (20.0, 10.0, _LOOSE),
                "max_angle": (140.0, 165.0, _LOOSE),
                "condition": (4.0, 8.0, _LOOSE),
                "jacobian_ratio": (5.0, 10.0, _LOOSE),
                **_midside((0.15, 0.22), (0.2, 0.4), "; looser variant"),
            }
        ),
    },
)

BUILTIN: dict[str, Profile] = {p.name: p for p in (STANDARD, STRICT, LENIENT)}


def _number(value: Any, where: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ProfileError(f"{where}: expected a finite number, got {value!r}")
    return float(value)


def _check_order(family: str, metric: str, limit: Limit, where: str) -> None:
    if limit.warn is None or limit.fail is None:
        return
    worse = METRIC_INFO[metric].worse
    if worse == "high" and limit.warn > limit.fail:
        raise ProfileError(
            f"{where}: {family}.{metric} warn {limit.warn} is above fail {limit.fail}"
        )
    if worse == "low" and limit.warn < limit.fail:
        raise ProfileError(
            f"{where}: {family}.{metric} warn {limit.warn} is below fail {limit.fail}"
        )


def profile_from_dict(
    data: dict[str, Any], where: str = "<profile>", base: Profile | None = None
) -> Profile:
    """Build a profile from parsed TOML (see the module docstring for the layout).

    Without ``extends`` the limits start from ``base`` (default: the built-in 'standard').
    """
    known = {"name", "description", "extends", "findings", *FAMILIES}
    unknown = sorted(set(data) - known)
    if unknown:
        raise ProfileError(f"{where}: unknown key {unknown[0]!r} (families: {', '.join(FAMILIES)})")
    if "extends" in data or base is None:
        base_name = data.get("extends", "standard")
        if base_name not in BUILTIN:
            raise ProfileError(f"{where}: extends unknown profile {base_name!r}")
        base = BUILTIN[base_name]
    limits = {fam: dict(base.limits.get(fam, {})) for fam in FAMILIES}
    for family in FAMILIES:
        table = data.get(family, {})
        if not isinstance(table, dict):
            raise ProfileError(f"{where}: [{family}] must be a table")
        for metric, spec in table.items():
            if metric not in METRIC_INFO or METRIC_INFO[metric].worse == "none":
                raise ProfileError(f"{where}: {family}.{metric} is not a metric that takes limits")
            if not isinstance(spec, dict):
                raise ProfileError(
                    f"{where}: {family}.{metric} must be a table like {{ warn = 1, fail = 2 }}"
                )
            extra = sorted(set(spec) - {"warn", "fail", "source"})
            if extra:
                raise ProfileError(f"{where}: {family}.{metric} has unknown key {extra[0]!r}")
            if not spec:
                limits[family].pop(metric, None)
                continue
            lim = Limit(
                _number(spec.get("warn"), f"{where}: {family}.{metric}.warn"),
                _number(spec.get("fail"), f"{where}: {family}.{metric}.fail"),
                str(spec.get("source", f"user profile {where}")),
            )
            _check_order(family, metric, lim, where)
            limits[family][metric] = lim
    name = str(data.get("name", Path(where).stem))
    desc = str(data.get("description", f"{base.name} with overrides from {where}"))
    findings = _finding_settings(data.get("findings", {}), base.findings, where)
    return Profile(name, desc, limits, origin=where, findings=findings)


def _finding_settings(table: Any, base: FindingSettings, where: str) -> FindingSettings:
    """``[findings]``: kind = "off" | "info" | "warn" | "fail", plus the two tolerances."""
    if not isinstance(table, dict):
        raise ProfileError(f"{where}: [findings] must be a table")
    severity = dict(base.severity)
    numbers = {"coincident_tolerance": base.coincident_tolerance}
    numbers["overlap_fraction"] = base.overlap_fraction
    for key, value in table.items():
        if key in numbers:
            number = _number(value, f"{where}: findings.{key}")
            if number is None or not 0.0 < number < 1.0:
                raise ProfileError(f"{where}: findings.{key} must be between 0 and 1")
            numbers[key] = number
        elif key in KIND_NAMES:
            if value not in SEVERITIES:
                raise ProfileError(
                    f"{where}: findings.{key} must be one of {', '.join(SEVERITIES)}, not {value!r}"
                )
            severity[key] = value
        else:
            raise ProfileError(
                f"{where}: findings.{key} is not a finding kind ({', '.join(KIND_NAMES)})"
            )
    return FindingSettings(severity, numbers["coincident_tolerance"], numbers["overlap_fraction"])


def load_profile(spec: str | os.PathLike[str] | Profile | None = None) -> Profile:
    """A built-in profile by name, a TOML file by path, or a :class:`Profile` as is."""
    if spec is None:
        return STANDARD
    if isinstance(spec, Profile):
        return spec
    text = str(spec)
    if text in BUILTIN:
        return BUILTIN[text]
    path = Path(text)
    if not path.exists():
        names = ", ".join(BUILTIN)
        raise ProfileError(f"unknown profile {text!r}: not a built-in ({names}) nor a file")
    tomllib = toml_module()
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError) as exc:
        raise ProfileError(f"{path}: cannot read profile: {exc}") from None
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{path}: not valid TOML: {exc}") from None
    return profile_from_dict(data, str(path))


def with_limit(profile: Profile, family: str, metric: str, limit: Limit | None) -> Profile:
    """A copy of ``profile`` with one limit replaced (``None`` removes it)."""
    limits = {fam: dict(m) for fam, m in profile.limits.items()}
    limits.setdefault(family, {})
    if limit is None:
        limits[family].pop(metric, None)
    else:
        limits[family][metric] = limit
    return replace(profile, limits=limits)
