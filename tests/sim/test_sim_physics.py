"""Physics of the simulated bay, seen over sockets through pyvisa-py as a test bay would see it."""

from __future__ import annotations

import math
import time

import pytest
import pyvisa

from harness.common.clock import SteppedClock
from harness.sim.bay import Bay
from harness.sim.scenario import load_scenario
from harness.sim.server import SimServer
from harness.sim.truth import series_branch

DEFAULT = load_scenario("default")
RATED_LV = DEFAULT.transformer.lv.rated_voltage
RATED_HV_CURRENT = DEFAULT.transformer.rated_current("hv")


def energise(lb, volts: float = 0.0) -> None:
    lb["source"].write("VOLT 0;:OUTP ON")
    if volts:
        lb.settle_at(volts)


def test_no_load_current_rises_steeply_above_rated_voltage(default_bay):
    # The knee of the magnetising characteristic lies at about 1.1 pu flux (common practice, no
    # source): the current's increase per 10 % of voltage must grow sharply past rated.
    energise(default_bay)
    currents = [default_bay.settle_at(RATED_LV * pu)[2] for pu in (0.9, 1.0, 1.1, 1.2)]
    below, above, further = (currents[1] - currents[0]), (currents[2] - currents[1]), (currents[3] - currents[2])
    assert above > 2.0 * below
    assert further > 2.0 * above
    assert 1.3 < currents[2] / currents[1] < 3.0


def test_no_load_power_factor_is_low_and_loss_near_the_scenario_value(default_bay):
    energise(default_bay)
    u, um, i, p, f = default_bay.settle_at(RATED_LV)
    assert f == DEFAULT.transformer.frequency
    assert p / (u * i) < 0.3  # no-load power factor of a distribution unit (common practice, no source)
    assert p == pytest.approx(DEFAULT.transformer.core.loss, rel=0.03)


def test_load_current_is_proportional_to_voltage_and_follows_the_series_impedance(default_bay):
    default_bay["bay_control"].write("WIR:FED HV;OTH SHOR")
    assert default_bay["bay_control"].query("WIR:FED?;OTH?") == "HV;SHOR"
    default_bay["analyser"].write("SENS:VOLT:RANG 300;:SENS:CURR:RANG 10")
    energise(default_bay)
    ratios = []
    for volts in (60.0, 120.0, 180.0, 240.0):
        u, _, i, _, _ = default_bay.settle_at(volts)
        ratios.append(i / u)
    assert max(ratios) / min(ratios) < 1.005
    # Z = U/I of the series branch (textbook short-circuit test relation, see reference notes);
    # at the winding's present temperature, plus the link referred to HV.
    tf = default_bay.bay.transformer
    theta = default_bay.bay.winding.temperature
    r = sum(tf.r_dc(s, theta) + tf.r_additional(s, theta) for s in ("hv",)) \
        + (tf.r_dc("lv", theta) + tf.r_additional("lv", theta) + DEFAULT.transformer.link_resistance) * tf.ratio ** 2
    _, x = series_branch(DEFAULT, "hv")
    assert 1.0 / ratios[-1] == pytest.approx(math.hypot(r, x), rel=0.005)


def test_winding_warms_during_a_long_load_test_and_resistance_follows(make_bay):
    with make_bay("default") as lb:
        hv = lb["resistance_meter"]
        r_cold = float(hv.query("MEAS:FRES? (@1)"))
        t_cold = float(lb["thermometer"].query("MEAS:TEMP? (@3)"))
        lb["bay_control"].write("WIR:FED HV;OTH SHOR")   # confirmed before the source is switched on
        z_hv = DEFAULT.transformer.hv.rated_voltage * 0.04 / RATED_HV_CURRENT
        energise(lb, RATED_HV_CURRENT * z_hv)
        start = float(lb["thermometer"].query("MEAS:TEMP? (@3)"))
        _, _, i0, p0, _ = lb.snapshot()
        lb.clock.sleep(300.0)   # five bay minutes at about rated current
        end = float(lb["thermometer"].query("MEAS:TEMP? (@3)"))
        _, _, i1, p1, _ = lb.snapshot()
        per_minute = (end - start) / 5.0
        assert 1.0 < per_minute < 6.0
        assert p1 / i1 ** 2 > p0 / i0 ** 2  # the I2R part grows faster than the stray part falls
        lb["source"].write("OUTP OFF")   # confirmed on the source's socket before the meter is asked
        lb.clock.sleep(1.0)
        r_hot = float(hv.query("MEAS:FRES? (@1)"))
        t_hot = float(lb["thermometer"].query("MEAS:TEMP? (@3)"))
    # R2 = R1 (235 + t2)/(235 + t1) for copper: IEC 60076-1 [S: reference notes]. Thermometer
    # offset cancels in the difference; its noise (0.02 K) and the meter's (0.005 %) are small.
    assert r_hot / r_cold == pytest.approx((235 + t_hot) / (235 + t_cold), rel=5e-4)


def test_mean_and_rms_differ_under_distortion(make_bay):
    scenario = load_scenario("aluminium-distorted")
    with make_bay(scenario) as lb:
        energise(lb)
        u, um, _, _, _ = lb.settle_at(scenario.transformer.lv.rated_voltage)
    a3, a5 = (h.amplitude / 100 for h in scenario.source.harmonics)
    # u = cos t + a3 cos 3t - a5 cos 5t has its zero crossings at +-pi/2, so the mean of |u| is
    # (2/pi)(1 - a3/3 - a5/5) and the rms sqrt((1 + a3^2 + a5^2)/2): elementary integrals,
    # derived here (no source).
    expected = (1 - a3 / 3 - a5 / 5) / math.sqrt(1 + a3 ** 2 + a5 ** 2)
    assert um / u == pytest.approx(expected, abs=0.002)
    assert 0.02 < 1 - um / u < 0.05


def test_default_scenario_is_only_slightly_distorted(default_bay):
    energise(default_bay)
    u, um, _, _, _ = default_bay.settle_at(RATED_LV)
    assert 0.001 < abs(um / u - 1) < 0.01


def test_source_slews_and_reports_its_own_readback(make_bay):
    with make_bay("default") as lb:
        energise(lb)
        lb["source"].write("VOLT 400")
        lb.clock.sleep(1.0)
        early = float(lb["source"].query("MEAS:VOLT?"))
        lb.clock.sleep(4.0)
        late = float(lb["source"].query("MEAS:VOLT?"))
        setpoint = float(lb["source"].query("VOLT?"))
    assert setpoint == 400.0
    assert early < 0.5 * 400.0      # 100 V/s maximum slew: far from the setpoint after 1 s
    assert late == pytest.approx(400.0, rel=0.01)


def test_current_protection_trips_the_output(default_bay):
    src = default_bay["source"]
    src.write("CURR:PROT 1.0;:CURR:PROT:STAT ON")
    energise(default_bay, RATED_LV)
    assert src.query("CURR:PROT:TRIP?") == "1"
    assert src.query("OUTP?") == "0"
    assert default_bay.snapshot()[0] < 1.0


def test_watchdog_switches_the_output_off_without_commands(default_bay):
    src = default_bay["source"]
    energise(default_bay, 100.0)
    src.write("SYST:WATC:TIM 2;:SYST:WATC ON")
    default_bay.clock.sleep(6.0)
    assert default_bay.snapshot()[0] < 1.0
    assert src.query("OUTP?") == "0"


def test_setpoints_above_the_source_maximum_are_refused(default_bay):
    src = default_bay["source"]
    src.write(f"VOLT {DEFAULT.source.max_voltage * 1.01}")
    assert src.query("SYST:ERR?").startswith("-222,")
    src.write(f"CURR:PROT {DEFAULT.source.max_current * 2}")
    assert src.query("SYST:ERR?").startswith("-222,")
    assert float(src.query("VOLT?")) == 0.0


def test_rewiring_and_resistance_are_refused_while_live(default_bay):
    energise(default_bay, 50.0)
    default_bay["bay_control"].write("WIR:OTH SHOR")
    assert default_bay["bay_control"].query("SYST:ERR?").startswith("-221,")
    assert default_bay["bay_control"].query("WIR:OTH?") == "OPEN"
    assert float(default_bay["resistance_meter"].query("MEAS:FRES? (@2)")) == 9.91e37


def test_analyser_ranges_overload_and_update_interval(default_bay):
    an = default_bay["analyser"]
    an.write("SENS:VOLT:RANG 400;:SENS:CURR:RANG 0.5;:SENS:AVER:TIME 60")
    assert float(an.query("SENS:VOLT:RANG?")) == 600.0
    assert float(an.query("SENS:CURR:RANG?")) == 0.5
    energise(default_bay, RATED_LV)
    clock = default_bay.clock
    clock.sleep(60.0 - clock.now() % 60.0 + 1.0)    # one bay second into an update window
    u, _, i, p, _ = default_bay.snapshot()
    assert i == 9.9e37 and u < 600.0      # 1.84 A is above 1.2 x the 0.5 A range
    an.write("SENS:CURR:RANG 5")
    first = default_bay.snapshot()
    clock.sleep(58.0)                     # still inside the same 60 s window: no new update
    assert default_bay.snapshot() == first
    clock.sleep(2.0)                      # past the next update instant
    fresh = default_bay.snapshot()
    assert fresh != first and fresh[2] == pytest.approx(1.84, rel=0.03)


def test_channel_lists_give_comma_lists(default_bay):
    reply = default_bay["analyser"].query("MEAS:VOLT? (@1,2,3);:MEAS:CURR? (@1:3)")
    volts, amps = reply.split(";")
    assert len(volts.split(",")) == 3 and len(amps.split(",")) == 3
    temps = default_bay["thermometer"].query("MEAS:TEMP? (@1,2,3)").split(",")
    assert all(abs(float(t) - DEFAULT.bay.ambient_temperature) < 0.5 for t in temps)


def test_many_connections_in_sequence(default_bay):
    import pyvisa
    rm = pyvisa.ResourceManager("@py")
    for _ in range(5):
        inst = rm.open_resource(default_bay.resources["thermometer"], read_termination="\n",
                                write_termination="\n", timeout=2000)
        assert inst.query("*IDN?").startswith("Harness Sim,")
        inst.close()
    rm.close()


def test_a_reply_delay_holds_every_answer_back_and_nothing_else() -> None:
    """The server can stand for an instrument's own answering time (the overhead benchmark's
    second series): a query is answered no sooner than the delay (a lower bound only: a sleep
    never ends early, so no host timing can fail this); a write, which has no answer, still acts."""
    with pytest.raises(ValueError, match="between 0 and 1 s"):
        SimServer(Bay(load_scenario("default"), SteppedClock()), reply_delay=-0.1)
    rm = pyvisa.ResourceManager("@py")
    with SimServer(Bay(load_scenario("default"), SteppedClock()), reply_delay=0.05) as server:
        res = rm.open_resource(server.resources()["source"], read_termination="\n", write_termination="\n",
                               timeout=3000)
        try:
            began = time.perf_counter()
            answer = res.query("*IDN?")
            assert time.perf_counter() - began >= 0.05 and answer
            res.write("VOLT 10")
            assert float(res.query("VOLT?")) == 10.0  # the write took effect, the query came after it
        finally:
            res.close()
            rm.close()
