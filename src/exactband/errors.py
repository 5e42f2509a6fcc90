"""Exception types, one per layer.

Every message is a single line that names the field, the value given and what
is allowed, so the command line can print it as it is.  The same three facts are
attributes of the error (``field``, ``value``, ``allowed``; None where a message
names none), so a caller that relabels or re-types an error reads them instead of
parsing the message: ``invalid`` sets them, ``recast`` keeps them.
"""

from __future__ import annotations

import math


class ExactbandError(Exception):
    """Base class of every error exactband raises on purpose.

    ``field`` is the input the message is about (as the user wrote it: ``alpha``,
    ``bands[0][1]``, ``--sheet``), ``value`` the value given (None when missing or
    not recorded) and ``allowed`` what is allowed, in words.
    """

    def __init__(self, *args, field: str | None = None, value=None,
                 allowed: str | None = None):
        super().__init__(*args)
        self.field, self.value, self.allowed = field, value, allowed


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


def invalid(field: str, value, allowed: str, kind: type = DesignError) -> ExactbandError:
    """The standard one-line error of type ``kind``: field, value given, what is allowed.

    A value that is absent (None) is reported as missing, never as "= None".  The
    three facts are also the error's attributes ``field``, ``value``, ``allowed``."""
    text = (f"missing {field}: {allowed}" if value is None
            else f"invalid {field} = {show(value)}: {allowed}")
    return kind(text, field=field, value=value, allowed=allowed)


def recast(err: ExactbandError, kind: type, prefix: str = "") -> ExactbandError:
    """``err`` as an error of type ``kind`` (another layer's), its message after ``prefix``
    (e.g. "row 3: "), its field, value and allowed kept."""
    return kind(prefix + str(err), field=err.field, value=err.value, allowed=err.allowed)
