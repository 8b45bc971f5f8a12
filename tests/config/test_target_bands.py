"""A ramp target's reach (its tolerance band, plus the fixed-increment method's overshoot) must sit
strictly below the step's effective limit, and a no-load target's predicted magnetising current
strictly below the step's current limit; both refused before anything is energised, at the
target's place in the file.

Figures: the demo unit of sequences/routine_single_phase.yaml (50 kVA, 6.6 kV / 415 V, so 7.576 A
HV and 120.5 A LV rated current; sequence limits 520 V, 12 A; the no-load steps' 6 A; guaranteed
no-load current 2 %, impedance 4 %). The magnetising-current bound (in proportion to the voltage
up to rated, doubled for each 10 % above) is common practice, no source.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from harness.common.errors import InputError, InputErrors
from harness.config.reach import magnetising_current
from harness.runner.prepare import RunOptions, prepare

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"

LOAD_RAMP = """  - kind: ramp
    name: to rated current
    current: rated
"""
NO_LOAD_RAMP = """  - kind: ramp
    name: to rated voltage
    voltage: rated
    limits: {current: 6 A}
"""


def sequence(tmp_path: Path, old: str, new: str, *more: tuple[str, str]) -> Path:
    text = ROUTINE.read_text(encoding="utf-8")
    for a, b in ((old, new), *more):
        assert a in text, a
        text = text.replace(a, b, 1)
    path = tmp_path / "seq.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def load_ramp(tmp_path: Path, body: str, *more: tuple[str, str]) -> Path:
    return sequence(tmp_path, LOAD_RAMP, "  - kind: ramp\n    name: to test current\n" + body, *more)


def errors_of(path: Path) -> list[InputError]:
    with pytest.raises(InputError) as info:
        prepare(RunOptions(path))
    err = info.value
    return list(err.errors) if isinstance(err, InputErrors) else [err]


def position_of(path: Path, needle: str) -> tuple[int, int]:
    """Line and column of the value in the first line holding ``needle`` ('key: value')."""
    for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if needle in line:
            return n, line.index(needle.split(": ", 1)[1]) + 1
    raise AssertionError(needle)


def test_band_reaching_the_limit_is_refused_at_the_target(tmp_path: Path) -> None:
    path = load_ramp(tmp_path, "    current: 12 A\n    tolerance: 5 %\n")
    (err,) = errors_of(path)
    assert (err.line, err.column) == position_of(path, "    current: 12 A")
    # 12 A + 5 % = 12.6 A; 0.6 A of margin needed; 12 / 1.05 = 11.43 A the highest target at 5 %.
    assert "target 12 A ± 5 % reaches 12.6 A, not below the step's current limit of 12 A" in err.message
    assert "leave at least 0.6 A" in err.message and "below 11.43 A" in err.message


def test_band_just_over_the_limit_is_refused(tmp_path: Path) -> None:
    (err,) = errors_of(load_ramp(tmp_path, "    current: 11.8 A\n    tolerance: 5 %\n"))
    assert "reaches 12.39 A" in err.message   # 11.8 * 1.05 = 12.39


def test_band_strictly_inside_is_accepted(tmp_path: Path) -> None:
    prepare(RunOptions(load_ramp(tmp_path, "    current: 11.4 A\n    tolerance: 5 %\n")))  # 11.97 A < 12 A


def test_band_touching_the_limit_is_refused(tmp_path: Path) -> None:
    # 10 A + 5 % = 10.5 A, equal to a step limit of 10.5 A: not strictly inside.
    (err,) = errors_of(load_ramp(tmp_path, "    current: 10 A\n    tolerance: 5 %\n    limits: {current: 10.5 A}\n"))
    assert "not below the step's current limit of 10.5 A" in err.message


def test_the_tightest_limit_applies(tmp_path: Path) -> None:
    # The step's 8 A is tighter than the sequence's 12 A and the simulated bay's 20 A.
    (err,) = errors_of(load_ramp(tmp_path, "    current: 7.9 A\n    tolerance: 2 %\n    limits: {current: 8 A}\n"))
    assert "reaches 8.058 A, not below the step's current limit of 8 A" in err.message


def test_voltage_band_reaching_the_limit_is_refused(tmp_path: Path) -> None:
    path = sequence(tmp_path, NO_LOAD_RAMP, NO_LOAD_RAMP.replace("voltage: rated", "voltage: 518 V\n    tolerance: 0.5 %"))
    errors = errors_of(path)
    assert any("target 518 V ± 0.5 % reaches 520.6 V, not below the step's voltage limit of 520 V" in e.message
               for e in errors), errors


def test_sweep_points_are_checked_each(tmp_path: Path) -> None:
    path = sequence(tmp_path, "voltage: [90 %, 100 %, 105 %, 110 %]", "voltage: [90 %, 125 %]")
    errors = errors_of(path)
    line, column = position_of(path, "voltage: [90 %, 125 %]")
    assert {(e.line, e.column) for e in errors} == {(line, column + len("[90 %, "))}   # the 125 % point only
    assert any("reaches 521.3 V" in e.message for e in errors), errors   # 518.75 V + 0.5 %


def test_fixed_increment_overshoot_counts(tmp_path: Path) -> None:
    # One increment: half a second of the bay's 100 V/s slew, 50 V. With the guaranteed 4 %
    # (34.85 ohm from the HV side) that is 1.435 A: 7.576 A + 0.3 % + 1.435 A = 9.03 A < 12 A.
    prepare(RunOptions(load_ramp(tmp_path, "    current: rated\n    method: fixed-increment\n")))
    # Without a guaranteed impedance the lowest plausible (1 %: 8.712 ohm) is assumed: 5.74 A.
    path = load_ramp(tmp_path, "    current: rated\n    method: fixed-increment\n", ("  impedance: 4 %\n", ""))
    (err,) = errors_of(path)
    assert "plus one 5.74 A increment of the fixed-increment method reaches 13.34 A" in err.message


def test_no_load_ramp_whose_magnetising_current_reaches_the_limit_is_refused(tmp_path: Path) -> None:
    path = sequence(tmp_path, NO_LOAD_RAMP, NO_LOAD_RAMP.replace("voltage: rated", "voltage: 510 V"))
    (err,) = errors_of(path)
    assert (err.line, err.column) == position_of(path, "voltage: 510 V")
    # 2 % of 120.5 A = 2.41 A at 415 V; at 511.5 V (510 V + 0.3 %, 123.3 %): x 1.233 x 2 ** 2.33 = 14.9 A.
    assert "predicted to draw about 14.9 A" in err.message and "current limit of 6 A" in err.message


def test_demo_sweep_to_110_pct_fits_its_current_limit() -> None:
    prepare(RunOptions(ROUTINE))
    # 110.55 % (110 % + 0.5 % tolerance): 2.41 A x 1.1055 x 2 ** 1.055 = 5.54 A, below 6 A.
    assert magnetising_current(2.0, 50e3 / 415, 1.1055) == pytest.approx(5.54, abs=0.01)


def test_magnetising_bound_is_proportional_up_to_rated() -> None:
    assert magnetising_current(2.0, 100.0, 0.5) == pytest.approx(1.0)
    assert magnetising_current(2.0, 100.0, 1.0) == pytest.approx(2.0)
    assert magnetising_current(2.0, 100.0, 1.2) == pytest.approx(2.0 * 1.2 * 4)


def test_harness_check_exits_2_with_the_position(tmp_path: Path) -> None:
    path = load_ramp(tmp_path, "    current: 12 A\n    tolerance: 5 %\n")
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "check", str(path)], capture_output=True, text=True,
                          cwd=ROOT, timeout=120)
    line, column = position_of(path, "    current: 12 A")
    assert proc.returncode == 2, proc.stderr
    assert f"{path}:{line}:{column}: target 12 A ± 5 % reaches 12.6 A" in proc.stderr
    assert "Traceback" not in proc.stderr
