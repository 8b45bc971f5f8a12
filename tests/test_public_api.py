"""The public surface is explicit and sorted (a script relies on it), and the import direction
of the layers holds: calc and sim import nothing of the runner, the store or each other."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import harness

ROOT = Path(__file__).resolve().parents[1]


def test_all_is_sorted_and_importable() -> None:
    assert harness.__all__ == sorted(harness.__all__)
    for name in harness.__all__:
        assert hasattr(harness, name), name


def imports_of(package: str) -> set[str]:
    found: set[str] = set()
    for path in (ROOT / package.replace(".", "/")).rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and node.module:
                found.add(node.module)
            elif isinstance(node, ast.Import):
                found.update(alias.name for alias in node.names)
    return found


@pytest.mark.parametrize("package,allowed", [
    ("harness.common", {"harness.common"}),
    ("harness.calc", {"harness.common", "harness.calc"}),
    ("harness.sim", {"harness.common", "harness.sim"}),
    ("harness.store", {"harness.common", "harness.store"}),
    ("harness.report", {"harness.common", "harness.report"}),
])
def test_layers_import_only_downwards(package: str, allowed: set[str]) -> None:
    ours = {m for m in imports_of(package) if m.split(".")[0] in ("harness", "drivers")}
    stray = {m for m in ours if not any(m == a or m.startswith(a + ".") for a in allowed)}
    assert not stray, f"{package} imports {sorted(stray)}"
