"""Three-phase instruments: the three-phase source profile (per-phase readback by channel list)
on the fake and on its pyvisa-sim definition; both analyser dialects and the source against the
simulated three-phase bay over loopback sockets."""

from __future__ import annotations

from pathlib import Path

import pytest

from drivers import AcSource, FakeTransport, OverRange, ProtocolError, load_profile, open_instrument
from drivers.profile import PROFILE_DIR
from harness.common.clock import Clock
from harness.common.errors import InputError
from harness.sim.bay import Bay
from harness.sim.scenario import load_scenario
from harness.sim.server import SimServer

RESOURCE = "TCPIP0::sim-source3::5025::SOCKET"


def _fake_source(replies: dict[str, str]) -> AcSource:
    def handler(cmd: str) -> str | None:
        return '0,"No error"' if cmd == "SYSTem:ERRor?" else replies.get(cmd)
    return AcSource(FakeTransport(handler), "source", "three-phase-ac-source")


def test_the_three_phase_profile_reads_each_phase() -> None:
    source = _fake_source({"MEASure:VOLTage:AC? (@1:3)": "230.1,+2.301E+02,229.8",
                           "MEASure:CURRent:AC? (@1:3)": "1.0,0.7,1.1", "MEASure:CURRent:AC?": "1.1"})
    assert source.phases == 3
    assert source.measured_voltages() == (230.1, 230.1, 229.8)
    assert source.measured_currents() == (1.0, 0.7, 1.1)
    assert source.measured_current() == 1.1


def test_a_single_phase_source_has_no_per_phase_readback() -> None:
    source = AcSource(FakeTransport(lambda cmd: '0,"No error"'), "source", "generic")
    assert source.phases == 1
    assert source.measured_voltages() is None and source.measured_currents() is None


@pytest.mark.parametrize("reply, error, message", [
    ("230.1,230.0", ProtocolError, "expected 3 comma-separated values"),
    ("230.1,abc,229.8", ProtocolError, "unreadable"),
    ("230.1,9.9E37,229.8", OverRange, "output voltage of phase 2"),
])
def test_bad_per_phase_replies_are_refused(reply: str, error: type, message: str) -> None:
    source = _fake_source({"MEASure:VOLTage:AC? (@1:3)": reply})
    with pytest.raises(error, match=message):
        source.measured_voltages()


def test_per_phase_readback_needs_a_three_phase_profile(tmp_path: Path) -> None:
    text = (PROFILE_DIR / "three-phase-ac-source.yaml").read_text(encoding="utf-8").replace("phases: 3\n", "")
    path = tmp_path / "lab-source.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match="for a three-phase source"):
        load_profile(path, "ac_source")


def test_sim_three_phase_source_dialogue(sim_rm) -> None:
    rm = sim_rm("three-phase-ac-source")
    with open_instrument("ac_source", RESOURCE, "three-phase-ac-source", "source", rm=rm) as source:
        assert source.identify().model == "ACS-3P300"
        source.set_voltage(242.5)
        assert source.voltage_setpoint() == 242.5
        assert source.measured_voltages() == (242.06, 242.05, 241.91)
        assert source.measured_currents() == (5.835, 4.955, 5.935)
        assert source.measured_current() == max(source.measured_currents())


def test_the_simulated_three_phase_bay_answers_both_analyser_dialects_and_per_phase_readback() -> None:
    bay = Bay(load_scenario("three-phase"), Clock(200.0))
    with SimServer(bay) as server:
        res = server.resources()
        with open_instrument("ac_source", res["source"], "three-phase-ac-source", "source", timeout_s=2.0) as source, \
                open_instrument("power_analyser", res["analyser"], "generic", "analyser", timeout_s=2.0,
                                channels=(1, 2, 3)) as generic, \
                open_instrument("power_analyser", res["analyser"], "compact-power-analyser", "analyser",
                                timeout_s=2.0, channels=(1, 2, 3)) as compact:
            source.set_frequency(50)
            source.set_slew(50)
            source.set_voltage(242.5)          # line-to-neutral: 420 V line-to-line on the LV star
            source.set_output(True)
            bay.clock.sleep(242.5 / 50 + 3)
            volts = source.measured_voltages()
            assert volts is not None and all(v == pytest.approx(242.5, rel=0.01) for v in volts)
            amps = source.measured_currents()
            assert amps is not None and amps[1] < min(amps[0], amps[2])      # the middle limb
            assert source.measured_current() == pytest.approx(max(amps), rel=0.01)
            a, b = generic.snapshot().channels, compact.snapshot().channels
            for readings in (a, b):
                assert len(readings) == 3
                assert all(ch.u_rms == pytest.approx(420.0, rel=0.01) for ch in readings)
                assert sum(ch.p for ch in readings) == pytest.approx(600.0, rel=0.05)
                assert [ch.i_rms for ch in readings] == pytest.approx(list(amps), rel=0.01)
            compact.set_ranges(600, 10)
            assert compact.ranges() == (600.0, 10.0)
            source.set_output(False)
