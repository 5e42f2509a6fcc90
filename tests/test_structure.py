"""The shape of the package: no import cycles, no private names taken across modules.

The import graph is read from the source with ast (tests/importgraph.py): imports at
module level and inside functions, relative imports resolved.  The checker itself is
tested on small synthetic packages written to tmp_path, so a broken checker (one that
finds nothing) fails here too.
"""

from __future__ import annotations

from pathlib import Path

import exactband

from .importgraph import scan

PACKAGE = Path(exactband.__file__).parent


def _package(root: Path, files: dict) -> Path:
    pkg = root / "pkg"
    for name, text in files.items():
        path = pkg / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    return pkg


def test_exactband_has_no_import_cycles():
    graph = scan(PACKAGE)
    assert len(graph.modules) > 50  # the whole package was read
    assert graph.cycles() == []


def test_exactband_takes_no_private_names_across_modules():
    graph = scan(PACKAGE)
    assert graph.private_imports == []
    assert graph.private_attributes == []


def test_checker_finds_cycles_at_module_and_function_level(tmp_path):
    pkg = _package(tmp_path, {
        "__init__.py": "",
        "a.py": "from .b import f\n",
        "b.py": "def f():\n    from . import a\n    return a\n",
        "c.py": "import pkg.sub.d\n",
        "sub/__init__.py": "",
        "sub/d.py": "from ..c import x\n",
        "e.py": "from .a import f\n",  # imports into a cycle but is not part of one
        "s.py": "from . import s\n",  # a module importing itself
    })
    graph = scan(pkg)
    assert graph.cycles() == [["pkg.a", "pkg.b"], ["pkg.c", "pkg.sub.d"], ["pkg.s"]]


def test_checker_finds_private_names_and_attributes(tmp_path):
    pkg = _package(tmp_path, {
        "__init__.py": "from .a import __version__\n",  # dunder: not private
        "a.py": "__version__ = '1'\n_hidden = 1\n\ndef _f():\n    return _hidden\n",
        "b.py": "from .a import _f\n",
        "c.py": "def g():\n    from . import a as m\n    return m._hidden\n",
        "d.py": "from . import _util\nfrom ._util import helper\n",  # a sibling's private module
        "_util.py": "def helper():\n    return 1\n",
        "sub/__init__.py": "",
        "sub/e.py": "from .. import _util\n",  # the parent package's private module: fine
        "sub/_inner.py": "x = 1\n",
        "f.py": "from .sub import _inner\nfrom .sub._inner import x\n",  # not f's package
    })
    graph = scan(pkg)
    assert graph.private_imports == [("pkg.b", "pkg.a", "_f"), ("pkg.f", "pkg.sub._inner", "_inner")]
    assert graph.private_attributes == [("pkg.c", "pkg.a", "_hidden")]
    assert graph.cycles() == []
