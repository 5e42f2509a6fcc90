"""The import graph of a package, read from its source with ast (nothing imported).

``scan(root)`` parses every module under the package folder ``root`` and returns a
``Graph``: the edges between its modules (module-level and function-level imports,
relative imports resolved), the private names one module takes from another
(``from .x import _name``) and the private attributes it reads from another module
(``x._name`` where ``x`` is bound to a module of the package). ``cycles`` lists each
group of modules that import each other (a strongly connected component of two or
more modules, or a module importing itself).

A private module (``_saddle.py``) may be imported by the modules of its own
package; a private name inside a module may not be taken by any other module.
Dunder names (``__version__``) are not private.
"""

from __future__ import annotations

import ast
from dataclasses import dataclass, field
from pathlib import Path


def _private(name: str) -> bool:
    return name.startswith("_") and not (name.startswith("__") and name.endswith("__"))


@dataclass
class Graph:
    modules: set[str]
    edges: dict[str, set[str]] = field(default_factory=dict)
    private_imports: list[tuple[str, str, str]] = field(default_factory=list)
    private_attributes: list[tuple[str, str, str]] = field(default_factory=list)

    def cycles(self) -> list[list[str]]:
        """Strongly connected components with a cycle (Tarjan), each sorted."""
        index: dict[str, int] = {}
        low: dict[str, int] = {}
        stack: list[str] = []
        on: set[str] = set()
        found: list[list[str]] = []
        counter = [0]

        def visit(v: str) -> None:
            # iterative Tarjan: (node, iterator over its successors)
            work = [(v, iter(sorted(self.edges.get(v, ()))))]
            index[v] = low[v] = counter[0]
            counter[0] += 1
            stack.append(v)
            on.add(v)
            while work:
                node, successors = work[-1]
                advanced = False
                for w in successors:
                    if w not in index:
                        index[w] = low[w] = counter[0]
                        counter[0] += 1
                        stack.append(w)
                        on.add(w)
                        work.append((w, iter(sorted(self.edges.get(w, ())))))
                        advanced = True
                        break
                    if w in on:
                        low[node] = min(low[node], index[w])
                if advanced:
                    continue
                work.pop()
                if work:
                    parent = work[-1][0]
                    low[parent] = min(low[parent], low[node])
                if low[node] == index[node]:
                    group = []
                    while True:
                        w = stack.pop()
                        on.discard(w)
                        group.append(w)
                        if w == node:
                            break
                    if len(group) > 1 or node in self.edges.get(node, ()):
                        found.append(sorted(group))

        for v in sorted(self.modules):
            if v not in index:
                visit(v)
        return sorted(found)


def _module_names(root: Path) -> dict[str, Path]:
    package = root.name
    names = {}
    for path in sorted(root.rglob("*.py")):
        parts = list(path.relative_to(root).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        names[".".join([package, *parts])] = path
    return names


def _hidden_from(importer: str, target: str) -> str | None:
    """The private part of ``target``'s dotted path that ``importer`` may not use, if any:
    a private module or package is open to the modules of the package holding it."""
    parts = target.split(".")
    for i in range(1, len(parts)):
        if _private(parts[i]):
            parent = ".".join(parts[:i])
            if not (importer == parent or importer.startswith(parent + ".")):
                return parts[i]
    return None


def _base(module: str, is_package: bool, level: int) -> str:
    """The package a relative import of ``level`` dots starts from."""
    parts = module.split(".")
    if not is_package:
        parts = parts[:-1]
    if level > 1:
        parts = parts[: len(parts) - (level - 1)]
    return ".".join(parts)


def scan(root: Path) -> Graph:
    root = Path(root)
    names = _module_names(root)
    graph = Graph(modules=set(names))
    for module, path in names.items():
        is_package = path.name == "__init__.py"
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        edges = graph.edges.setdefault(module, set())
        bound: dict[str, str] = {}  # local name -> module of the package it is bound to
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                for alias in node.names:
                    if alias.name in names:
                        edges.add(alias.name)
                        if alias.asname:
                            bound[alias.asname] = alias.name
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    base = _base(module, is_package, node.level)
                    source = f"{base}.{node.module}" if node.module else base
                else:
                    source = node.module or ""
                if source not in names:
                    continue
                for alias in node.names:
                    sub = f"{source}.{alias.name}"
                    if sub in names:
                        edges.add(sub)
                        bound[alias.asname or alias.name] = sub
                    else:
                        edges.add(source)
                        if _private(alias.name) and source != module:
                            graph.private_imports.append((module, source, alias.name))
        for target in sorted(edges):
            hidden = _hidden_from(module, target)
            if hidden:
                graph.private_imports.append((module, target, hidden))
        for node in ast.walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id in bound and _private(node.attr)
                    and bound[node.value.id] != module):
                graph.private_attributes.append((module, bound[node.value.id], node.attr))
    return graph
