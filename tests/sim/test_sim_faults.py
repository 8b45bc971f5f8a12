"""Every fault of the simulated bay is observable over the sockets, as the runner would see it."""

from __future__ import annotations

import pytest
import pyvisa

from harness.sim.faults import FAULTS, FaultSpec, FaultTrigger, fault_spec
from harness.sim.scenario import load_scenario

DEFAULT = load_scenario("default")
RATED_LV = DEFAULT.transformer.lv.rated_voltage


def energise(lb, volts: float) -> tuple[float, ...]:
    lb["source"].write("VOLT 0;:OUTP ON")
    return lb.settle_at(volts)


def switch_on_briefly(lb, volts: float = 100.0) -> float:
    """Output on for about 1.5 bay seconds (before the default link-fault triggers): a reading."""
    assert lb["source"].query(f"VOLT {volts};:OUTP ON;*OPC?") == "1"
    lb.clock.sleep(1.5)
    return lb.snapshot()[0]


def test_the_fault_names_are_the_agreed_ones():
    assert set(FAULTS) == {"shorted-turn", "missing-link", "analyser-silent", "overrange",
                           "stuck-output", "garbage-reply", "dropped-connection", "open-link-phase",
                           "dead-source-phase", "wrong-tap", "wrong-vector-group", "tap-changer-stuck"}
    with pytest.raises(ValueError, match="unknown fault"):
        fault_spec("burnt-fuse")


def test_shorted_turn_draws_many_times_the_normal_no_load_current(make_bay):
    with make_bay() as healthy:
        normal = energise(healthy, 0.5 * RATED_LV)[2]
        at_110 = healthy.settle_at(1.1 * RATED_LV)[2]
    with make_bay(faults=("shorted-turn",)) as faulty:
        shorted = energise(faulty, 0.5 * RATED_LV)[2]
    assert 5.0 < shorted / normal < 20.0
    assert shorted > 2.0 * at_110   # the runner's no-load limit sits a little above at_110


def test_missing_link_leaves_the_shorted_winding_open(make_bay):
    with make_bay(faults=("missing-link",)) as lb:
        assert lb["bay_control"].query("WIR:FED HV;OTH SHOR;:WIR:OTH?") == "SHOR"   # the bay believes it is fitted
        _, _, i, _, _ = energise(lb, 264.0)                      # ~rated current if the link were there
    assert i < 0.01 * DEFAULT.transformer.rated_current("hv")


def test_analyser_goes_silent_after_some_energised_time(make_bay):
    with make_bay(faults=("analyser-silent",)) as lb:
        lb["analyser"].timeout = 300
        assert switch_on_briefly(lb) > 1.0   # still answering
        lb.clock.sleep(5.0)
        with pytest.raises(pyvisa.errors.VisaIOError):
            lb["analyser"].query("*IDN?")


def test_overrange_reads_the_overload_value_while_energised(make_bay):
    with make_bay(faults=("overrange",)) as lb:
        energise(lb, 100.0)
        lb.clock.sleep(2.0)
        u, _, i, p, _ = lb.snapshot()
        assert (i, p) == (9.9e37, 9.9e37) and u < 9.9e37
        lb["source"].write("VOLT 0;:OUTP OFF")
        lb.clock.sleep(1.0)
        assert lb.snapshot()[2] < 1.0


def test_stuck_output_ignores_zero_and_off(make_bay):
    with make_bay(faults=("stuck-output",)) as lb:
        energise(lb, 200.0)
        lb["source"].write("VOLT 0;:OUTP OFF")
        lb.clock.sleep(5.0)
        assert lb["source"].query("OUTP?") == "1"
        assert float(lb["source"].query("MEAS:VOLT?")) > 190.0
        assert lb.snapshot()[0] > 190.0


def test_garbage_reply_garbles_one_reply(make_bay):
    with make_bay(faults=("garbage-reply",)) as lb:
        assert switch_on_briefly(lb) > 1.0
        lb.clock.sleep(3.0)
        garbled = lb["analyser"].query("MEAS:VOLT?")
        with pytest.raises(ValueError):
            float(garbled)
        assert float(lb["analyser"].query("MEAS:VOLT?")) > 90.0


def test_dropped_connection_closes_the_socket_and_accepts_a_new_one(make_bay):
    with make_bay(faults=("dropped-connection",)) as lb:
        assert switch_on_briefly(lb) > 1.0
        lb.clock.sleep(3.0)
        lb["analyser"].timeout = 300
        with pytest.raises((pyvisa.errors.VisaIOError, OSError)):
            lb["analyser"].query("MEAS:VOLT?")
        rm = pyvisa.ResourceManager("@py")
        again = rm.open_resource(lb.resources["analyser"], read_termination="\n",
                                 write_termination="\n", timeout=2000)
        assert float(again.query("MEAS:VOLT?")) > 90.0
        again.close()
        rm.close()


def test_a_scenario_fault_with_a_voltage_trigger(make_bay):
    spec = FaultSpec(name="overrange", trigger=FaultTrigger(voltage_above=200.0))
    with make_bay(DEFAULT.with_faults((spec,))) as lb:
        assert energise(lb, 150.0)[2] < 9.9e37
        assert lb.settle_at(250.0)[2] == 9.9e37


def test_a_trigger_takes_one_condition_only():
    with pytest.raises(ValueError, match="at most one"):
        FaultTrigger(after_energised=1.0, voltage_above=5.0)
