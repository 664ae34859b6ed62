"""Which material each element is measured with (see :mod:`meshaudit.material`).

The audit takes one :class:`~meshaudit.material.Material` for the whole mesh, or a
mapping of region names (gmsh physical groups, element sets: see
:mod:`meshaudit.mesh.regions`) to materials, ``"default"`` naming the one for every element
no listed region covers. An element in several listed regions takes the one listed last;
an element no entry covers has no material, and its stiffness metrics are not defined.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..material import DEFAULT, Material
from ..mesh.regions import region_codes

#: What the audit accepts: one material, or region name -> material.
MaterialSpec = Material | Mapping[str, Material] | None


@dataclass(frozen=True)
class MaterialMap:
    """``materials`` (code 0: the default, or None; code k: the k-th region's) and
    ``codes`` (n,) per element; ``names`` the regions listed."""

    materials: tuple[Material | None, ...]
    names: tuple[str, ...]
    codes: np.ndarray

    @classmethod
    def prepare(cls, spec: MaterialSpec, n: int, sets: dict[str, np.ndarray]) -> MaterialMap | None:
        """The map of an audit, or None without any material (nothing is measured)."""
        if spec is None:
            return None
        if isinstance(spec, Material):
            spec = {DEFAULT: spec}
        if not isinstance(spec, Mapping):
            raise InputError("material must be a Material or a mapping region -> Material")
        for name, material in spec.items():
            if not isinstance(material, Material):
                raise InputError(f"material of {name!r} must be a Material, not {material!r}")
        if not spec:
            return None
        names = tuple(k for k in spec if k != DEFAULT)
        table = (spec.get(DEFAULT), *(spec[k] for k in names))
        return cls(table, names, region_codes(n, sets, names))

    def constants(self, rows: slice | np.ndarray, dimension: int) -> tuple[np.ndarray, ...]:
        """(lambda, mu, rho), each (m,), of elements ``rows`` of one ``dimension``; NaN
        for an element without a material (see :meth:`Material.lame`)."""
        table = np.full((len(self.materials), 3), np.nan)
        for k, material in enumerate(self.materials):
            if material is not None:
                table[k] = (*material.lame(dimension), material.rho)
        values = table[self.codes[rows]]
        return values[:, 0], values[:, 1], values[:, 2]

    def without(self) -> int:
        """How many elements have no material."""
        if self.materials[0] is not None:
            return 0
        return int(np.count_nonzero(self.codes == 0))

    def to_dict(self) -> dict[str, object]:
        """Region name (``default`` for the rest) -> the material's properties."""
        out: dict[str, object] = {}
        if self.materials[0] is not None:
            out[DEFAULT] = self.materials[0].to_dict()
        for name, material in zip(self.names, self.materials[1:]):
            out[name] = material.to_dict() if material is not None else None
        return out
