"""Families of the statistic Y; see base.Family.  A family is registered here, once."""

from __future__ import annotations

from .base import Family
from .binomial import BINOMIAL
from .gamma import GAMMA
from .negbinomial import NEGBINOMIAL
from .normal import NORMAL
from .poisson import POISSON
from .registry import FAMILIES, add, dispersion_users, get_family


def register(family: Family) -> Family:
    """Add a family to the registry; every name lookup and list of families sees it."""
    if not isinstance(family, Family):
        raise TypeError(f"a Family is required, not {type(family).__name__}")
    return add(family)


for _family in (POISSON, BINOMIAL, NEGBINOMIAL, NORMAL, GAMMA):
    register(_family)

__all__ = ["FAMILIES", "Family", "dispersion_users", "get_family", "register"]
