"""The words and number text every printed table shares (layout, texts and the writers).

``KIND_TITLE`` names a kind in a heading, ``WORDS`` gives per family the symbol of
its parameter, what the parameter is and what n is; ``plain`` is the text of an
input number as printed and ``gamma_places`` the decimals of a printed gamma.
"""

from __future__ import annotations

from collections.abc import Mapping
from decimal import Decimal

from ..families import FAMILIES, get_family
from ..kinds import KINDS

KIND_TITLE = {name: k.title for name, k in KINDS.items()}  # e.g. "Band test" (Kind.title)


class _FamilyWords(Mapping):
    """The words the printed tables use for a family's parameter and sample size, by the
    family's name: (symbol in formulas, what it is, what n is), asked of the Family."""

    def __getitem__(self, name: str) -> tuple[str, str, str]:
        f = get_family(name)
        return f.symbol, f.theta_what, f.n_what

    def __iter__(self):
        return iter(tuple(FAMILIES))

    def __len__(self) -> int:
        return len(FAMILIES)


WORDS = _FamilyWords()


def plain(x) -> str:
    """Shortest decimal text of a number, never in exponent form (25.0 -> '25')."""
    if x is None:
        return ""
    if isinstance(x, int):
        return str(x)
    d = Decimal(repr(float(x))).normalize()
    return format(d, "f")


def gamma_places(spec) -> int:
    """Decimals of a printed gamma: the spec's, but at least the random digits read, so
    the threshold t = floor(gamma * 10**d) can be read off the printed gamma."""
    return max(spec.gamma_decimals, spec.random_digits)
