"""Versions of the package and of the libraries whose code shapes the output."""

from __future__ import annotations

import functools
import platform
from importlib import metadata

LIBRARIES = ("numpy", "scipy", "mpmath", "pandas", "openpyxl", "reportlab")
OC_LIBRARIES = ("matplotlib", "pypdf")  # draw and place the OC curves (spec [oc])


@functools.lru_cache(maxsize=2)
def _cached(oc: bool) -> tuple:
    from .. import __version__

    out = [("exactband", __version__), ("python", platform.python_version())]
    for name in LIBRARIES + (OC_LIBRARIES if oc else ()):
        try:
            out.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:  # pragma: no cover - all are dependencies
            out.append((name, "not installed"))
    return tuple(out)


def versions(oc: bool = False) -> dict:
    """{name: version} for exactband, Python and the libraries in LIBRARIES (and those
    that draw the OC curves when ``oc``: a set with [oc] depends on them too)."""
    return dict(_cached(bool(oc)))
