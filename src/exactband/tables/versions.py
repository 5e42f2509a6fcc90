"""Versions of the package and of the libraries whose code shapes the output."""

from __future__ import annotations

import functools
import platform
from importlib import metadata

LIBRARIES = ("numpy", "scipy", "mpmath", "pandas", "openpyxl", "reportlab")


@functools.lru_cache(maxsize=1)
def _cached() -> tuple:
    from .. import __version__

    out = [("exactband", __version__), ("python", platform.python_version())]
    for name in LIBRARIES:
        try:
            out.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:  # pragma: no cover - all are dependencies
            out.append((name, "not installed"))
    return tuple(out)


def versions() -> dict:
    """{name: version} for exactband, Python and the libraries in LIBRARIES."""
    return dict(_cached())
