"""Fixtures for the simulated bay: a bay on loopback sockets and pyvisa-py sessions to it."""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from typing import Iterator

import pytest
import pyvisa

from harness.common.clock import Clock
from harness.sim.bay import Bay
from harness.sim.scenario import Scenario, load_scenario
from harness.sim.server import SimServer

SNAPSHOT = ("MEASure:VOLTage:AC? (@1);:MEASure:VOLTage:MEAN? (@1);:MEASure:CURRent:AC? (@1);"
            ":MEASure:POWer:AC? (@1);:MEASure:FREQuency? (@1)")


@dataclass
class LiveBay:
    bay: Bay
    clock: Clock
    resources: dict[str, str]
    sessions: dict[str, pyvisa.resources.MessageBasedResource]

    def __getitem__(self, role: str) -> pyvisa.resources.MessageBasedResource:
        return self.sessions[role]

    def snapshot(self) -> tuple[float, float, float, float, float]:
        u, um, i, p, f = (float(x) for x in self["analyser"].query(SNAPSHOT).split(";"))
        return u, um, i, p, f

    def settle_at(self, volts: float, bay_seconds: float = 2.0) -> tuple[float, ...]:
        """Set the source, wait for slew + settling, wait one update, read a snapshot."""
        src = self.bay.source
        self["source"].write(f"VOLT {volts:.6g}")
        span = abs(volts - src.output) / src.slew + 6 * src.spec.settling_time_constant
        self.clock.sleep(span + bay_seconds)
        return self.snapshot()


@contextlib.contextmanager
def live_bay(scenario: Scenario | str = "default", time_scale: float = 500.0,
             faults: tuple = ()) -> Iterator[LiveBay]:
    if isinstance(scenario, str):
        scenario = load_scenario(scenario)
    clock = Clock(time_scale)
    bay = Bay(scenario, clock, faults)
    rm = pyvisa.ResourceManager("@py")
    with SimServer(bay) as server:
        resources = server.resources()
        sessions = {role: rm.open_resource(res, read_termination="\n", write_termination="\n", timeout=3000)
                    for role, res in resources.items()}
        try:
            yield LiveBay(bay, clock, resources, sessions)
        finally:
            for session in sessions.values():
                with contextlib.suppress(Exception):
                    session.close()
            rm.close()


@pytest.fixture
def default_bay() -> Iterator[LiveBay]:
    with live_bay() as lb:
        yield lb


@pytest.fixture
def make_bay():
    """``with make_bay(scenario, time_scale, faults) as lb:`` for tests that need their own bay."""
    return live_bay
