"""Packaging facts: licence, the one place of the version, the tested library ranges."""

from __future__ import annotations

import tomllib
from importlib import metadata
from pathlib import Path

from packaging.requirements import Requirement

import exactband
from exactband.tables import versions

REPO = Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))
# libraries whose versions change the bytes of a table set (issue 12, item 6)
BYTE_SHAPING = ("openpyxl", "reportlab", "matplotlib", "pypdf", "mpmath")


def test_license_is_spdx_mit_with_its_file():
    project = PYPROJECT["project"]
    assert project["license"] == "MIT"
    assert project["license-files"] == ["LICENSE"]
    text = (REPO / "LICENSE").read_text(encoding="utf-8")
    assert text.startswith("MIT License") and "the exactband developers" in text


def test_version_is_written_once():
    assert "version" not in PYPROJECT["project"]
    assert "version" in PYPROJECT["project"]["dynamic"]
    assert PYPROJECT["tool"]["setuptools"]["dynamic"]["version"] == {
        "attr": "exactband.__version__"}
    literal = f'"{exactband.__version__}"'
    holders = [p.relative_to(REPO).as_posix() for p in (REPO / "src").rglob("*.py")
               if literal in p.read_text(encoding="utf-8")]
    assert holders == ["src/exactband/__init__.py"]


def test_byte_shaping_libraries_are_bounded_and_the_installed_ones_fit():
    reqs = {Requirement(r).name: Requirement(r) for r in PYPROJECT["project"]["dependencies"]}
    for name in BYTE_SHAPING:
        spec = reqs[name].specifier
        assert any(s.operator == "<" for s in spec), f"{name}: no upper bound in {spec}"
        assert spec.contains(metadata.version(name)), f"{name} {metadata.version(name)} not in {spec}"
        # every one of them is recorded in a set's manifest
        assert name in versions.LIBRARIES + versions.OC_LIBRARIES
