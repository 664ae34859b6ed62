"""Project exceptions. The CLI turns each into one line on stderr and exit status 2."""

from __future__ import annotations


class MeshAuditError(Exception):
    """Base class for every error meshaudit raises on purpose."""


class InputError(MeshAuditError):
    """The mesh cannot be audited: missing, unreadable, corrupt or unsupported."""


class ProfileError(MeshAuditError):
    """A quality profile is unknown or malformed."""


class OutputError(MeshAuditError):
    """A report file cannot be written."""
