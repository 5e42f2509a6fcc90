"""Families of the sufficient statistic Y; see base.Family."""

from __future__ import annotations

from ..errors import invalid
from .base import Family
from .binomial import BINOMIAL
from .negbinomial import NEGBINOMIAL
from .poisson import POISSON

FAMILIES: dict[str, Family] = {f.name: f for f in (POISSON, BINOMIAL, NEGBINOMIAL)}


def get_family(name) -> Family:
    """Look a family up by name (case and surrounding spaces ignored)."""
    key = name.strip().lower() if isinstance(name, str) else name
    if key not in FAMILIES:
        raise invalid("family", name, "allowed: " + ", ".join(FAMILIES))
    return FAMILIES[key]


__all__ = ["FAMILIES", "Family", "get_family"]
