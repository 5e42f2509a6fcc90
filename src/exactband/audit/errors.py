"""The audit layer's error: the input as a whole is unusable (CLI exit 2)."""

from __future__ import annotations

from ..errors import ExactbandError


class AuditInputError(ExactbandError):
    """The file, its header or the options cannot be used; one line says why."""
