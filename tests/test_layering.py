"""The engine never imports Qt or the window: proved two ways."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_importing_every_core_module_loads_no_qt() -> None:
    code = (
        "import pkgutil, importlib, sys, core\n"
        "for m in pkgutil.walk_packages(core.__path__, 'core.'):\n"
        "    importlib.import_module(m.name)\n"
        "bad = sorted(n for n in sys.modules if n.startswith(('PySide6', 'shiboken6', 'app')))\n"
        "print(bad)\n"
        "sys.exit(1 if bad else 0)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, f"core pulled in: {proc.stdout} {proc.stderr}"


def test_import_linter_contract() -> None:
    # import-linter (a general-purpose architecture checker) reads the contract in
    # pyproject.toml: core may not import PySide6 or app.
    proc = subprocess.run(
        [
            sys.executable,
            "-c",
            "from importlinter.cli import lint_imports_command; lint_imports_command()",
        ],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
