"""The simulated bay with a three-phase unit: the source's per-phase readback, its protection on
the largest line current, the faults that act on one phase, and the resistance meter's pairs.

The bay is driven through its own methods (no sockets); its clock runs far above real time and
every wait is in bay seconds, so no result depends on the host's speed.
"""

from __future__ import annotations

import math

import pytest

from harness.common.clock import Clock
from harness.common.errors import UsageError
from harness.sim.bay import Bay
from harness.sim.devices import resistance_meter_device, source_device
from harness.sim.faults import FaultSpec
from harness.sim.scenario import load_scenario

THREE_PHASE = load_scenario("three-phase")
SETPOINT = 242.5   # line-to-neutral: 420 V line-to-line on the LV star


def _energised(*faults: str | FaultSpec, volts: float = SETPOINT) -> Bay:
    bay = Bay(THREE_PHASE, Clock(2000.0), faults)
    bay.source_command("voltage", volts)
    bay.source_command("output", True)
    bay.clock.sleep(volts / bay.source.slew + 3.0)
    return bay


def test_the_source_reads_back_each_phase_and_the_largest_as_one_value():
    bay = _energised()
    volts, amps = bay.source_phase_readback()
    assert volts == pytest.approx((SETPOINT,) * 3, rel=0.01)
    assert amps[1] < 0.9 * min(amps[0], amps[2])            # the middle limb
    u, i = bay.source_readback()
    assert u == pytest.approx(max(volts), rel=0.005) and i == pytest.approx(max(amps), rel=0.005)
    device = source_device(bay)
    per_phase = [float(x) for x in device.handle("MEAS:CURR:AC? (@1:3)").split(",")]
    assert per_phase == pytest.approx(list(amps), rel=0.01)
    assert float(device.handle("MEAS:CURR:AC? (@2)")) == pytest.approx(amps[1], rel=0.01)
    assert device.handle("MEAS:CURR:AC? (@4)") is None
    assert device.handle("SYST:ERR?").startswith("-222")


def test_the_current_protection_acts_on_the_largest_line_current():
    healthy = _energised()
    amps = healthy.source_phase_readback()[1]
    bay = Bay(THREE_PHASE, Clock(2000.0))
    bay.configure_source(protection_level=0.5 * (amps[1] + max(amps)))   # above the middle, below the outer
    bay.source_command("voltage", SETPOINT)
    bay.source_command("output", True)
    bay.clock.sleep(SETPOINT / bay.source.slew + 3.0)
    bay.advance()
    assert bay.source.tripped and not bay.source.output_on


def test_dead_source_phase_gives_nothing_on_that_phase():
    bay = _energised(FaultSpec(name="dead-source-phase", phase=2))
    volts = bay.source_phase_readback()[0]
    assert volts[1] < 0.05 * SETPOINT                       # only the drop in its output impedance
    assert min(volts[0], volts[2]) == pytest.approx(SETPOINT, rel=0.02)


def test_shorted_turn_raises_the_current_of_its_limb():
    healthy = _energised().source_phase_readback()[1]
    faulty = _energised("shorted-turn", volts=0.3 * SETPOINT)
    low = [a * 0.3 for a in healthy]   # the healthy current at 30 % voltage is below this (knee)
    amps = faulty.source_phase_readback()[1]
    assert amps[0] > 3 * low[0] and amps[0] == max(amps)


def test_open_link_phase_gives_the_one_two_one_currents_of_a_line_to_line_short():
    # With one leg of the link missing only two LV terminals are joined: a line-to-line load on
    # the star side of a Dy unit draws HV line currents in the ratio 1 : 2 : 1 (common knowledge
    # of the delta-star transformer under unbalanced load).
    bay = Bay(THREE_PHASE, Clock(2000.0), [FaultSpec(name="open-link-phase", phase=3)])
    bay.set_wiring(fed="hv", other="short")
    bay.source_command("voltage", 50.0)
    bay.source_command("output", True)
    bay.clock.sleep(50.0 / bay.source.slew + 3.0)
    amps = sorted(bay.source_phase_readback()[1])
    assert amps[0] == pytest.approx(amps[1], rel=0.01)
    assert amps[2] == pytest.approx(2 * amps[0], rel=0.02)


def test_stuck_output_keeps_a_three_phase_bay_live():
    bay = _energised("stuck-output")
    bay.source_command("voltage", 0.0)
    bay.source_command("output", False)
    bay.clock.sleep(2.0)
    assert bay.is_live() and min(bay.source_phase_readback()[0]) > 0.9 * SETPOINT


@pytest.mark.parametrize("fault", ["open-link-phase", "dead-source-phase"])
def test_three_phase_faults_are_refused_on_a_single_phase_unit(fault):
    with pytest.raises(UsageError, match="needs a three-phase unit"):
        Bay(load_scenario("default"), Clock(1000.0), [fault])


def test_the_resistance_meter_reads_line_to_line_pairs():
    bay = Bay(THREE_PHASE, Clock(1000.0))
    meter = resistance_meter_device(bay)
    values = [float(x) for x in meter.handle("MEAS:FRES? (@1:6)").split(",")]
    spec = THREE_PHASE.transformer
    # Between two terminals (circuit theory): delta 2/3 R_ph, star 2 R_ph; the meter's 0.02 %
    # accuracy, the phases' spread of a few tenths of a per cent.
    assert values[:3] == pytest.approx([2 / 3 * spec.hv.resistance] * 3, rel=5e-3)
    assert values[3:] == pytest.approx([2 * spec.lv.resistance] * 3, rel=5e-3)
    bay.source_command("voltage", 10.0)
    bay.source_command("output", True)
    assert math.isnan(float(meter.handle("MEAS:FRES? (@4)"))) or float(meter.handle("MEAS:FRES? (@4)")) > 1e37


def test_the_two_wattmeter_analyser_reads_one_element_negative_at_no_load():
    # No-load power factor of about 0.15: below 0.5 one element of the two-wattmeter connection
    # reads negative and the two sum to the total (common knowledge of the two-wattmeter method).
    scenario = THREE_PHASE.model_copy(update={"analyser": THREE_PHASE.analyser.model_copy(
        update={"connection": "two-wattmeter"})})
    bay = Bay(scenario, Clock(2000.0))
    bay.source_command("voltage", SETPOINT)
    bay.source_command("output", True)
    bay.clock.sleep(SETPOINT / bay.source.slew + 3.0)
    channels = bay.analyser_snapshot()
    total = bay.operating_point().power
    assert min(channels[0].p, channels[1].p) < 0 < max(channels[0].p, channels[1].p)
    assert channels[0].p + channels[1].p == pytest.approx(total, rel=0.02)
    assert abs(channels[2].p) < 0.01 * total          # offset and noise only
    assert all(ch.u_rms == pytest.approx(420.0, rel=0.01) for ch in channels[:3])
