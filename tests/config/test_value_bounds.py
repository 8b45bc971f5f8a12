"""Durations, intervals, counts and rates beyond what a bay can do are refused by `check`, at
their place in the file, instead of failing (or overflowing a timer) after the source is on."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from harness.common import bounds
from harness.common.errors import InputError, InputErrors
from harness.runner.prepare import RunOptions, prepare
from harness.sim.scenario import SIM_CONFIGS, load_scenario

ROOT = Path(__file__).resolve().parents[2]
ROUTINE_TEXT = (ROOT / "sequences" / "routine_single_phase.yaml").read_text(encoding="utf-8")
MEASURE = "    readings: 10\n    interval: 0.5 s\n    limits: {current: 6 A}"
SWEEP = "    readings: 5\n    interval: 0.5 s\n    limits: {current: 6 A}"
OFF = "  - kind: switch-off\n    name: ramp down after the load-loss test"


def located(text: str, value: str, start: int = 0) -> tuple[int, int]:
    """1-based line and column of the first ``value`` at or after ``start``."""
    index = text.index(value, start)
    return text.count("\n", 0, index) + 1, index - (text.rfind("\n", 0, index) + 1) + 1


def refusal(tmp_path: Path, text: str) -> InputError:
    path = tmp_path / "sequence.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as caught:
        prepare(RunOptions(path))
    errors = caught.value.errors if isinstance(caught.value, InputErrors) else [caught.value]
    assert len(errors) == 1, [str(e) for e in errors]
    return errors[0]


SEQUENCE_CASES = {
    "measure interval 1e308 s": (MEASURE, MEASURE.replace("0.5 s", "1e308 s"), "1e308 s", "at most 3600"),
    "measure readings a million": (MEASURE, MEASURE.replace("10\n", "1000000\n"), "1000000", "at most 10000"),
    "sweep readings a million": (SWEEP, SWEEP.replace("5\n", "1000000\n"), "1000000", "at most 10000"),
    "sweep interval 1e308 s": (SWEEP, SWEEP.replace("0.5 s", "1e308 s"), "1e308 s", "at most 3600"),
    "hold of 30 days": (OFF, OFF + "\n  - kind: hold\n    duration: 30 d", "30 d", "at most 604800"),
    "wait of 1e308 s": (OFF, OFF + "\n  - kind: wait\n    duration: 1e308 s", "1e308 s", "at most 604800"),
    "energised time 1e308 s": ("energised_time: 30 min", "energised_time: 1e308 s", "1e308 s", "at most 604800"),
    "step stability 1e308 %": (MEASURE, MEASURE + "\n    stability: 1e308 %", "1e308 %", "at most 100"),
    "sequence spec true": ("spec: 1", "spec: true", "true", "whole number"),
}


@pytest.mark.parametrize("case", SEQUENCE_CASES, ids=list(SEQUENCE_CASES))
def test_implausible_sequence_value_is_refused_at_its_place(case: str, tmp_path: Path) -> None:
    old, new, at, words = SEQUENCE_CASES[case]
    assert old in ROUTINE_TEXT, old
    text = ROUTINE_TEXT.replace(old, new, 1)
    error = refusal(tmp_path, text)
    assert (error.line, error.column) == located(text, at, text.index(new))
    assert words in error.message, str(error)


def test_the_largest_plausible_values_still_pass(tmp_path: Path) -> None:
    text = ROUTINE_TEXT.replace(MEASURE, MEASURE.replace("0.5 s", "1 h")).replace(
        OFF, OFF + "\n  - kind: wait\n    duration: 7 d")
    path = tmp_path / "sequence.yaml"
    path.write_text(text, encoding="utf-8")
    assert len(prepare(RunOptions(path)).sequence.steps) == 14  # the routine steps (the ratio test included) and the added wait


@pytest.mark.parametrize("old,new,words", [
    ("max_slew: 100 V/s", "max_slew: 1e-9 V/s", "at least 0.1"),
    ("update_interval: 0.2 s", "update_interval: 1e308 s", "at most 3600"),
    ("spec: 1", "spec: true", "valid integer"),
])
def test_implausible_scenario_value_is_refused(old: str, new: str, words: str, tmp_path: Path) -> None:
    text = (SIM_CONFIGS / "default.yaml").read_text(encoding="utf-8")
    assert old in text, old
    path = tmp_path / "scenario.yaml"
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_scenario(path)
    assert caught.value.line > 1 and words in caught.value.message


def test_bounds_sit_above_what_bays_do() -> None:
    # A heat run lasts about a day (common practice, no source); the highest a.c. system voltages
    # are about 1.2 MV (recalled from memory).
    assert bounds.MAX_DURATION_S >= 2 * 24 * 3600
    assert bounds.MAX_VOLTAGE_V > 1.2e6


def test_run_with_an_overflowing_interval_exits_2_before_energising(tmp_path: Path) -> None:
    path = tmp_path / "sequence.yaml"
    path.write_text(ROUTINE_TEXT.replace(MEASURE, MEASURE.replace("0.5 s", "1e308 s")), encoding="utf-8")
    env = {**os.environ, "HARNESS_DATA": str(tmp_path)}
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "run", str(path), "--yes", "--json"],
                          capture_output=True, text=True, env=env, timeout=60, cwd=ROOT)
    assert proc.returncode == 2 and proc.stdout == "", proc.stderr
    assert proc.stderr.strip().startswith(f"{path}:") and "interval: 1e+308 must be at most 3600" in proc.stderr
    assert "Traceback" not in proc.stderr
