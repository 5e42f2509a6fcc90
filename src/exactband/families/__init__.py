"""Families of the sufficient statistic Y; see base.Family."""

from __future__ import annotations

from .base import Family
from .binomial import BINOMIAL
from .negbinomial import NEGBINOMIAL
from .poisson import POISSON

FAMILIES: dict[str, Family] = {f.name: f for f in (POISSON, BINOMIAL, NEGBINOMIAL)}


def get_family(name) -> Family:
    """Look a family up by name (case and surrounding spaces ignored)."""
    from ..strict import name as check_name

    return FAMILIES[check_name("family", name, tuple(FAMILIES))]


__all__ = ["FAMILIES", "Family", "get_family"]
