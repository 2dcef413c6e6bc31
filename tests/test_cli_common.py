"""What every command shares (issue 9 items 1, 2 and 7; issue 10 item 7 and 8)."""
from __future__ import annotations

import ast
import json
import subprocess
import sys
from pathlib import Path

import pytest

from core.about import CAUTION, VERSION

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "sample_projects" / "propulsion_line.json"


def run(*argv, **kw):
    return subprocess.run([sys.executable, "-m", "app", *argv], capture_output=True, text=True, cwd=ROOT,
                          timeout=300, **kw)


@pytest.mark.parametrize("command", ["solve", "check"])
def test_json_outputs_carry_the_caution(command):
    p = run(command, str(SAMPLE), "--json")
    assert p.returncode in (0, 1), p.stderr
    assert json.loads(p.stdout)["caution"] == CAUTION


def test_closed_pipe_ends_quietly():
    # issue 10 item 7: `twistwise solve FILE | head -1` must not print an internal error
    p = subprocess.run(f"'{sys.executable}' -m app solve '{SAMPLE}' | head -1", shell=True, cwd=ROOT,
                       capture_output=True, text=True, timeout=300)
    assert p.stdout.count("\n") == 1
    assert p.stderr == "", p.stderr


def test_help_lists_every_way_to_start():
    p = run("--help")
    assert p.returncode == 0
    for text in ("twistwise FILE", "twistwise COMMAND", "solve", "check", "response", "report", "screenshot",
                 CAUTION):
        assert text in p.stdout
    assert run("--version").stdout.strip() == f"Twistwise {VERSION}"


def test_json_is_compact_when_piped_and_never_has_nan_tokens():
    p = run("solve", str(SAMPLE), "--json")
    assert "\n  " not in p.stdout  # no indentation into a pipe
    for token in ("NaN", "Infinity"):
        assert token not in p.stdout


def _imports(path: Path) -> set[str]:
    names = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:  # relative: resolve against the module's package
                pkg = ".".join(path.relative_to(ROOT).with_suffix("").parts[:-node.level])
                names.add(f"{pkg}.{node.module}" if node.module else pkg)
            elif node.module:
                names.add(node.module)
        elif isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
    return names


def test_desktop_and_sheet_never_import_the_command_line():
    # issue 9 item 2, also inside functions (the import-linter contract sees those too)
    for folder in ("gui", "report"):
        for path in (ROOT / "app" / folder).rglob("*.py"):
            bad = [n for n in _imports(path) if n == "app.cli" or n.startswith("app.commands")]
            assert not bad, f"{path.relative_to(ROOT)} imports {bad}"


def test_one_module_per_command():
    from app.commands import COMMANDS
    for name, module in COMMANDS.items():
        assert (ROOT / "app" / "commands" / f"{module}.py").exists(), name
    assert not list((ROOT / "app").glob("*_cli.py"))
