"""The house rules of the package layout (DEVELOPERS.md), read off the source with ``ast``.

Data flows one way — spec → physics → search → views → cli, with the catalog beside the
physics — so a module may import only from the packages its own package is allowed to.
Every import counts, also one inside a function.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import selector

ROOT = Path(selector.__file__).parent

#: What each package must never import (prefixes of dotted module names).
FORBIDDEN: dict[str, tuple[str, ...]] = {
    "spec": ("selector.physics", "selector.search", "selector.catalog", "selector.views", "selector.cli",
             "selector.api", "scipy", "pandas", "sqlalchemy", "alembic", "click", "matplotlib"),
    "files": ("selector.spec", "selector.physics", "selector.search", "selector.catalog", "selector.views",
              "selector.cli", "selector.api", "numpy", "pandas", "sqlalchemy", "click", "matplotlib"),
    "physics": ("selector.catalog", "selector.search", "selector.views", "selector.cli", "selector.api",
                "click", "sqlalchemy", "alembic", "pandas", "matplotlib"),
    "search": ("selector.catalog", "selector.views", "selector.cli", "selector.api",
               "click", "sqlalchemy", "alembic", "matplotlib"),
    "catalog": ("selector.search", "selector.views", "selector.cli", "selector.api", "click", "matplotlib"),
    "views": ("selector.cli", "click"),
}


def _imports(path: Path) -> list[tuple[int, str]]:
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [(node.lineno, alias.name) for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            found.append((node.lineno, node.module))
            # ``from selector import plots`` names a module too.
            found += [(node.lineno, f"{node.module}.{alias.name}") for alias in node.names]
    return found


def _violations(package: str) -> list[str]:
    banned = FORBIDDEN[package]
    problems = []
    for path in sorted((ROOT / package).rglob("*.py")):
        flagged = set()
        for line, module in _imports(path):
            if line not in flagged and any(module == prefix or module.startswith(prefix + ".") for prefix in banned):
                flagged.add(line)
                problems.append(f"{path.relative_to(ROOT.parent)}:{line}: imports {module}")
    return problems


@pytest.mark.parametrize("package", sorted(FORBIDDEN))
def test_package_imports_only_what_the_flow_allows(package):
    assert _violations(package) == []


def test_every_module_lives_in_a_package_of_the_flow():
    loose = sorted(p.name for p in ROOT.glob("*.py") if p.name not in {"__init__.py", "api.py", "errors.py"})
    assert loose == []


def test_the_rule_catches_a_wrong_way_import(tmp_path, monkeypatch):
    fake = tmp_path / "selector"
    (fake / "physics").mkdir(parents=True)
    (fake / "physics" / "bad.py").write_text("def f():\n    from selector.cli import main\n")
    monkeypatch.setattr(f"{__name__}.ROOT", fake)
    assert _violations("physics") == ["selector/physics/bad.py:2: imports selector.cli"]
