"""Named regions of a mesh: the elements each region name selects.

A region is a named group of elements the file carries: a gmsh physical group (meshio's
``cell_data["gmsh:physical"]`` tags, named through ``field_data``) or an element set
(meshio's ``cell_sets``, e.g. Abaqus ``*ELSET``). Regions are selected by name; each is
judged under its own profile (:func:`meshaudit.judge.verdicts.judge_by_region`).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

#: Dimension of the physical groups that can hold audited (surface) elements.
SURFACE_DIM = 2


def _physical_names(mesh: Any) -> dict[str, int]:
    """Physical group name -> tag, for surface groups (or groups of unknown dimension)."""
    names = {}
    for name, value in (getattr(mesh, "field_data", None) or {}).items():
        arr = np.atleast_1d(np.asarray(value)).ravel()
        if arr.size == 0 or not np.issubdtype(arr.dtype, np.number):
            continue
        if arr.size > 1 and int(arr[1]) != SURFACE_DIM:
            continue
        names[str(name)] = int(arr[0])
    return names


def element_sets(mesh: Any, blocks: Sequence[tuple[int, np.ndarray]]) -> dict[str, np.ndarray]:
    """Region name -> sorted indices of the audited elements in it.

    ``blocks`` pairs each audited meshio block number with the audited indices of its
    elements. Malformed group data is ignored (regions are optional information).
    """
    found: dict[str, list[np.ndarray]] = {}
    physical = (getattr(mesh, "cell_data", None) or {}).get("gmsh:physical")
    names = _physical_names(mesh)
    if physical is not None and names:
        for block_no, index in blocks:
            if block_no >= len(physical) or len(physical[block_no]) != len(index):
                continue
            tags = np.asarray(physical[block_no])
            for name, tag in names.items():
                found.setdefault(name, []).append(index[tags == tag])
    for name, per_block in (getattr(mesh, "cell_sets", None) or {}).items():
        for block_no, index in blocks:
            if block_no >= len(per_block) or per_block[block_no] is None:
                continue
            rows = np.asarray(per_block[block_no]).astype(np.int64, copy=False).ravel()
            rows = rows[(rows >= 0) & (rows < len(index))]
            found.setdefault(str(name), []).append(index[rows])
    n = max((int(index[-1]) + 1 for _, index in blocks if len(index)), default=0)
    out = {}
    for name, parts in found.items():
        member = np.zeros(n, dtype=bool)  # a mask: sorted and unique in O(n)
        for part in parts:
            member[part] = True
        if member.any():
            out[name] = np.flatnonzero(member).astype(np.int64)
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
