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
from fractions import Fraction
from pathlib import Path
from typing import Any

from ..cells.registry import FAMILIES as CELL_FAMILIES
from ..errors import ProfileError
from ..metrics import METRIC_INFO, SOLID_METRICS
from . import solid_limits
from .derived import midside, outward
from .finding_kinds import KIND_NAMES, SEVERITIES, FindingSettings


def toml_module() -> Any:
    """tomllib (tomli before Python 3.11), imported on first use: most runs read no TOML."""
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover
        import tomli as tomllib
    return tomllib


#: The element families a profile sets limits for: those of :mod:`meshaudit.cells` and the
#: solid families, whose kernels exist before the engine measures them.
SOLID_FAMILIES: tuple[str, ...] = ("tetra", "hexahedron", "wedge", "pyramid")
FAMILIES: tuple[str, ...] = tuple(dict.fromkeys([*CELL_FAMILIES, *SOLID_FAMILIES]))
#: Metrics only solid elements measure: a surface family cannot limit them.
SOLID_ONLY: frozenset[str] = frozenset(SOLID_METRICS)

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

    def __post_init__(self) -> None:
        """Refuse, at once, limits no audit could apply (see :func:`with_limit`)."""
        if not isinstance(self.limits, dict):
            raise ProfileError(f"profile {self.name!r}: limits must be a dict family -> metrics")
        for family, metrics in self.limits.items():
            if not isinstance(metrics, dict):
                raise ProfileError(f"profile {self.name!r}: limits of {family!r} must be a dict")
            for metric, limit in metrics.items():
                _check_limit(family, metric, limit, f"profile {self.name!r}")

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


def _check_solid_only(family: str, metric: str, where: str) -> None:
    """ProfileError for a metric only solids measure (volume, mean ratio, ...) limited for a
    surface family: its elements never read it."""
    if metric in SOLID_ONLY and family not in SOLID_FAMILIES:
        raise ProfileError(
            f"{where}: {family}.{metric}: {metric} is measured for solid elements only "
            f"({', '.join(SOLID_FAMILIES)})"
        )


def _check_limit(family: Any, metric: Any, limit: Any, where: str) -> None:
    """ProfileError unless ``limit`` can stand for ``metric`` of ``family`` (None: none)."""
    if family not in FAMILIES:
        raise ProfileError(f"{where}: unknown element family {family!r} ({', '.join(FAMILIES)})")
    info = METRIC_INFO.get(metric) if isinstance(metric, str) else None
    if info is None or not info.limited:
        takes = ", ".join(m for m, i in METRIC_INFO.items() if i.limited)
        raise ProfileError(f"{where}: {metric!r} is not a metric that takes limits ({takes})")
    _check_solid_only(family, metric, where)
    if limit is None:
        return
    if not isinstance(limit, Limit):
        raise ProfileError(f"{where}: the limit must be a Limit or None, not {limit!r}")
    _number(limit.warn, f"{where}: {family}.{metric}.warn")
    _number(limit.fail, f"{where}: {family}.{metric}.fail")
    if not isinstance(limit.source, str):
        raise ProfileError(f"{where}: {family}.{metric}.source must be a string")
    _check_order(family, metric, limit, where)


# -- How the built-in limits are derived ---------------------------------------------------
# Each family has a few anchor limits, chosen as common practice (min_angle, aspect_ratio,
# warp) or as reasoned meshaudit defaults (taper, midside offsets); every other limit is
# derived from an anchor through a closed form of an analytic shape, so that the two rules
# breach at the same shape and no rule quietly fires before the one named after the
# distortion. Derived values are rounded to five significant figures away from the ideal
# (up for a ceiling, down for a floor), so the shape at the anchor limit breaches neither.

_SQRT3 = math.sqrt(3.0)
#: Outermost Gauss coordinate of the 3 x 3 rule at which quadratic quads sample det J.
_GAUSS3 = math.sqrt(0.6)


def rectangle_condition(aspect: float) -> float:
    """Condition number of an aspect:1 rectangle, (r^2 + 1) / (2 r), at every corner."""
    return (aspect * aspect + 1.0) / (2.0 * aspect)


def trapezoid_jacobian_ratio(taper: float) -> float:
    """det J ratio of a trapezoid of taper t over the 3 x 3 Gauss points, where det J is
    proportional to 1 + t eta: (1 + sqrt(0.6) t) / (1 - sqrt(0.6) t)."""
    return (1.0 + _GAUSS3 * taper) / (1.0 - _GAUSS3 * taper)


def cap_triangle_aspect(base_angle: float) -> float:
    """Aspect ratio of the isosceles triangle with two base angles ``base_angle`` (deg)
    on its longest edge: sqrt(3) L^2 / (4 A) = sqrt(3) cot(base_angle)."""
    return _SQRT3 / math.tan(math.radians(base_angle))


def _pairs(fn: Any, warn: float, fail: float, worse: str, why: str) -> tuple[float, float, str]:
    return (outward(fn(warn), worse), outward(fn(fail), worse), why)


_MAX_ANGLE_Q = (
    "180 deg minus the min-angle limits: a parallelogram reaches both at the same shape; "
    "alone it catches a corner flattening towards 180 deg"
)
_SKEW = (
    "90 deg minus the min-angle limits: a parallelogram's skew is 90 deg minus its acute "
    "angle, so it reaches both at the same shape"
)
_SJ_Q = (
    "sine of the min-angle limits (= sine of the max-angle limits): a convex quad reads "
    "the sine of its worst corner, so this agrees with the two angle rules"
)
_COND_Q = (
    "a w:1 rectangle reads (w^2 + 1)/(2w): the rectangles at the aspect-ratio limits "
    "sit at these limits"
)
_TAPER = (
    "a trapezoid with parallel sides c < a reads (a - c)/(a + c): it warns when c is under "
    "{kw} of a and fails when under {kf}"
)
_JR_Q = (
    "det J ratio of the trapezoid at the taper limits over the 3x3 Gauss points of "
    "quadratic quads, (1 + t sqrt0.6)/(1 - t sqrt0.6); a bilinear quad, sampled at the "
    "2x2 points, reaches it only when tapered both ways"
)
_WARP = "a unit square with one corner lifted by {hw} ({hf}) reads the warn (fail) limit"
_MAX_ANGLE_T = (
    "180 deg minus twice the min-angle limits: the flat isosceles triangle with base "
    "angles at the min-angle limit reaches both; no triangle breaches this alone"
)
_SJ_T = (
    "2/sqrt3 times the sine of the min-angle limits: a triangle reads that of its smallest angle"
)
_ASPECT_T = (
    "sqrt3 cot of the min-angle limits: the flat isosceles triangle with base angles at the "
    "min-angle limit reaches both; every triangle past it is past the min-angle limit too"
)
_COND_T = (
    "(r^2 + 1)/(2r) at the aspect-ratio limits r: the same flat isosceles triangle reaches "
    "all three; every triangle past it is past the min-angle limit too"
)
_JR_T = (
    "det J ratio (1 + 2d)/(1 - 2d) of a straight triangle6 whose midside node is moved d "
    "along its edge, at the midside along-offset limits d; a linear triangle reads 1"
)


def _fraction(taper: float) -> str:
    """Short side over long side of the trapezoid of this taper, (1 - t)/(1 + t)."""
    return str(Fraction((1.0 - taper) / (1.0 + taper)).limit_denominator(20))


def _lift(warp: float) -> str:
    """Corner lift h of the unit square that reads this warp: acos(1/(1 + h^2)) = warp."""
    return f"{math.sqrt(1.0 / math.cos(math.radians(warp)) - 1.0):.3f}"


def _quad(
    min_angle: tuple[float, float],
    aspect: tuple[float, float],
    taper: tuple[float, float],
    warp: tuple[float, float],
    along: tuple[float, float],
    across: tuple[float, float],
    anchor: str,
    own: str,
) -> dict[str, Limit]:
    """Quad limits from the anchors (source ``anchor``; taper and the midside offsets are
    meshaudit's own choices, source ``own``), the rest derived as described above."""
    (aw, af), (tw, tf) = min_angle, taper
    taper_why = _TAPER.format(kw=_fraction(tw), kf=_fraction(tf))
    return _limits(
        {
            "scaled_jacobian": _pairs(lambda a: math.sin(math.radians(a)), aw, af, "low", _SJ_Q),
            "jacobian_ratio": _pairs(trapezoid_jacobian_ratio, tw, tf, "high", _JR_Q),
            "aspect_ratio": (*aspect, anchor),
            "skew": (90.0 - aw, 90.0 - af, _SKEW),
            "taper": (tw, tf, f"{own}; {taper_why}"),
            "warp": (*warp, f"{anchor}; " + _WARP.format(hw=_lift(warp[0]), hf=_lift(warp[1]))),
            "min_angle": (aw, af, anchor),
            "max_angle": (180.0 - aw, 180.0 - af, _MAX_ANGLE_Q),
            "condition": _pairs(rectangle_condition, *aspect, "high", _COND_Q),
            **midside(along, across, own),
        }
    )


def _triangle(
    min_angle: tuple[float, float],
    along: tuple[float, float],
    across: tuple[float, float],
    anchor: str,
    own: str,
) -> dict[str, Limit]:
    """Triangle limits: every shape rule derived from the min_angle anchor (a triangle's
    shape metrics are all functions of its angles), the Jacobian ratio from ``along``."""
    aw, af = min_angle
    aspect = (cap_triangle_aspect(aw), cap_triangle_aspect(af))
    return _limits(
        {
            "scaled_jacobian": _pairs(
                lambda a: 2.0 / _SQRT3 * math.sin(math.radians(a)), aw, af, "low", _SJ_T
            ),
            "aspect_ratio": _pairs(cap_triangle_aspect, aw, af, "high", _ASPECT_T),
            "min_angle": (aw, af, anchor),
            "max_angle": (180.0 - 2.0 * aw, 180.0 - 2.0 * af, _MAX_ANGLE_T),
            "condition": _pairs(rectangle_condition, *aspect, "high", _COND_T),
            "jacobian_ratio": _pairs(lambda d: (1 + 2 * d) / (1 - 2 * d), *along, "high", _JR_T),
            **midside(along, across, own),
        }
    )


_TIGHT = OWN + "; tighter variant of 'standard'"
_LOOSE = OWN + "; looser variant of 'standard'"


def _builtin(
    name: str,
    description: str,
    quad: dict[str, tuple[float, float]],
    triangle_angle: tuple[float, float],
    dihedral: tuple[float, float],
    along: tuple[float, float],
    across: tuple[float, float],
    grading: tuple[float, float],
    anchor: str,
    own: str,
) -> Profile:
    """A built-in profile from its anchors: the quad's (``quad``: min_angle, aspect, taper,
    warp), the triangle's smallest angle, the tetrahedra's smallest dihedral angle and the
    midside offsets. The solid families carry the surface anchors over to their faces and
    axes (:mod:`meshaudit.judge.solid_limits`)."""
    mid = {"along": along, "across": across}
    limits = {
        "quad": _quad(**quad, **mid, anchor=anchor, own=own),
        "triangle": _triangle(triangle_angle, **mid, anchor=anchor, own=own),
        "tetra": _limits(
            solid_limits.tetra(triangle_angle, dihedral, **mid, anchor=anchor, own=own)
        ),
        "hexahedron": _limits(
            solid_limits.hexahedron(
                quad["min_angle"],
                quad["aspect"],
                quad["taper"],
                quad["warp"],
                **mid,
                anchor=anchor,
                own=own,
            )
        ),
        "wedge": _limits(
            solid_limits.wedge(triangle_angle, quad["aspect"], quad["taper"], quad["warp"], anchor)
        ),
        "pyramid": _limits(
            solid_limits.pyramid(triangle_angle, dihedral, quad["taper"], quad["warp"], anchor)
        ),
    }
    source = grading_source(grading, anchor)
    for family_limits in limits.values():
        family_limits["size_ratio"] = Limit(*grading, source)
    return Profile(name, description, limits)


_GRADING = (
    "length ratio (sqrt area, cbrt volume) between neighbours, the same for every family: "
    "gradual grading; a 2:1 refinement step reads 2 and {verdict}"
)


def grading_source(grading: tuple[float, float], anchor: str) -> str:
    """Source of the size_ratio limits: the same for every family (a length ratio)."""
    warn, fail = grading
    verdict = "passes" if warn >= 2.0 else ("warns" if fail >= 2.0 else "fails")
    return f"{anchor}; " + _GRADING.format(verdict=verdict)


STANDARD = _builtin(
    "standard",
    "General structural analysis with linear and quadratic 2-D, shell and solid elements.",
    quad={
        "min_angle": (45.0, 30.0),
        "aspect": (5.0, 10.0),
        "taper": (0.4, 0.6),
        "warp": (10.0, 20.0),
    },
    triangle_angle=(30.0, 15.0),
    dihedral=(15.0, 10.0),
    along=(0.1, 0.2),
    across=(0.15, 0.3),
    grading=(2.0, 4.0),
    anchor=COMMON,
    own=OWN,
)

STRICT = _builtin(
    "strict",
    "Regions where stresses are read directly (fillets, notches, contact zones).",
    quad={
        "min_angle": (60.0, 45.0),
        "aspect": (3.0, 5.0),
        "taper": (0.25, 0.4),
        "warp": (5.0, 10.0),
    },
    triangle_angle=(40.0, 30.0),
    dihedral=(20.0, 15.0),
    along=(0.05, 0.1),
    across=(0.1, 0.2),
    grading=(1.5, 2.5),
    anchor=_TIGHT,
    own=_TIGHT,
)

LENIENT = _builtin(
    "lenient",
    "Stiffness or load-path models where local stress accuracy is not the goal.",
    quad={
        "min_angle": (30.0, 15.0),
        "aspect": (10.0, 20.0),
        "taper": (0.6, 0.8),
        "warp": (20.0, 35.0),
    },
    triangle_angle=(20.0, 10.0),
    dihedral=(10.0, 5.0),
    along=(0.15, 0.22),
    across=(0.2, 0.4),
    grading=(3.0, 6.0),
    anchor=_LOOSE,
    own=_LOOSE,
)

BUILTIN: dict[str, Profile] = {p.name: p for p in (STANDARD, STRICT, LENIENT)}


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
        base = BUILTIN[_extends(data.get("extends", "standard"), where)]
    for key in ("name", "description"):
        if key in data and not isinstance(data[key], str):
            raise ProfileError(f"{where}: {key} must be a string, not {data[key]!r}")
    limits = {fam: dict(base.limits.get(fam, {})) for fam in FAMILIES}
    for family in FAMILIES:
        table = data.get(family, {})
        if not isinstance(table, dict):
            raise ProfileError(f"{where}: [{family}] must be a table")
        for metric, spec in table.items():
            if metric not in METRIC_INFO or not METRIC_INFO[metric].limited:
                raise ProfileError(f"{where}: {family}.{metric} is not a metric that takes limits")
            _check_solid_only(family, metric, where)
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
            source = spec.get("source", f"user profile {where}")
            if not isinstance(source, str):
                raise ProfileError(f"{where}: {family}.{metric}.source must be a string")
            lim = Limit(
                _number(spec.get("warn"), f"{where}: {family}.{metric}.warn"),
                _number(spec.get("fail"), f"{where}: {family}.{metric}.fail"),
                source,
            )
            _check_order(family, metric, lim, where)
            limits[family][metric] = lim
    name = str(data.get("name", Path(where).stem))
    desc = str(data.get("description", f"{base.name} with overrides from {where}"))
    findings = _finding_settings(data.get("findings", {}), base.findings, where)
    return Profile(name, desc, limits, origin=where, findings=findings)


def _extends(value: Any, where: str) -> str:
    """The built-in profile an ``extends`` names; ProfileError for anything else (a
    profile file cannot extend another file, so no chain of files, nor a cycle, exists)."""
    names = ", ".join(BUILTIN)
    if not isinstance(value, str):
        raise ProfileError(
            f"{where}: extends must be the name of a built-in profile ({names}), not {value!r}"
        )
    if value not in BUILTIN:
        raise ProfileError(
            f"{where}: extends unknown profile {value!r}: it must name a built-in profile "
            f"({names}); a profile file cannot extend another file"
        )
    return value


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
    if not os.path.exists(path):  # False, not an error, for a link loop or a long name
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
    """A copy of ``profile`` with one limit replaced (``None`` removes it).

    Raises :class:`ProfileError` at once for a family with no limits (see FAMILIES), a
    name that is not a metric taking limits (``score`` takes none: it follows the
    verdict), a limit that is not a :class:`Limit` with finite numbers (or None), or a
    warn limit past the fail limit.
    """
    if not isinstance(profile, Profile):
        raise ProfileError(f"with_limit needs a Profile, not {type(profile).__name__}")
    _check_limit(family, metric, limit, "with_limit")
    limits = {fam: dict(m) for fam, m in profile.limits.items()}
    limits.setdefault(family, {})
    if limit is None:
        limits[family].pop(metric, None)
    else:
        limits[family][metric] = limit
    return replace(profile, limits=limits)
