"""The pytest plugin: a folder's sequences are rehearsed one item each, a broken sequence fails
exactly its own item, and --junitxml gives the CI report."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from importlib.metadata import entry_points
from pathlib import Path

import pytest

from tests.runner.conftest import ROOT

GOOD = ROOT / "sequences" / "routine_3kva_single_phase.yaml"


def _plugin_args() -> list[str]:
    """-p loads the plugin from this checkout unless an installed copy already registers it."""
    installed = any(ep.value == "harness.pytest_rehearse" for ep in entry_points(group="pytest11"))
    return [] if installed else ["-p", "harness.pytest_rehearse"]


def test_pyproject_registers_the_plugin() -> None:
    tomllib = pytest.importorskip("tomllib")   # Python 3.11+
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    assert project["entry-points"]["pytest11"]["harness-rehearse"] == "harness.pytest_rehearse"


def test_a_broken_sequence_fails_exactly_its_own_item(tmp_path: Path) -> None:
    folder = tmp_path / "lab-sequences"
    folder.mkdir()
    shutil.copy(GOOD, folder / "good.yaml")
    broken = GOOD.read_text().replace("limits: {current: 3 A}", "limits: {current: 30 A}", 1)
    (folder / "broken.yaml").write_text(broken)
    shutil.copy(ROOT / "sim_configs" / "default.yaml", folder / "unit.yaml")   # a scenario: not collected
    (folder / "records").mkdir()                                                # sub-folders are not read
    shutil.copy(GOOD, folder / "records" / "other.yaml")
    report = tmp_path / "out.xml"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.run([sys.executable, "-m", "pytest", *_plugin_args(), "--rehearse", str(folder),
                           f"--junitxml={report}", "--rehearse-data", str(tmp_path / "runs"), "-p", "no:cacheprovider",
                           "-q"], capture_output=True, text=True, cwd=tmp_path, env=env, timeout=600)
    assert proc.returncode == 1, proc.stdout + proc.stderr
    cases = {c.get("classname"): c for c in ET.parse(report).getroot().iter("testcase")}
    assert set(cases) == {"lab-sequences.good.yaml", "lab-sequences.broken.yaml"}, proc.stdout
    assert cases["lab-sequences.good.yaml"].find("failure") is None
    failure = cases["lab-sequences.broken.yaml"].find("failure")
    assert failure is not None and "invalid (nothing was energised) (exit 2)" in failure.text
    assert "above the sequence's (or station's) limit of 16 A" in failure.text
    props = {p.get("name"): p.get("value") for p in cases["lab-sequences.good.yaml"].iter("property")}
    assert props["exit_code"] == "0" and props["status"] == "passed" and props["load_loss"].endswith("passed")
