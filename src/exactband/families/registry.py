"""The registry of families by name (filled by ``families/__init__.py``, which registers
each family once); kept apart so that a family's own module may ask it."""

from __future__ import annotations

FAMILIES: dict = {}  # name -> Family, in the order registered (the order lists print in)


def add(family):
    """Add a family (checked by ``families.register``) under its name."""
    if family.name in FAMILIES:
        raise ValueError(f"a family named {family.name!r} is already registered")
    FAMILIES[family.name] = family
    return family


def get_family(name):
    """Look a family up by name (case and surrounding spaces ignored)."""
    from ..strict import name as check_name

    return FAMILIES[check_name("family", name, tuple(FAMILIES))]


def dispersion_users() -> str:
    """The registered families that take a dispersion, named in words ("a, b")."""
    return ", ".join(f.name for f in FAMILIES.values() if f.uses_dispersion)
