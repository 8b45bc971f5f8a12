"""A lab's station served by the simulated bay: ``harness run SEQUENCE --station FILE --sim SCENARIO``.

The simulated bay takes what the station file says about the bay: its hard limits become the
source's ratings (line-to-neutral on a three-phase unit), its VT/CT ratios, analyser ranges and
accuracies the simulated analyser's, its resistance-meter and thermometer channels the simulated
meters'. The run then uses the station file itself with only the instruments' resource strings
pointed at the simulated bay's sockets, ``simulated: true``, and a bay control that lets the
prompts rewire the simulated unit. Profiles the simulated instruments do not speak (a lab's own
command set) are replaced by the generic ones they do, and the served file's header (stored
with the run) says so; the lab's profiles are still loaded and checked against their
instruments' kind, as ``check --station`` does.
"""

from __future__ import annotations

from typing import Any

import yaml

from harness.common.reading import SQRT3
from harness.common.yamlio import LoadedYaml, load_text, validate
from harness.config.station import Station
from harness.sim.scenario import Scenario

SERVED_FILE = "<station served by the simulated bay>"
SPOKEN = {"source": ("generic-ac-source", "three-phase-ac-source"), "analyser": ("generic-power-analyser",),
          "resistance_meter": ("generic-resistance-meter",), "thermometer": ("generic-thermometer",),
          "tap_changer": ("generic-tap-changer",)}


def fit_to_station(scenario: Scenario, station: Station) -> Scenario:
    """The scenario with the bay the station describes (its unit unchanged)."""
    data = scenario.model_dump()
    phases = scenario.transformer.phases
    limits = station.limits
    data["source"].update(max_voltage=limits.voltage / (SQRT3 if phases == 3 else 1.0),
                          max_current=limits.current, max_slew=limits.slew)
    analyser = data["analyser"]
    analyser.update(vt_ratio=station.measurement.vt_ratio, ct_ratio=station.measurement.ct_ratio)
    chain = station.measurement_chain
    if chain is not None:
        a = chain.analyser
        if a.voltage_ranges:
            analyser["voltage_ranges"] = tuple(a.voltage_ranges)
        if a.current_ranges:
            analyser["current_ranges"] = tuple(a.current_ranges)
        analyser["accuracy"] = {q: getattr(a, q).model_dump() for q in ("voltage", "current", "power")}
        if chain.resistance_meter is not None:
            data["resistance_meter"]["accuracy"] = chain.resistance_meter.reading
        if chain.thermometer is not None:
            data["thermometer"]["accuracy"] = chain.thermometer.accuracy
    instruments = station.instruments
    if instruments.resistance_meter is not None and instruments.resistance_meter.channels:
        data["resistance_meter"]["channels"] = {k: tuple(v) if isinstance(v, list) else v
                                                for k, v in instruments.resistance_meter.channels.items()}
    if instruments.thermometer is not None and instruments.thermometer.channels:
        data["thermometer"]["channels"] = dict(instruments.thermometer.channels)
    data["faults"] = [f.model_dump() for f in scenario.faults]
    return Scenario.model_validate(data)


def served_station(loaded: LoadedYaml, resources: dict[str, str], phases: int) -> tuple[Station, str]:
    """The station file pointed at the simulated bay's sockets: (station, its text)."""
    data: dict[str, Any] = dict(loaded.data)
    instruments = {role: dict(spec) for role, spec in data["instruments"].items()}
    notes = []
    for role, spec in instruments.items():
        spoken = SPOKEN.get(role)
        if spoken is None:
            continue
        spec["resource"] = resources[role]
        wanted = spoken[-1] if role == "source" and phases == 3 else spoken[0]
        if spec.get("profile") not in spoken or (role == "source" and spec.get("profile") != wanted):
            notes.append(f"{role}: profile '{spec.get('profile')}' replaced by '{wanted}', which the simulated "
                         f"{role.replace('_', ' ')} speaks")
            spec["profile"] = wanted
    instruments["bay_control"] = {"resource": resources["bay_control"], "profile": "generic-bay-control",
                                  "timeout": "2 s"}
    data.update(instruments=instruments, simulated=True, name=f"{data.get('name')} (rehearsal on the simulated bay)")
    header = [f"# {loaded.file} served by the simulated bay: resource strings point at its sockets."]
    header += [f"# {note}" for note in notes]
    text = "\n".join(header) + "\n" + yaml.safe_dump(data, sort_keys=False, allow_unicode=True)
    return validate(Station, load_text(text, SERVED_FILE)), text
