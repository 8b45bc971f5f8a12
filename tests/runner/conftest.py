"""Helpers for whole-flow tests: ``harness run`` as a user runs it, on the simulated bay."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"
SHORT = ROOT / "tests" / "runner" / "sequences" / "no_load_only.yaml"   # a short run: the no-load test alone


def harness(*args: str, data: Path, timeout: float = 240) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "HARNESS_DATA": str(data)}
    return subprocess.run([sys.executable, "-m", "harness.cli", *args], capture_output=True, text=True,
                          env=env, timeout=timeout, cwd=ROOT)


def run_json(*args: str, data: Path) -> tuple[int, dict[str, Any], str]:
    proc = harness("run", *args, "--json", data=data)
    assert "Traceback" not in proc.stderr, proc.stderr
    return proc.returncode, json.loads(proc.stdout), proc.stderr


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[int, dict[str, Any], Path]:
    """One run of the demo sequence, shared by the tests that read it."""
    data = tmp_path_factory.mktemp("demo-data")
    code, document, _ = run_json(str(ROUTINE), "--yes", data=data)
    return code, document, data
