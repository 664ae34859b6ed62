"""The material an element's stiffness and mass are worked out with.

A :class:`Material` is linear elastic and isotropic: Young's modulus ``E``, Poisson's
ratio ``nu``, density ``rho`` and, for surface elements, thickness ``t``. Any consistent
set of units will do; the stable time step then comes out in that set's unit of time
(seconds for SI: N/m^2, kg/m^3, m; also seconds for N/mm^2 = MPa, tonne/mm^3, mm).
Surface elements are in plane stress unless ``plane = "strain"``; shells are taken in
membrane behaviour, in each element's own plane.

:func:`parse_material` reads the command line's ``E=...,nu=...,rho=...[,t=...]`` and
:func:`material_from_dict` a ``[materials]`` entry of the configuration file.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from .errors import InputError

#: The name of the material entry that applies to every element no region entry covers.
DEFAULT = "default"
PLANES = ("stress", "strain")
_KEYS = ("E", "nu", "rho", "t", "plane")


@dataclass(frozen=True)
class Material:
    """Isotropic linear elastic material. ``E`` > 0 (stress), -1 < ``nu`` < 0.5,
    ``rho`` > 0 (mass per volume), ``t`` > 0 (length; thickness of surface elements,
    ignored for solids), ``plane`` "stress" (default) or "strain" (surface elements).
    Raises :class:`~meshaudit.errors.InputError` otherwise."""

    E: float
    nu: float
    rho: float
    t: float = 1.0
    plane: str = "stress"

    def __post_init__(self) -> None:
        for key in ("E", "nu", "rho", "t"):
            value = getattr(self, key)
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(f"material: {key} must be a number, not {value!r}")
            if not math.isfinite(value):
                raise InputError(f"material: {key} must be finite, not {value!r}")
        if not self.E > 0:
            raise InputError(f"material: E must be above 0, not {self.E!r}")
        if not -1.0 < self.nu < 0.5:
            raise InputError(f"material: nu must lie between -1 and 0.5, not {self.nu!r}")
        if not self.rho > 0:
            raise InputError(f"material: rho must be above 0, not {self.rho!r}")
        if not self.t > 0:
            raise InputError(f"material: t must be above 0, not {self.t!r}")
        if self.plane not in PLANES:
            raise InputError(f"material: plane must be 'stress' or 'strain', not {self.plane!r}")

    def lame(self, dimension: int) -> tuple[float, float]:
        """(lambda, mu) of the stress-strain law: in 3-D and plane strain Lame's
        constants, in plane stress lambda* = E nu / (1 - nu^2) (the in-plane law with
        the out-of-plane stress zero)."""
        mu = self.E / (2.0 * (1.0 + self.nu))
        if dimension == 2 and self.plane == "stress":
            return self.E * self.nu / (1.0 - self.nu**2), mu
        return self.E * self.nu / ((1.0 + self.nu) * (1.0 - 2.0 * self.nu)), mu

    @property
    def wave_speed(self) -> float:
        """sqrt(E / rho): the bar wave speed, length per time."""
        return math.sqrt(self.E / self.rho)

    def to_dict(self) -> dict[str, Any]:
        return {"E": self.E, "nu": self.nu, "rho": self.rho, "t": self.t, "plane": self.plane}

    def text(self) -> str:
        return f"E={self.E:g}, nu={self.nu:g}, rho={self.rho:g}, t={self.t:g}, plane {self.plane}"


def material_from_dict(data: Mapping[str, Any], where: str = "material") -> Material:
    """A :class:`Material` from a table with keys E, nu, rho and optionally t, plane."""
    if not isinstance(data, Mapping):
        raise InputError(f"{where}: must be a table of E, nu, rho (t, plane optional)")
    unknown = [k for k in data if k not in _KEYS]
    if unknown:
        raise InputError(f"{where}: unknown key {unknown[0]!r} (E, nu, rho, t, plane)")
    missing = [k for k in ("E", "nu", "rho") if k not in data]
    if missing:
        raise InputError(f"{where}: {missing[0]} is missing (give E, nu and rho)")
    try:
        return Material(**dict(data))
    except InputError as exc:
        raise InputError(f"{where}: {str(exc).removeprefix('material: ')}") from None


def parse_material(text: str) -> Material:
    """``E=210000,nu=0.3,rho=7.85e-9[,t=2][,plane=strain]`` as a :class:`Material`."""
    data: dict[str, Any] = {}
    for part in text.split(","):
        key, sep, value = part.partition("=")
        key = key.strip()
        if not sep or not key:
            raise InputError(f"--material: expected KEY=VALUE pairs, got {part.strip()!r}")
        if key in data:
            raise InputError(f"--material: {key} given twice")
        if key == "plane":
            data[key] = value.strip()
            continue
        try:
            data[key] = float(value)
        except ValueError:
            raise InputError(f"--material: {key} must be a number, not {value.strip()!r}") from None
    return material_from_dict(data, "--material")


def materials_table(data: Any, where: str) -> dict[str, Material]:
    """The ``[materials]`` table of a configuration file: region name (or ``default``) ->
    :class:`Material`."""
    if not isinstance(data, Mapping):
        raise InputError(f"{where}: [materials] must hold one table per region name or default")
    return {
        str(name): material_from_dict(spec, f"{where} [materials.{name}]")
        for name, spec in data.items()
    }
