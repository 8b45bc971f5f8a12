"""The simulated bay's taps and ratio faults, on bay time (a stepped clock).

The open winding's voltage comes through the turns of the tap in circuit; the wrong-tap fault
puts the next tap's turns on one tap only; the wrong-vector-group fault moves the clock number
(a delta closed on the other terminals gives Dyn1 from Dyn11) or reverses a single-phase
winding; the tap changer does not move while the bay is live.
"""

from __future__ import annotations

import pytest

from harness.common.clock import SteppedClock
from harness.sim.bay import Bay, BayConflict
from harness.sim.scenario import load_scenario
from harness.sim.truth import truth


def _ratio_at(bay: Bay, tap: int) -> tuple[list[float], list[float]]:
    """HV/LV of each phase pair and the LV lead (degrees) on ``tap``, the HV fed at 230 V per phase."""
    bay.set_tap(tap)
    bay.set_wiring("hv", "open")
    bay.source_command("voltage", 230.0)
    bay.source_command("output", True)
    bay.clock.sleep(10.0)
    channels = bay.analyser_snapshot()
    n = 3 if bay.three_phase else 1
    fed = range(1, n + 1)
    other = bay.scenario.analyser.open_winding
    ratios = [channels[a - 1].u_rms / channels[b - 1].u_rms for a, b in zip(fed, other)]
    leads = [bay.analyser_phase(a, b) for a, b in zip(fed, other)]
    bay.source_command("voltage", 0.0)
    bay.source_command("output", False)
    bay.clock.sleep(5.0)
    return ratios, leads


def _bay(name: str, *faults: str) -> Bay:
    bay = Bay(load_scenario(name), SteppedClock(), faults)
    bay.analyser.set_voltage_range(600.0)
    bay.analyser.set_voltage_range(30.0, list(bay.scenario.analyser.open_winding))
    return bay


@pytest.mark.parametrize("name", ["three-phase", "default"])
def test_the_open_winding_follows_the_turns_of_each_tap(name) -> None:
    bay, true = _bay(name), truth(load_scenario(name))["ratio"]["taps"]
    for tap in (-2, 0, 2):
        ratios, _ = _ratio_at(bay, tap)
        for got, want in zip(ratios, true[str(tap)]["ratio"]):
            assert got == pytest.approx(want, rel=2e-3)    # one snapshot on wide ranges: accuracy and noise


def test_wrong_tap_puts_the_next_taps_turns_on_that_tap_only() -> None:
    healthy, faulty = _bay("three-phase"), _bay("three-phase", "wrong-tap")
    for tap in (0, 1):
        right, _ = _ratio_at(healthy, tap)
        got, _ = _ratio_at(faulty, tap)
        step = 1 + (2.5 / 100) / (1 + tap * 2.5 / 100) if tap == 1 else 1.0   # 27.5 / 26.845 on tap +1
        assert [g / r for g, r in zip(got, right)] == pytest.approx([step] * 3, rel=2e-4)


def test_wrong_vector_group_moves_the_clock() -> None:
    _, healthy = _ratio_at(_bay("three-phase"), 0)
    _, faulty = _ratio_at(_bay("three-phase", "wrong-vector-group"), 0)
    assert healthy == pytest.approx([30.0] * 3, abs=0.1)     # Dyn11: the LV leads by 30 degrees
    assert faulty == pytest.approx([-30.0] * 3, abs=0.1)     # connected as Dyn1: the LV lags by 30 degrees
    _, single = _ratio_at(_bay("default", "wrong-vector-group"), 0)
    assert abs(single[0]) == pytest.approx(180.0, abs=0.1)   # a reversed winding


def test_the_tap_changer_does_not_move_while_live_or_off_its_range() -> None:
    bay = _bay("default")
    bay.source_command("voltage", 100.0)
    bay.source_command("output", True)
    bay.clock.sleep(5.0)
    with pytest.raises(BayConflict, match="live"):
        bay.set_tap(1)
    with pytest.raises(ValueError, match="not a tap"):
        bay.set_tap(3)


def _live_ratio(bay: Bay) -> list[float]:
    channels = bay.analyser_snapshot()
    fed = range(1, (3 if bay.three_phase else 1) + 1)
    return [channels[a - 1].u_rms / channels[b - 1].u_rms for a, b in zip(fed, bay.scenario.analyser.open_winding)]


def test_the_on_load_drive_moves_the_tap_live_after_its_time() -> None:
    bay = _bay("three-phase")
    true = truth(bay.scenario)["ratio"]["taps"]
    bay.set_wiring("hv", "open")
    bay.source_command("voltage", 230.0)
    bay.source_command("output", True)
    bay.clock.sleep(10.0)
    step_time = bay.scenario.bay.tap_change_time
    bay.drive_tap(2)
    with pytest.raises(BayConflict, match="still moving"):
        bay.drive_tap(1)
    bay.clock.sleep(2 * step_time - 0.5)
    assert bay.tap_moving() and bay.tap_position() == 0      # busy: the old tap still in circuit
    bay.clock.sleep(0.5 + 2.0)
    assert not bay.tap_moving() and bay.tap_position() == 2
    assert _live_ratio(bay) == pytest.approx(true["2"]["ratio"], rel=2e-3)


def test_a_stuck_drive_runs_its_time_and_stays_on_its_tap() -> None:
    bay = _bay("three-phase", "tap-changer-stuck")
    bay.set_wiring("hv", "open")
    bay.source_command("voltage", 230.0)
    bay.source_command("output", True)
    bay.clock.sleep(10.0)                     # past the fault's default trigger (1 s energised)
    bay.drive_tap(-1)
    bay.clock.sleep(bay.scenario.bay.tap_change_time)
    assert not bay.tap_moving() and bay.tap_position() == 0


def test_the_stuck_fault_needs_a_unit_with_taps() -> None:
    from harness.common.errors import UsageError
    from harness.sim.scenario import load_scenario as load
    plain = load("three-phase").model_copy(update={"transformer": load("three-phase").transformer.model_copy(
        update={"taps": None})})
    with pytest.raises(UsageError, match="needs a unit with taps"):
        Bay(plain, SteppedClock(), ["tap-changer-stuck"])
