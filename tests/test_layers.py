"""The import table: every module's imports run down the floors, never up or sideways.

The floors and the rule are the project's own architecture (project choice, no source); they
are written out in DEVELOPERS.md. This test reads each module's imports with ``ast`` (every
``import``/``from ... import``, at any depth of the module, including the ones inside
functions) and fails on a forbidden one.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[1] / "src" / "freezeout"

#: Floor of each part of the package, from the ground up. A module may import its own part
#: and any part on a lower floor; nothing on its own floor or above.
FLOORS = {
    "errors": 0, "_version": 0,
    "numbers": 1,
    "records": 2,
    "physics": 3,
    "io": 4, "reduction": 4, "fitting": 4,
    "claims": 5, "storage": 5, "reporting": 5,
    "api": 6,
    "__init__": 7,  # the package face re-exports the API
    "cli": 8,
}

#: The command-line layer may import only these parts (and itself).
CLI_ALLOWED = {"api", "errors", "cli"}


def _part(module: str) -> str:
    """``freezeout.fitting.fit`` -> ``fitting``; ``freezeout`` -> ``__init__``."""
    parts = module.split(".")
    return "__init__" if len(parts) == 1 else parts[1]


def _modules():
    for path in sorted(SRC.rglob("*.py")):
        rel = path.relative_to(SRC.parent).with_suffix("")
        parts = list(rel.parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        yield ".".join(parts), path


def _imports(module: str, path: Path) -> list[tuple[str, int]]:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, node.lineno) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                name = ".".join(base + ([node.module] if node.module else []))
            else:
                name = node.module or ""
            if name == "freezeout":  # ``from freezeout import x``: x is the part
                out += [(f"freezeout.{a.name}", node.lineno) for a in node.names]
            else:
                out.append((name, node.lineno))
    return [(n, line) for n, line in out if n == "freezeout" or n.startswith("freezeout.")]


MODULES = list(_modules())


def test_every_part_has_a_floor():
    parts = {_part(m) for m, _ in MODULES} - {"data"}
    assert parts <= set(FLOORS), f"parts without a floor: {sorted(parts - set(FLOORS))}"


@pytest.mark.parametrize(("module", "path"), MODULES, ids=[m for m, _ in MODULES])
def test_imports_run_down(module, path):
    mine = _part(module)
    bad = []
    for name, line in _imports(module, path):
        theirs = _part(name)
        if theirs == "data":
            continue
        if mine == "cli" and theirs not in CLI_ALLOWED:
            bad.append(f"line {line}: {name} (the CLI imports only freezeout.api, "
                       "freezeout.errors and itself)")
        elif theirs != mine and not FLOORS[theirs] < FLOORS[mine]:
            bad.append(f"line {line}: {name} (floor {FLOORS[theirs]} from floor "
                       f"{FLOORS[mine]})")
    assert not bad, f"{module} imports against the table:\n" + "\n".join(bad)


@pytest.mark.parametrize(("module", "path"), MODULES, ids=[m for m, _ in MODULES])
def test_rooms_are_small(module, path):
    n = len(path.read_text(encoding="utf-8").splitlines())
    assert n <= 450, f"{module} has {n} lines; the limit is 450"


def _lazy_reexport(node) -> bool:
    """A PEP 562 ``__getattr__``/``__dir__`` that only imports and returns names, or the
    frozen set of names it serves (``_NAME = frozenset({...})``)."""
    if isinstance(node, ast.FunctionDef) and node.name in ("__getattr__", "__dir__"):
        calls = [n.func for n in ast.walk(node) if isinstance(n, ast.Call)]
        allowed = {"getattr", "globals", "sorted", "AttributeError", "frozenset"}
        return all(isinstance(f, ast.Name) and f.id in allowed for f in calls)
    if isinstance(node, ast.Assign) and len(node.targets) == 1:
        target, value = node.targets[0], node.value
        return (isinstance(target, ast.Name) and target.id.startswith("_")
                and isinstance(value, ast.Call) and getattr(value.func, "id", "") == "frozenset")
    return False


def test_package_faces_only_reexport():
    """A package's ``__init__.py`` holds imports, ``__all__``, a docstring and, for lazy
    re-export, a ``__getattr__``/``__dir__`` that only imports and returns; nothing else."""
    for path in SRC.rglob("__init__.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in tree.body:
            ok = isinstance(node, ast.Import | ast.ImportFrom) or (
                isinstance(node, ast.Expr) and isinstance(node.value, ast.Constant)) or (
                isinstance(node, ast.Assign) and [getattr(t, "id", None) for t in node.targets]
                == ["__all__"]) or _lazy_reexport(node)
            assert ok, f"{path.relative_to(SRC)} line {node.lineno}: only re-exports belong here"


def test_lazy_faces_serve_every_name():
    """Every name a lazy face lists resolves (so no re-export is a dead string)."""
    import freezeout
    import freezeout.api

    for module in (freezeout, freezeout.api):
        for name in module.__all__:
            assert getattr(module, name) is not None, f"{module.__name__}.{name}"


def test_help_does_not_load_the_api_modules():
    """``freezeout --help`` imports the CLI, typer and rich, not the API's modules."""
    import subprocess
    import sys

    code = ("import sys, freezeout.cli.app; "
            "print(sorted(m for m in sys.modules if m.startswith('freezeout.api.')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"


def test_the_table_catches_an_upward_import(tmp_path):
    """The checker itself: an upward and a sideways import are both found."""
    f = tmp_path / "x.py"
    f.write_text("from freezeout.fitting.fit import fit_run\nimport freezeout.reduction\n")
    names = [n for n, _ in _imports("freezeout.io.x", f)]
    assert names == ["freezeout.fitting.fit", "freezeout.reduction"]
    assert not FLOORS[_part(names[0])] < FLOORS["io"]
