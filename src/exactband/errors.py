"""Exception types, one per layer.

Every message is a single line that names the field, the value given and what
is allowed, so the command line can print it as it is.
"""

from __future__ import annotations

import math


class ExactbandError(Exception):
    """Base class of every error exactband raises on purpose."""


class DesignError(ExactbandError, ValueError):
    """The parameters of a design are unusable (wrong family, kind, range...)."""


class VerificationError(ExactbandError, RuntimeError):
    """The two independent solvers disagree: the design is not trusted."""


def show(value) -> str:
    """Render a user-supplied value for an error message (short, one line)."""
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        text = value if value.strip() and value == value.strip() else repr(value)
    else:
        text = str(value)
    text = " ".join(text.split())
    return text if len(text) <= 60 else text[:57] + "..."


def invalid(field: str, value, allowed: str) -> DesignError:
    """Build the standard one-line message: field, value given, what is allowed.

    A value that is absent (None) is reported as missing, never as "= None"."""
    if value is None:
        return DesignError(f"missing {field}: {allowed}")
    return DesignError(f"invalid {field} = {show(value)}: {allowed}")
