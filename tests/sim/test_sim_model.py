"""The models without sockets: exact stepping, time-scale independence, scenario validation."""

from __future__ import annotations

import io
import math
import threading

import pytest

from harness.common.clock import SteppedClock
from harness.common.errors import InputError
from harness.sim.bay import Bay
from harness.sim.scenario import SIM_CONFIGS, load_scenario
from harness.sim.server import serve_forever
from harness.sim.source import SourceState, step

DEFAULT = load_scenario("default")


def test_source_ramp_and_lag_step_exactly_in_any_increments():
    start = SourceState(setpoint=400.0)
    once = step(start, 6.0, 100.0, 0.2)
    many = start
    for _ in range(600):
        many = step(many, 0.01, 100.0, 0.2)
    assert once.output == pytest.approx(many.output, abs=1e-9)
    # During the ramp: y = r - s tau (1 - exp(-t/tau)) for a lag on a ramp from rest
    # (first-order response to a ramp input, any control textbook).
    mid = step(start, 2.0, 100.0, 0.2)
    assert mid.output == pytest.approx(200.0 - 100.0 * 0.2 * (1 - math.exp(-10.0)), rel=1e-12)


def run_load_test(increment: float) -> tuple[float, float]:
    clock = SteppedClock()
    bay = Bay(DEFAULT, clock)
    bay.set_wiring("hv", "short")
    bay.source_command("output", True)
    bay.source_command("voltage", 264.0)
    while clock.now() < 600.0:
        clock.sleep(min(600.0 - clock.now(), increment))
        bay.advance()
    return bay.winding.temperature, bay.operating_point().i_rms


def test_the_physics_does_not_depend_on_how_often_the_bay_is_asked():
    coarse = run_load_test(37.0)
    fine = run_load_test(0.25)
    assert coarse[0] == pytest.approx(fine[0], abs=0.02)
    assert coarse[1] == pytest.approx(fine[1], rel=1e-4)
    assert coarse[0] > DEFAULT.bay.ambient_temperature + 10.0


def test_the_first_order_winding_rise_matches_the_closed_form():
    clock = SteppedClock()
    bay = Bay(DEFAULT, clock)
    bay.set_wiring("hv", "short")
    bay.source_command("output", True)
    bay.source_command("voltage", 264.0)
    clock.sleep(30.0)
    bay.advance()
    p, theta0 = bay.operating_point().winding_loss, bay.winding.temperature
    clock.sleep(60.0)
    bay.advance()
    th = DEFAULT.transformer.winding_thermal
    final = DEFAULT.bay.ambient_temperature + p * th.time_constant / th.heat_capacity
    expected = final + (theta0 - final) * math.exp(-60.0 / th.time_constant)
    # Small difference only from the loss changing with temperature over the minute.
    assert bay.winding.temperature == pytest.approx(expected, abs=0.05)


def test_unknown_scenario_is_a_clear_error():
    with pytest.raises(InputError, match="no scenario named 'nope'.*default"):
        load_scenario("nope")


def test_scenario_errors_carry_line_numbers(tmp_path):
    text = (SIM_CONFIGS / "default.yaml").read_text()
    bad = tmp_path / "bad.yaml"
    bad.write_text(text.replace("max_slew: 100 V/s", "max_slew: 100 A").replace("seed: 20240611", "seed: 1\ncolour: red"))
    with pytest.raises(InputError) as err:
        load_scenario(bad)
    message = str(err.value)
    slew_line = next(n for n, line in enumerate(bad.read_text().splitlines(), 1) if "max_slew" in line)
    assert f"bad.yaml:{slew_line}:" in message and "voltage rate" in message
    assert "unknown key 'colour'" in message


def test_scenario_spec_version_is_checked(tmp_path):
    bad = tmp_path / "future.yaml"
    bad.write_text((SIM_CONFIGS / "default.yaml").read_text().replace("spec: 1", "spec: 7"))
    with pytest.raises(InputError, match="spec 7 is not supported"):
        load_scenario(bad)


class _Lines(io.StringIO):
    """Output that says when ``count`` lines have been printed to it."""

    def __init__(self, count: int):
        super().__init__()
        self.count = count
        self.complete = threading.Event()

    def write(self, text: str) -> int:
        written = super().write(text)
        if self.getvalue().count("\n") >= self.count:
            self.complete.set()
        return written


def test_serve_forever_prints_the_resources_and_stops():
    out = _Lines(6)
    stop = threading.Event()
    thread = threading.Thread(target=serve_forever, args=(DEFAULT, 100.0, ()), kwargs={"out": out, "stop": stop})
    thread.start()
    printed = out.complete.wait(60)   # real-time guard against a stuck server only
    stop.set()
    thread.join(60)
    assert printed and not thread.is_alive()
    roles = [line.split()[0] for line in out.getvalue().splitlines()]
    assert roles == ["source", "analyser", "resistance_meter", "thermometer", "bay_control", "tap_changer"]
    assert all("::SOCKET" in line for line in out.getvalue().splitlines())
