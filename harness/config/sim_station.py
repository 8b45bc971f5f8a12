"""The built-in station of the simulated bay, used when ``harness run`` gets no --station."""

from __future__ import annotations

from harness.common.yamlio import load_text, validate
from harness.config.station import Station

SIM_STATION_FILE = "<built-in simulated bay>"

_TEMPLATE = """\
spec: 1
name: Simulated bay
lab: Harness simulated test bay (no hardware)
simulated: true
instruments:
  source: {{resource: "{source}", profile: generic-ac-source, timeout: 0.5 s}}
  analyser: {{resource: "{analyser}", profile: generic-power-analyser, timeout: 0.5 s}}
  resistance_meter:
    resource: "{resistance_meter}"
    profile: generic-resistance-meter
    timeout: 0.5 s
    channels: {{hv: 1, lv: 2}}
  thermometer:
    resource: "{thermometer}"
    profile: generic-thermometer
    timeout: 0.5 s
    channels: {{ambient: 1, oil: 2, winding: 3}}
  bay_control: {{resource: "{bay_control}", profile: generic-bay-control, timeout: 0.5 s}}
measurement: {{vt_ratio: 1, ct_ratio: 1}}
measurement_chain:      # the simulated analyser's accuracy (sim_configs/default.yaml); no instrument
  channels:             # transformers on the simulated bay, so ratio 1 without errors
    - voltage_transformer: {{ratio: 1, burden: "none: direct connection"}}
      current_transformer: {{ratio: 1, burden: "none: direct connection"}}
    - voltage_transformer: {{ratio: 1}}
      current_transformer: {{ratio: 1}}
    - voltage_transformer: {{ratio: 1}}
      current_transformer: {{ratio: 1}}
  analyser:
    voltage: {{reading: 0.02 %, range: 0.02 %}}
    current: {{reading: 0.02 %, range: 0.02 %}}
    power: {{reading: 0.03 %, range: 0.01 %}}
    phase: 0 rad        # the simulated analyser has no phase error
    voltage_ranges: [15 V, 30 V, 60 V, 150 V, 300 V, 600 V, 1000 V]
    current_ranges: [0.5 A, 1 A, 2 A, 5 A, 10 A, 20 A, 50 A]
  resistance_meter: {{reading: 0.02 %}}
  thermometer: {{accuracy: 0.1 K}}
limits:                 # the bay's hard limits: its source's ratings
  voltage: {max_voltage}
  current: {max_current}
  power: {max_power}
  energised_time: 2 h
  winding_temperature: 110 degC
  slew: {max_slew}
safe_state: {{deenergised_voltage: 5 V, deenergised_current: 0.05 A, confirm_timeout: 5 s}}
readings: {{late_after: 1 s, stale_after: 5 s, temperature_interval: 2 s}}
"""

ROLES = ("source", "analyser", "resistance_meter", "thermometer", "bay_control")
PLACEHOLDER = {role: f"TCPIP0::127.0.0.1::{5025 + i}::SOCKET" for i, role in enumerate(ROLES)}


# The default scenario's source, for checks made before a scenario is loaded.
DEFAULT_RATINGS = {"max_voltage": "1000 V", "max_current": "20 A", "max_power": "20000 W", "max_slew": "100 V/s"}


def sim_station_text(resources: dict[str, str] | None = None, ratings: dict[str, str] | None = None) -> str:
    """The station file for the simulated bay's resources (placeholders before it is served)."""
    return _TEMPLATE.format(**{**PLACEHOLDER, **(resources or {}), **DEFAULT_RATINGS, **(ratings or {})})


def ratings_of(source) -> dict[str, str]:
    """A simulated source's ratings as station limits (power: the source's volt-amperes)."""
    return {"max_voltage": f"{source.max_voltage:g} V", "max_current": f"{source.max_current:g} A",
            "max_power": f"{source.max_voltage * source.max_current:g} W", "max_slew": f"{source.max_slew:g} V/s"}


def sim_station(resources: dict[str, str] | None = None, ratings: dict[str, str] | None = None) -> tuple[Station, str]:
    text = sim_station_text(resources, ratings)
    return validate(Station, load_text(text, SIM_STATION_FILE)), text
