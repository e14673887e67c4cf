"""The package's layout: imports run downstream only, no import circles, every public name exists.

Every module of ``tm_compare`` is read with :mod:`ast` (imports inside functions and under
``if TYPE_CHECKING:`` count: they are dependencies all the same). A module's stage is its
folder; the stages, from the bottom up, are listed in ``STAGES``. A module may import its own
stage or an earlier one, never a later one. The face (``tm_compare/__init__.py``) and
``__main__.py`` may import anything: the face re-exports names lazily, and an import of a
name from the face is read as an import of the module that defines it (``_EXPORTS``).
"""

from __future__ import annotations

import ast
import functools
import itertools
from pathlib import Path
from typing import NamedTuple

import pytest

import tm_compare

PACKAGE = Path(tm_compare.__file__).parent
ROOT = PACKAGE.name  # "tm_compare"

# The data flow, from the bottom up (DEVELOPERS.md draws the same map).
STAGES = (
    "bottom",
    "text",
    "models",
    "compare",
    "labels",
    "results",
    "views",
    "report",
    "demo",
    "cli",
)
# Top-level modules that know no stage: errors and checks, renamed-name warnings, atomic files,
# fingerprints, the HTML table, the table of options, the project folder.
BOTTOM = {
    "errors",
    "_validation",
    "_deprecation",
    "_atomic",
    "_csv",
    "_hashing",
    "_html",
    "options",
    "project",
}
FACE = {ROOT, f"{ROOT}.__main__"}


class Import(NamedTuple):
    module: str  # the importing module
    line: int
    target: str  # the imported module


@functools.cache
def modules() -> dict[str, Path]:
    """Every module of the package by dotted name (a package by its own name)."""
    found = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        if parts[-1] == "__init__":
            parts = parts[:-1]
        found[".".join(parts)] = path
    return found


def stage(module: str) -> str | None:
    """The stage of a module: its folder, or the bottom layer, or None when it has none."""
    parts = module.split(".")
    if len(parts) == 1:
        return None
    first = parts[1]
    if len(parts) == 2 and first in BOTTOM:
        return "bottom"
    return first if first in STAGES else None


def _target(name: str) -> str | None:
    """The package module that ``name`` (a module, or a module plus an attribute) refers to."""
    mods = modules()
    if name in mods:
        return name
    head, _, attr = name.rpartition(".")
    if head == ROOT and attr in tm_compare._EXPORTS:  # a public name taken from the face
        return f"{ROOT}.{tm_compare._EXPORTS[attr]}"
    return head if head in mods else None


def _absolute(module: str, node: ast.ImportFrom) -> str:
    if not node.level:
        return node.module or ""
    package = module if modules()[module].name == "__init__.py" else module.rpartition(".")[0]
    for _ in range(node.level - 1):
        package = package.rpartition(".")[0]
    return f"{package}.{node.module}" if node.module else package


@functools.cache
def imports(module: str) -> tuple[Import, ...]:
    """Every import of another package module made anywhere in ``module``."""
    tree = ast.parse(modules()[module].read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = _absolute(module, node)
            names = [f"{base}.{a.name}" for a in node.names]
        else:
            continue
        for name in names:
            if name != ROOT and not name.startswith(f"{ROOT}."):
                continue
            target = _target(name)
            if target and target != module:
                found.append(Import(module, node.lineno, target))
    return tuple(found)


def _where(imp: Import) -> str:
    return f"{modules()[imp.module].relative_to(PACKAGE.parent)}:{imp.line}"


def _checked() -> list[str]:
    return [m for m in modules() if m not in FACE]


def test_every_module_has_a_stage():
    lost = [str(modules()[m].relative_to(PACKAGE.parent)) for m in _checked() if not stage(m)]
    assert not lost, (
        f"Modules outside every stage: {lost}. Move each into its stage folder "
        f"({', '.join(STAGES[1:])}), or add it to BOTTOM in tests/test_layout.py if it "
        "knows no stage."
    )


def _all_imports() -> list[Import]:
    return [imp for m in _checked() for imp in imports(m) if imp.target not in FACE]


def upward(found: list[Import]) -> list[str]:
    """One line per import of a later stage: file, line, the module and both stages."""
    problems = []
    for imp in found:
        here, there = stage(imp.module), stage(imp.target)
        if here and there and STAGES.index(there) > STAGES.index(here):
            problems.append(
                f"{_where(imp)} imports {imp.target}: stage '{here}' must not import the "
                f"later stage '{there}'"
            )
    return problems


def test_imports_point_downstream():
    problems = upward(_all_imports())
    assert not problems, (
        "Upward imports (order: " + " -> ".join(STAGES) + "):\n" + "\n".join(problems)
    )


def test_an_upward_import_is_named_with_file_line_and_stages():
    # The checker itself, on made-up imports between real modules.
    down = Import("tm_compare.views.topic_view", 7, "tm_compare.models.fits")
    up = Import("tm_compare.models.fits", 12, "tm_compare.views.topic_view")
    assert upward([down]) == []
    assert upward([up]) == [
        "tm_compare/models/fits.py:12 imports tm_compare.views.topic_view: stage 'models' "
        "must not import the later stage 'views'"
    ]


def test_the_bottom_layer_imports_no_stage():
    bottom = [m for m in _checked() if stage(m) == "bottom"]
    problems = [
        f"{_where(imp)} imports {imp.target} (stage '{stage(imp.target)}')"
        for m in bottom
        for imp in imports(m)
        if stage(imp.target) != "bottom"
    ]
    assert not problems, "The bottom layer must know no stage:\n" + "\n".join(problems)


def _circles(edges: dict[str, set[str]]) -> list[list[str]]:
    """One circle through each strongly connected group of modules (Tarjan 1972)."""
    index, low, stack, on, groups = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(edges[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = set()
            while v not in group:
                group.add(stack.pop())
            on.difference_update(group)
            if len(group) > 1:
                groups.append(group)

    for v in sorted(edges):
        if v not in index:
            visit(v)
    return [_path_back(min(group), edges, group) for group in groups]


def _path_back(start: str, edges: dict[str, set[str]], group: set[str]) -> list[str]:
    """The shortest way from ``start`` back to itself inside a strongly connected group."""
    previous, frontier = {start: None}, [start]
    while frontier:
        following = []
        for v in frontier:
            for w in sorted(edges[v] & group):
                if w == start:
                    path = [v]
                    while path[-1] != start:
                        path.append(previous[path[-1]])
                    return [*reversed(path), start]
                if w not in previous:
                    previous[w] = v
                    following.append(w)
        frontier = following
    raise AssertionError(f"{start} is in no circle of {sorted(group)}")


def test_no_import_circles():
    edges = {m: set() for m in _checked()}
    for imp in _all_imports():
        edges[imp.module].add(imp.target)
    lines = []
    for circle in _circles(edges):
        hops = [
            next(_where(i) for i in imports(a) if i.target == b)
            for a, b in itertools.pairwise(circle)
        ]
        lines.append(" -> ".join(circle) + f" (at {', '.join(hops)})")
    assert not lines, "Import circles:\n" + "\n".join(lines)


def test_circles_are_found_and_listed():
    # The finder itself, on a made-up graph with one circle a -> b -> c -> a and a tail d.
    edges = {"a": {"b"}, "b": {"c"}, "c": {"a", "d"}, "d": set()}
    assert _circles(edges) == [["a", "b", "c", "a"]]
    assert _circles({"a": {"b"}, "b": set()}) == []


@pytest.mark.parametrize("name", sorted(tm_compare._EXPORTS))
def test_every_public_name_resolves(name):
    value = getattr(tm_compare, name)
    assert value is not None
    assert name in tm_compare.__all__


def test_all_lists_only_names_that_exist():
    missing = [name for name in tm_compare.__all__ if not hasattr(tm_compare, name)]
    assert not missing, f"tm_compare.__all__ names what the package lacks: {missing}"
