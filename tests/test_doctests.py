"""The examples in the package's docstrings run and show what they claim.

Every module of src/exactband whose source holds a ``>>>`` example is found by
reading the files (so a module that gains examples is checked without editing
this test) and run with the standard library's doctest.
"""

from __future__ import annotations

import doctest
import importlib
from pathlib import Path

import pytest

import exactband

ROOT = Path(exactband.__file__).resolve().parent


def _modules_with_examples() -> list[str]:
    out = []
    for path in sorted(ROOT.rglob("*.py")):
        if ">>>" in path.read_text(encoding="utf-8"):
            parts = path.relative_to(ROOT.parent).with_suffix("").parts
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out.append(".".join(parts))
    return out


MODULES = _modules_with_examples()


def test_examples_are_found():
    # the package's own entry points carry examples; finding none means discovery broke
    assert {"exactband", "exactband.api", "exactband.decide"} <= set(MODULES)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failed, attempted = doctest.testmod(module, optionflags=doctest.ELLIPSIS, report=True)
    assert attempted > 0, f"{name}: no example ran"
    assert failed == 0, f"{name}: {failed} of {attempted} examples failed (see the output above)"
