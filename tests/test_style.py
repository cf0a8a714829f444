"""The code stays ruff-clean (the rules are in pyproject.toml)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_check_is_clean() -> None:
    proc = subprocess.run(
        [sys.executable, "-m", "ruff", "check", "."], capture_output=True, text=True, cwd=ROOT
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
