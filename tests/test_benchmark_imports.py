"""The benchmark scripts' imports resolve (they are not run by the suite).

``benchmarks/lamp_gases.py`` imported ``local_density`` from
``workbench.matching.evidence`` after stop 32 had moved it to
``workbench.matching.hit_chance``, and failed at its first line until the next
stop ran it. Every ``from workbench… import name`` and ``from tests… import
name`` of every benchmark is checked here, without running the scripts.
"""

from __future__ import annotations

import ast
import importlib
import importlib.util
from pathlib import Path

import pytest

BENCHMARKS = sorted((Path(__file__).resolve().parents[1] / "benchmarks").glob("*.py"))


def _project_imports(path: Path) -> list[tuple[str, str]]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module.split(".")[0] in ("workbench", "tests"):
                out += [(node.module, a.name) for a in node.names]
        elif isinstance(node, ast.Import):
            out += [(a.name, "") for a in node.names if a.name.split(".")[0] == "workbench"]
    return out


@pytest.mark.parametrize("path", BENCHMARKS, ids=lambda p: p.name)
def test_benchmark_imports_resolve(path):
    for module, name in _project_imports(path):
        mod = importlib.import_module(module)
        if name:
            assert hasattr(mod, name) or importlib.util.find_spec(f"{module}.{name}"), (
                f"{path.name}: from {module} import {name}"
            )
