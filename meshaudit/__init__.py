"""meshaudit: a pre-solve element-quality audit for 2-D and shell finite-element meshes.

>>> import meshaudit
>>> report = meshaudit.audit("samples/bracket_plate.msh")    # doctest: +SKIP
>>> report.passed, report.verdict_counts()                    # doctest: +SKIP
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from .errors import InputError, MeshAuditError, OutputError, ProfileError

if TYPE_CHECKING:
    from .api import audit, audit_elements
    from .profiles import BUILTIN as BUILTIN_PROFILES
    from .profiles import Limit, Profile, load_profile, with_limit
    from .report import Report

__version__ = "0.1.0"

#: Public names imported on first use (PEP 562), so that ``import meshaudit`` and
#: ``meshaudit --help`` do not pay for numpy and the metric kernels up front.
_LAZY = {
    "audit": ("api", "audit"),
    "audit_elements": ("api", "audit_elements"),
    "BUILTIN_PROFILES": ("profiles", "BUILTIN"),
    "Limit": ("profiles", "Limit"),
    "Profile": ("profiles", "Profile"),
    "load_profile": ("profiles", "load_profile"),
    "with_limit": ("profiles", "with_limit"),
    "Report": ("report", "Report"),
}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(f".{module}", __name__), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = [
    "BUILTIN_PROFILES",
    "InputError",
    "Limit",
    "MeshAuditError",
    "OutputError",
    "Profile",
    "ProfileError",
    "Report",
    "__version__",
    "audit",
    "audit_elements",
    "load_profile",
    "with_limit",
]
