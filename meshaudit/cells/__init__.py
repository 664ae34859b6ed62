"""Cell types: the reference elements (one module per shape: :mod:`.quad`,
:mod:`.triangle`) and the one table of what meshaudit knows about each element type
(:mod:`.registry`: ``CELL_TYPES``, ``CellType``).

The table is imported on first use: the reference modules are imported by the metric
kernels, which the table itself refers to.
"""

from __future__ import annotations

from typing import Any


def __getattr__(name: str) -> Any:
    if name in ("CELL_TYPES", "FAMILIES", "CellType"):
        from . import registry

        return getattr(registry, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
