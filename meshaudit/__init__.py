"""meshaudit: a pre-solve element-quality audit for 2-D and shell finite-element meshes.

>>> import meshaudit
>>> report = meshaudit.audit("samples/bracket_plate.msh")    # doctest: +SKIP
>>> report.passed, report.verdict_counts()                    # doctest: +SKIP

The public names are these, imported from here; the package's sub-packages hold the
stages (see the README's "Code layout").
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from .errors import InputError, MeshAuditError, OutputError, ProfileError

if TYPE_CHECKING:
    from .api import audit, audit_mesh
    from .engine.memory import return_large_blocks
    from .engine.run import audit_elements
    from .judge.profiles import BUILTIN as BUILTIN_PROFILES
    from .judge.profiles import Limit, Profile, load_profile, with_limit
    from .material import Material
    from .mesh_checks.findings import Finding
    from .repair.run import Repair, RepairOptions
    from .repair.run import repair as fix
    from .results.compare import compare
    from .results.explain import explain
    from .results.inspection import AuditedMesh
    from .results.report import Report

__version__ = "0.1.0"

#: Public names imported on first use (PEP 562), so that ``import meshaudit`` and
#: ``meshaudit --help`` do not pay for numpy and the metric kernels up front.
_LAZY = {
    "audit": ("api", "audit"),
    "audit_mesh": ("api", "audit_mesh"),
    "audit_elements": ("engine.run", "audit_elements"),
    "AuditedMesh": ("results.inspection", "AuditedMesh"),
    "BUILTIN_PROFILES": ("judge.profiles", "BUILTIN"),
    "Finding": ("mesh_checks.findings", "Finding"),
    "Limit": ("judge.profiles", "Limit"),
    "Material": ("material", "Material"),
    "Profile": ("judge.profiles", "Profile"),
    "Report": ("results.report", "Report"),
    "compare": ("results.compare", "compare"),
    "explain": ("results.explain", "explain"),
    "fix": ("repair.run", "repair"),
    "Repair": ("repair.run", "Repair"),
    "RepairOptions": ("repair.run", "RepairOptions"),
    "load_profile": ("judge.profiles", "load_profile"),
    "return_large_blocks": ("engine.memory", "return_large_blocks"),
    "with_limit": ("judge.profiles", "with_limit"),
}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(f".{module}", __name__), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})


__all__ = [
    "BUILTIN_PROFILES",
    "AuditedMesh",
    "Finding",
    "InputError",
    "Limit",
    "Material",
    "MeshAuditError",
    "OutputError",
    "Profile",
    "ProfileError",
    "Repair",
    "RepairOptions",
    "Report",
    "__version__",
    "audit",
    "audit_elements",
    "audit_mesh",
    "compare",
    "explain",
    "fix",
    "load_profile",
    "return_large_blocks",
    "with_limit",
]
