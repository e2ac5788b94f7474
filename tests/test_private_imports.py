"""No module imports another package's private (``_name``) module or name.

A package's public names are those its ``__init__`` exports (DEVELOPERS.md, "Public
names"); everything under a leading underscore may change without notice, so only the
package itself may import it. The check reads every module's source with ``ast``, so
imports made inside functions and under ``if TYPE_CHECKING:`` count too.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import imputer_app

ROOT = Path(imputer_app.__file__).resolve().parent


def module_name(path: Path) -> str:
    parts = path.relative_to(ROOT.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def owner(name: str) -> str:
    """The package a module belongs to: ``imputer_app.<first part>`` (root modules own themselves)."""
    return ".".join(name.split(".")[:2])


def imported_names(tree: ast.AST, module: str, is_package: bool) -> list[tuple[int, str]]:
    """Every dotted name the module imports, relative imports resolved, with its line."""
    names: list[tuple[int, str]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names += [(node.lineno, alias.name) for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = module.split(".")
                anchor = anchor[: len(anchor) - node.level + (1 if is_package else 0)]
                base = ".".join([*anchor, *([base] if base else [])])
            names += [(node.lineno, f"{base}.{alias.name}") for alias in node.names]
    return names


def is_private(part: str) -> bool:
    return part.startswith("_") and not (part.startswith("__") and part.endswith("__"))


def reaches_into(importer: str, name: str) -> bool:
    """True when ``importer`` imports a private part of another package of ``imputer_app``."""
    parts = name.split(".")
    if parts[0] != "imputer_app" or owner(name) == owner(importer):
        return False
    return any(is_private(part) for part in parts[1:])


def private_imports_across_packages() -> list[str]:
    found = []
    for path in sorted(ROOT.rglob("*.py")):
        module = module_name(path)
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for line, name in imported_names(tree, module, path.name == "__init__.py"):
            if reaches_into(module, name):
                found.append(f"{path.relative_to(ROOT.parent)}:{line}: {module} imports {name}")
    return found


def test_no_module_imports_another_packages_private_module() -> None:
    found = private_imports_across_packages()
    assert not found, "private imports across packages:\n" + "\n".join(found)


@pytest.mark.parametrize(
    ("source", "module", "is_package", "expected"),
    [
        ("from imputer_app.sheets._write_csv import side_files", "imputer_app.cli.commands", False,
         ["imputer_app.sheets._write_csv.side_files"]),
        ("from ._read import read_sheet", "imputer_app.sheets", True,
         ["imputer_app.sheets._read.read_sheet"]),
        ("from .._model import Sheet", "imputer_app.sheets.sub.x", False,
         ["imputer_app.sheets._model.Sheet"]),
        ("if TYPE_CHECKING:\n    import imputer_app.engine._table", "imputer_app.gui.x", False,
         ["imputer_app.engine._table"]),
        ("def f():\n    from imputer_app.sheets import _write_xlsx", "imputer_app.gui.x", False,
         ["imputer_app.sheets._write_xlsx"]),
    ],
)  # fmt: skip
def test_imports_are_found_wherever_they_are_written(
    source: str, module: str, is_package: bool, expected: list[str]
) -> None:
    # The walk must see relative, type-only and function-level imports, or the check above
    # would pass by not looking.
    assert [name for _, name in imported_names(ast.parse(source), module, is_package)] == expected


@pytest.mark.parametrize(
    ("importer", "name", "flagged"),
    [
        ("imputer_app.cli.commands", "imputer_app.sheets._write_csv.side_files", True),
        ("imputer_app.gui.window", "imputer_app.engine._adapter.FillResult", True),
        ("imputer_app.sheets._write", "imputer_app.sheets._content.build_content", False),
        ("imputer_app.cli.commands", "imputer_app.sheets.read_sheet", False),
        ("imputer_app.cli.commands", "imputer_app.__version__", False),
        ("imputer_app.cli.commands", "pandas._libs", False),
    ],
)
def test_the_rule(importer: str, name: str, flagged: bool) -> None:
    assert reaches_into(importer, name) is flagged
