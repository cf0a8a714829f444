"""The bundled demo district stays in step with its generator and plans cleanly."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from core.files import read_network
from core.model import OneWay, Service

ROOT = Path(__file__).resolve().parents[1]


def test_sample_file_matches_its_generator() -> None:
    proc = subprocess.run(
        [sys.executable, "tools/make_sample.py", "--check"],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_sample_district_has_what_the_readme_promises() -> None:
    net = read_network(ROOT / "sample_data" / "thistlewick.geojson")
    assert 150 <= len(net.segments) <= 400
    assert any(s.oneway is not OneWay.NO for s in net)
    assert any(s.service is Service.NONE for s in net)
    assert net.depot is not None and net.crs is not None
