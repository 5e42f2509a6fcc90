"""Families of the statistic Y; see base.Family.  A family is registered here, once."""

from __future__ import annotations

from .base import Family
from .binomial import BINOMIAL
from .negbinomial import NEGBINOMIAL
from .poisson import POISSON

FAMILIES: dict[str, Family] = {}  # by name, in the order registered (the order lists print in)


def register(family: Family) -> Family:
    """Add a family to the registry; every name lookup and list of families sees it."""
    if not isinstance(family, Family):
        raise TypeError(f"a Family is required, not {type(family).__name__}")
    if family.name in FAMILIES:
        raise ValueError(f"a family named {family.name!r} is already registered")
    FAMILIES[family.name] = family
    return family


for _family in (POISSON, BINOMIAL, NEGBINOMIAL):
    register(_family)


def get_family(name) -> Family:
    """Look a family up by name (case and surrounding spaces ignored)."""
    from ..strict import name as check_name

    return FAMILIES[check_name("family", name, tuple(FAMILIES))]


def dispersion_users() -> str:
    """The registered families that take a dispersion, named in words ("a, b")."""
    return ", ".join(f.name for f in FAMILIES.values() if f.uses_dispersion)


__all__ = ["FAMILIES", "Family", "dispersion_users", "get_family", "register"]
