"""core/ must never import Qt, pyqtgraph or the app layer (import-linter contract in pyproject.toml)."""
import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FORBIDDEN = ("PySide6", "pyqtgraph", "shiboken6", "app")


def test_import_linter_contract_holds():
    from importlinter.cli import lint_imports

    import os
    cwd = os.getcwd()
    os.chdir(ROOT)
    try:
        assert lint_imports() == 0
    finally:
        os.chdir(cwd)


def test_no_forbidden_import_in_core_source():
    # a second, plain check that also catches imports inside functions
    for path in (ROOT / "core").rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            for n in names:
                assert n.split(".")[0] not in FORBIDDEN, f"{path.name} imports {n}"
