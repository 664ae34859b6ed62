"""meshaudit: a pre-solve element-quality audit for 2-D and shell finite-element meshes.

>>> import meshaudit
>>> report = meshaudit.audit("samples/bracket_plate.msh")    # doctest: +SKIP
>>> report.passed, report.verdict_counts()                    # doctest: +SKIP
"""

from __future__ import annotations

from .api import audit, audit_elements
from .errors import InputError, MeshAuditError, OutputError, ProfileError
from .profiles import BUILTIN as BUILTIN_PROFILES
from .profiles import Limit, Profile, load_profile, with_limit
from .report import Report

__version__ = "0.1.0"

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
