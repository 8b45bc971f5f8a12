"""``harness sim serve``: the simulated bay in its own process, with a station file for it."""

from __future__ import annotations

import signal
import sys
import threading

from harness.common.clock import Clock
from harness.runner.sim_station import sim_station_text


def serve(scenario_name: str, time_scale: float, faults: tuple[str, ...]) -> int:
    from harness.sim.bay import Bay
    from harness.sim.scenario import load_scenario
    from harness.sim.server import SimServer

    scenario = load_scenario(scenario_name)
    stop = threading.Event()
    signal.signal(signal.SIGTERM, lambda *_: stop.set())
    with SimServer(Bay(scenario, Clock(time_scale), faults=faults)) as server:
        print("# simulated bay: resources", file=sys.stderr)
        for role, resource in server.resources().items():
            print(f"#   {role:17} {resource}", file=sys.stderr)
        print("# a station file for them follows on stdout; save it and pass it with --station", file=sys.stderr)
        print("# (runs against it must use the same --time-scale as this server)", file=sys.stderr)
        print(sim_station_text(server.resources(), scenario), flush=True)
        try:
            while not stop.wait(0.5):
                pass
        except KeyboardInterrupt:
            pass
    return 0
