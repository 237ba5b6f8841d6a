"""The layout keeps its shape: imports point one way, no private imports, no cycles.

Layers, lowest first (DEVELOPERS.md, "Layout"): common < core < models < records < stats
< analyses < report < cli. Stores and engines sit beside records and are reached only from
analyses. A module may import its own layer and the layers below it, never above; every
import counts, at module level or inside a function.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "shufflecheck"

RANK = {
    "common": 0,
    "core": 1,
    "models": 2,
    "records": 3,
    "stores": 3,
    "engines": 3,
    "stats": 4,
    "analyses": 5,
    "report": 6,
    "cli": 7,
}
#: layers that only the application layer (and they themselves) may import
BESIDE_RECORDS = {"stores", "engines"}
#: the package's own entry points sit above everything
TOP = {"shufflecheck", "shufflecheck.__main__", "shufflecheck.api"}


def _modules() -> dict[str, Path]:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = path
    return out


MODULES = _modules()


def _layer(module: str) -> str | None:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 and parts[1] in RANK else None


def _imports(module: str) -> list[tuple[str, str, int]]:
    """(imported module, imported name or '', line) for every import of the package."""
    path = MODULES[module]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = module.split(".")
                if path.name != "__init__.py":
                    base = base[:-1]
                base = base[: len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "shufflecheck":
                continue
            for alias in node.names:
                sub = f"{target}.{alias.name}"
                if sub in MODULES:
                    out.append((sub, "", node.lineno))
                else:
                    out.append((target, alias.name, node.lineno))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "shufflecheck":
                    out.append((alias.name, "", node.lineno))
    return out


def test_every_module_is_in_a_layer():
    loose = sorted(m for m in MODULES if _layer(m) is None and m not in TOP)
    assert not loose, f"modules outside the layers: {loose}"


@pytest.mark.parametrize("module", sorted(MODULES))
def test_imports_point_down(module):
    if module in TOP:
        return
    mine = _layer(module)
    assert mine is not None
    for target, _, line in _imports(module):
        theirs = _layer(target)
        if theirs is None:
            assert target in TOP, f"{module}:{line} imports {target}, outside the layers"
            pytest.fail(f"{module}:{line} imports the package top ({target})")
        assert RANK[theirs] <= RANK[mine], (
            f"{module}:{line} ({mine}) imports {target} ({theirs}), a higher layer"
        )
        if theirs in BESIDE_RECORDS and mine != theirs:
            assert mine == "analyses", f"{module}:{line} reaches {target}; only analyses may"


@pytest.mark.parametrize("module", sorted(MODULES))
def test_no_private_names_of_other_modules(module):
    for target, name, line in _imports(module):
        if name.startswith("_") and not name.startswith("__") and target != module:
            pytest.fail(f"{module}:{line} imports the private name {name} of {target}")


def test_no_import_cycles():
    edges = {
        m: {t for t, _, _ in _imports(m) if t in MODULES and t != m and not t.startswith(m + ".")}
        for m in MODULES
    }
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m: str) -> None:
        state[m] = 1
        stack.append(m)
        for t in sorted(edges[m]):
            if state.get(t) == 1:
                cycle = [*stack[stack.index(t) :], t]
                pytest.fail("import cycle: " + " -> ".join(cycle))
            if t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(MODULES):
        if m not in state:
            visit(m)
