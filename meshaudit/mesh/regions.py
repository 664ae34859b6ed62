"""Regions of a mesh: the groups of elements the file carries, by name or number.

Where they come from (meshio's view of the file):

- gmsh physical groups: ``cell_data["gmsh:physical"]`` tags, named through ``field_data``
  (surface and volume groups);
- medit element references: ``cell_data["medit:ref"]``;
- material or group numbers a VTK (or any) file carries as an integer cell-data array named
  like one: ``mat_id``, ``MaterialIds``, ``material``, ``region``, ``subdomain``, ``zone``,
  ``part_id``, ``block_id``, ``CellEntityIds`` ... (:data:`NUMBER_ARRAYS`, compared in
  lower case without ``_``, ``-`` or spaces);
- element sets: meshio's ``cell_sets`` (Abaqus ``*ELSET``, gmsh and other named sets).

Each group can be **selected** (``[regions.NAME]``, ``regions={...}``) by:

- its name (a named physical group, an element set);
- its number alone, ``"3"`` (every number array: a number in several arrays selects the
  elements of all of them);
- its number qualified by the array, ``"mat_id=3"``, ``"gmsh:physical=3"``,
  ``"medit:ref=3"``.

For the **breakdown** every report gives, each element belongs to one region of the file
(:func:`file_regions`): the first number array present, in the order physical groups,
medit references, then the material arrays by name, labelled by its group name when it
has one (a named physical group) else ``array=number``; with no number array, the element
sets, an element in several taking the smallest (the most specific). Elements in none are
in no region.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

#: An array with more distinct numbers than this is taken for per-element data (ids, not
#: groups) and gives no regions: work and memory stay bounded by the mesh size.
MAX_NUMBERS = 1000

#: Dimensions of the physical groups that can hold audited elements (surfaces, solids).
AUDITED_DIMS = (2, 3)

#: Cell-data arrays whose integers name regions, in the order the breakdown prefers them.
#: Compared after :func:`_plain` (lower case, no "_", "-", " ").
NUMBER_ARRAYS: tuple[str, ...] = (
    "gmsh:physical",
    "medit:ref",
    "matid",
    "materialid",
    "materialids",
    "material",
    "materials",
    "mat",
    "region",
    "regionid",
    "regions",
    "subdomain",
    "domain",
    "zone",
    "partid",
    "part",
    "blockid",
    "cellentityids",
)


def _plain(name: str) -> str:
    return re.sub(r"[\s_\-]", "", name.lower())


@dataclass(frozen=True)
class FileRegions:
    """One region per element for the breakdown: ``names`` (k,) and ``codes`` (n,) int32,
    0 for no region, j for ``names[j - 1]``."""

    names: tuple[str, ...]
    codes: np.ndarray

    @classmethod
    def none(cls, n: int) -> FileRegions:
        return cls((), np.zeros(n, dtype=np.int32))


def _physical_names(mesh: Any) -> dict[int, str]:
    """Physical group tag -> name, for groups that can hold audited elements."""
    names = {}
    for name, value in (getattr(mesh, "field_data", None) or {}).items():
        arr = np.atleast_1d(np.asarray(value)).ravel()
        if arr.size == 0 or not np.issubdtype(arr.dtype, np.number):
            continue
        if arr.size > 1 and int(arr[1]) not in AUDITED_DIMS:
            continue
        names[int(arr[0])] = str(name)
    return names


def _number_arrays(
    mesh: Any, blocks: Sequence[tuple[int, np.ndarray]], n: int
) -> list[tuple[str, np.ndarray]]:
    """[(array name, (n,) int64 numbers, -1 where a block has none)], in the order of
    :data:`NUMBER_ARRAYS`. An array that is not whole numbers, or whose block lengths do
    not match the cells, is left out (region data is optional information)."""
    found = []
    cell_data = getattr(mesh, "cell_data", None) or {}
    rank = {name: k for k, name in enumerate(NUMBER_ARRAYS)}
    keys = sorted((k for k in cell_data if _plain(str(k)) in rank), key=lambda k: rank[_plain(k)])
    for key in keys:
        per_block = cell_data[key]
        values = np.full(n, -1, dtype=np.int64)
        usable = True
        for block_no, index in blocks:
            if block_no >= len(per_block):
                continue
            arr = np.asarray(per_block[block_no])
            if arr.ndim == 2 and arr.shape[1] == 1:
                arr = arr[:, 0]
            if arr.ndim != 1 or len(arr) != len(index) or arr.dtype.kind not in "iuf":
                usable = False
                break
            if arr.dtype.kind == "f" and not (
                np.isfinite(arr).all() and (arr == np.round(arr)).all()
            ):
                usable = False
                break
            values[index] = arr.astype(np.int64)
        if usable and (values >= 0).any():
            if np.unique(values).size <= MAX_NUMBERS + 1:  # + the -1 of blocks without it
                found.append((str(key), values))
    return found


def element_sets(mesh: Any, blocks: Sequence[tuple[int, np.ndarray]]) -> dict[str, np.ndarray]:
    """Selection name -> sorted indices of the audited elements it selects (see the module
    docstring: names, bare numbers, ``array=number``).

    ``blocks`` pairs each audited meshio block number with the audited indices of its
    elements. Malformed group data is ignored (regions are optional information).
    """
    n = max((int(index[-1]) + 1 for _, index in blocks if len(index)), default=0)
    found: dict[str, list[np.ndarray]] = {}
    names = _physical_names(mesh)
    for key, values in _number_arrays(mesh, blocks, n):
        numbers = np.unique(values[values >= 0])
        order = np.argsort(values, kind="stable")
        ordered = values[order]
        for number in numbers.tolist():
            lo, hi = np.searchsorted(ordered, [number, number + 1])
            rows = order[lo:hi]
            selectors = [f"{key}={number}", str(number)]
            if key == "gmsh:physical" and number in names:
                selectors.append(names[number])
            for selector in selectors:
                found.setdefault(selector, []).append(rows)
    for name, rows in element_sets_only(mesh, blocks, n).items():
        found.setdefault(name, []).append(rows)
    out = {}
    for name, parts in found.items():
        rows = parts[0] if len(parts) == 1 else np.unique(np.concatenate(parts))
        if rows.size:  # each part is sorted and unique: a number's rows, a set's
            out[name] = np.sort(rows).astype(np.int64)
    return out


def file_regions(mesh: Any, blocks: Sequence[tuple[int, np.ndarray]]) -> FileRegions:
    """The region of each audited element for the breakdown (see the module docstring)."""
    n = max((int(index[-1]) + 1 for _, index in blocks if len(index)), default=0)
    arrays = _number_arrays(mesh, blocks, n)
    if arrays:
        key, values = arrays[0]
        numbers, inverse = np.unique(values, return_inverse=True)
        named = _physical_names(mesh) if key == "gmsh:physical" else {}
        labels = [named.get(v, f"{key}={v}") for v in numbers.tolist() if v >= 0]
        shift = 1 if numbers[0] >= 0 else 0  # a -1 (no number) sorts first: code 0
        codes = (inverse.ravel() + shift).astype(np.int32)
        return FileRegions(tuple(labels), codes)
    sets = element_sets_only(mesh, blocks, n)
    if not sets:
        return FileRegions.none(n)
    names = tuple(sets)
    codes = np.zeros(n, dtype=np.int32)
    for k in sorted(range(len(names)), key=lambda k: -sets[names[k]].size):
        codes[sets[names[k]]] = k + 1  # larger sets first: the smallest set wins
    return FileRegions(names, codes)


def element_sets_only(
    mesh: Any, blocks: Sequence[tuple[int, np.ndarray]], n: int
) -> dict[str, np.ndarray]:
    """Element set name -> audited element indices (sets with no audited element left out)."""
    out: dict[str, np.ndarray] = {}
    for name, per_block in (getattr(mesh, "cell_sets", None) or {}).items():
        member = np.zeros(n, dtype=bool)
        for block_no, index in blocks:
            if block_no >= len(per_block) or per_block[block_no] is None:
                continue
            rows = np.asarray(per_block[block_no]).astype(np.int64, copy=False).ravel()
            member[index[rows[(rows >= 0) & (rows < len(index))]]] = True
        if member.any():
            out[str(name)] = np.flatnonzero(member)
    return out


def region_codes(n: int, sets: dict[str, np.ndarray], names: Sequence[str]) -> np.ndarray:
    """Per element: 0 for the base profile, k for the k-th name in ``names``.

    An element in several listed regions takes the one listed last.
    """
    codes = np.zeros(n, dtype=np.int16)
    for k, name in enumerate(names, start=1):
        rows = sets.get(name)
        if rows is not None:
            codes[rows] = k
    return codes
