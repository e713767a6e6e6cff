"""Imports point down the layers, never up, not even inside a function or under TYPE_CHECKING.

Layers, lowest first: the engine (``growthcore.*`` but the three below), ``growthcore.figures``
(plain figure dicts), ``growthcore.report`` (files from a record), ``growthcore.cli`` (the command
line) and ``growthcore.app`` (the dashboard, from the app/ folder). A module may import its own layer
and those below it. Nothing under growthcore imports dash. Every ``import`` and ``from … import``
node of every file is read with ``ast`` (relative imports resolved against the file's package);
nothing is imported.
"""

from __future__ import annotations

import ast
from collections.abc import Iterator
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LAYERS = ("engine", "figures", "report", "cli", "app")
RANK = {name: k for k, name in enumerate(LAYERS)}
#: The one upward import allowed: (file, enclosing function, imported module) -> why.
ALLOWED = {
    ("growthcore/cli/serve_cmd.py", "run", "growthcore.app.server"):
        "`growthcore serve` starts the dashboard; the import sits in the function that starts it, so that "
        "no other command loads dash",
}


def layer_of(module: str) -> str | None:
    """The layer of a module of this project by its dotted name; None for any other package."""
    parts = module.split(".")
    if parts[0] == "app":  # the folder's own name, which nothing should import by: still the top layer
        return "app"
    if parts[0] != "growthcore":
        return None
    if parts[1:2] in (["figures"], ["report"], ["cli"], ["app"]):
        return parts[1]
    if parts[1:2] == ["__main__"]:  # `python -m growthcore` is the command line's entry point
        return "cli"
    return "engine"


def module_of(path: str) -> tuple[str, str]:
    """(dotted module name, its package) of a file path relative to the repository root (app/ installs
    as growthcore.app)."""
    parts = list(Path(path).with_suffix("").parts)
    if parts[0] == "app":
        parts.insert(0, "growthcore")
    if parts[-1] == "__init__":
        parts.pop()
        return ".".join(parts), ".".join(parts)
    return ".".join(parts), ".".join(parts[:-1])


def imported(tree: ast.AST, package: str) -> Iterator[tuple[ast.stmt, str, str | None]]:
    """(node, imported module, innermost enclosing function) for every import in ``tree``.

    ``from a import b`` yields ``a.b`` (b may be a submodule: ``from growthcore import figures``);
    a relative import is resolved against ``package``.
    """
    def walk(node: ast.AST, function: str | None) -> Iterator[tuple[ast.stmt, str, str | None]]:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.Import):
                for alias in child.names:
                    yield child, alias.name, function
            elif isinstance(child, ast.ImportFrom):
                base = child.module or ""
                if child.level:
                    up = package.split(".")[: len(package.split(".")) - (child.level - 1)]
                    base = ".".join([*up, *([child.module] if child.module else [])])
                for alias in child.names:
                    yield child, base if alias.name == "*" else f"{base}.{alias.name}".lstrip("."), function
            inner = child.name if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef)) else function
            yield from walk(child, inner)

    yield from walk(tree, None)


def upward_imports(source: str, path: str) -> list[str]:
    """``path:line: import …`` with the reason, for each import in ``source`` that points up a layer."""
    module, package = module_of(path)
    own = layer_of(module)
    if own is None:
        return []
    found, seen = [], set()
    for node, target, function in imported(ast.parse(source, filename=path), package):
        if id(node) in seen:  # one line per statement, however many names it imports
            continue
        top = target.split(".")[0]
        if top == "dash" and own != "app":
            why = "nothing under growthcore imports dash"
        else:
            layer = layer_of(target)
            if layer is None or RANK[layer] <= RANK[own]:
                continue
            if any(path == f and function == fn and (target == m or target.startswith(m + "."))
                   for f, fn, m in ALLOWED):
                continue
            why = f"{own} may not import {layer}"
        seen.add(id(node))
        found.append(f"{path}:{node.lineno}: {ast.unparse(node)}  ({why})")
    return found


def project_files() -> list[Path]:
    return sorted(p for folder in ("growthcore", "app") for p in (ROOT / folder).rglob("*.py"))


def test_no_module_imports_upward() -> None:
    files = project_files()
    assert len(files) > 100 and any(p.parts[-2] == "figures" for p in files)
    bad = [line for p in files
           for line in upward_imports(p.read_text(encoding="utf-8"), p.relative_to(ROOT).as_posix())]
    for line in bad:
        print(line)
    assert not bad, "imports that point up the layers:\n" + "\n".join(bad)


def test_the_one_allowed_upward_import_is_still_there() -> None:
    """The exception names a real import; when it goes, so must the exception."""
    for (path, function, module), _why in ALLOWED.items():
        tree = ast.parse((ROOT / path).read_text(encoding="utf-8"))
        assert any(fn == function and target.startswith(module)
                   for _, target, fn in imported(tree, module_of(path)[1])), (path, function, module)


@pytest.mark.parametrize(("path", "source", "expected"), [
    # an engine module reaching up, at the top, in a function, under TYPE_CHECKING
    ("growthcore/fit/x.py", "from growthcore.report import panels\n", ["growthcore/fit/x.py:1:"]),
    ("growthcore/fit/x.py", "from growthcore.app.state import a\n",
     ["growthcore/fit/x.py:1: from growthcore.app.state import a"]),
    ("growthcore/fit/x.py", "from app.state import a, b\n", ["growthcore/fit/x.py:1: from app.state import a, b"]),
    ("growthcore/stats.py", "def f():\n    import app.state\n", ["growthcore/stats.py:2: import app.state"]),
    ("growthcore/data.py", "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from growthcore.figures "
     "import theme\n", ["growthcore/data.py:3:"]),
    ("growthcore/data.py", "from growthcore import figures\n", ["growthcore/data.py:1:"]),
    # relative imports resolved against the file's package
    ("growthcore/figures/batch.py", "from ..report import panels\n", ["growthcore/figures/batch.py:1:"]),
    ("growthcore/figures/__init__.py", "from ..cli import main\n", ["growthcore/figures/__init__.py:1:"]),
    ("growthcore/figures/batch.py", "from . import theme\nfrom ..batch import plate\n", []),
    ("growthcore/report/panels.py", "from .. import cli\n", ["growthcore/report/panels.py:1:"]),
    ("app/callbacks/live.py", "from ..state import series_from_store\nfrom ... import cli\n", []),
    # dash: never under growthcore, the app may
    ("growthcore/figures/common.py", "import dash\n", ["growthcore/figures/common.py:1: import dash"]),
    ("growthcore/fit/lm.py", "def f():\n    from dash import html\n", ["growthcore/fit/lm.py:2:"]),
    ("app/layout.py", "from dash import html\nfrom growthcore.cli import main\n", []),
    # the command line: the report below it is fine, the app only where `serve` starts it
    ("growthcore/cli/fit_cmd.py", "from growthcore.report import write_pngs\n", []),
    ("growthcore/cli/serve_cmd.py", "def run(a):\n    from growthcore.app.server import serve\n", []),
    ("growthcore/cli/serve_cmd.py", "def register(a):\n    from growthcore.app.server import serve\n",
     ["growthcore/cli/serve_cmd.py:2:"]),
    ("growthcore/cli/serve_cmd.py", "def run(a):\n    from app.state import fit_to_store\n",
     ["growthcore/cli/serve_cmd.py:2:"]),
    ("growthcore/cli/fit_cmd.py", "def run(a):\n    from growthcore.app.server import serve\n",
     ["growthcore/cli/fit_cmd.py:2:"]),
    ("growthcore/__main__.py", "from growthcore.cli import main\n", []),
    ("growthcore/__init__.py", "import growthcore.cli\n", ["growthcore/__init__.py:1:"]),
])
def test_upward_imports_are_found(path: str, source: str, expected: list[str]) -> None:
    found = upward_imports(source, path)
    assert len(found) == len(expected), found
    for line, start in zip(found, expected, strict=True):
        assert line.startswith(start), line
