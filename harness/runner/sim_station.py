"""The built-in station of the simulated bay, used when ``harness run`` gets no --station."""

from __future__ import annotations

from typing import Any

from harness.common.reading import SQRT3
from harness.common.yamlio import load_text, validate
from harness.config.station import Station

SIM_STATION_FILE = "<built-in simulated bay>"

# Reply timeouts guard against a stuck instrument only. The simulated instruments share the
# host (and the interpreter) with the runner, so a busy host delays their replies: they get a
# real station's default, long enough that only a stuck instrument reaches it.
_TEMPLATE = """\
spec: 1
name: Simulated bay
lab: Harness simulated test bay (no hardware)
simulated: true
instruments:
  source: {{resource: "{source}", profile: {source_profile}, timeout: 2 s, serial: "{serial}-1"}}
  analyser: {{resource: "{analyser}", profile: generic-power-analyser, timeout: 2 s, serial: "{serial}-2"{analyser_channels}}}
  resistance_meter:
    resource: "{resistance_meter}"
    profile: generic-resistance-meter
    timeout: 2 s
    serial: "{serial}-3"
    channels: {resistance_channels}
  thermometer:
    resource: "{thermometer}"
    profile: generic-thermometer
    timeout: 2 s
    serial: "{serial}-4"
    channels: {{ambient: 1, oil: 2, winding: 3}}
  bay_control: {{resource: "{bay_control}", profile: generic-bay-control, timeout: 2 s}}
{tap_changer_line}measurement: {{vt_ratio: {vt:g}, ct_ratio: {ct:g}}}
measurement_chain:      # the simulated analyser's accuracy, from the scenario; its instrument
  channels:             # transformers (if any) are ideal, so ratio errors and displacements are zero
    - voltage_transformer: {{ratio: {vt:g}, burden: "{burden}"}}
      current_transformer: {{ratio: {ct:g}, burden: "{burden}"}}
    - voltage_transformer: {{ratio: {vt:g}}}
      current_transformer: {{ratio: {ct:g}}}
    - voltage_transformer: {{ratio: {vt:g}}}
      current_transformer: {{ratio: {ct:g}}}
  analyser:
    voltage: {{reading: {u_reading:g} %, range: {u_range:g} %}}
    current: {{reading: {i_reading:g} %, range: {i_range:g} %}}
    power: {{reading: {p_reading:g} %, range: {p_range:g} %}}
    phase: 0 rad        # the simulated analyser has no phase error
    voltage_ranges: [{voltage_ranges}]
    current_ranges: [{current_ranges}]
  resistance_meter: {{reading: {rm_accuracy:g} %}}
  thermometer: {{accuracy: {th_accuracy:g} K}}
limits:                 # the bay's hard limits: its source's ratings (line-to-line, line currents)
  voltage: {max_voltage}
  current: {max_current}
  power: {max_power}
  energised_time: 2 h
  winding_temperature: 110 degC
  slew: {max_slew}
safe_state: {{deenergised_voltage: {deenergised_voltage}, deenergised_current: {deenergised_current}, confirm_timeout: 5 s}}
readings: {{late_after: 1 s, stale_after: 5 s, temperature_interval: 2 s}}
"""

ROLES = ("source", "analyser", "resistance_meter", "thermometer", "bay_control", "tap_changer")
PLACEHOLDER = {role: f"TCPIP0::127.0.0.1::{5025 + i}::SOCKET" for i, role in enumerate(ROLES)}


def scenario_fields(scenario: Any) -> dict[str, Any]:
    """What the station states about a simulated bay: its source's ratings as the hard limits,
    its analyser's instrument transformers, ranges and accuracy as the measurement chain."""
    src, an = scenario.source, scenario.analyser
    acc = an.accuracy
    phases = getattr(scenario.transformer, "phases", 1)
    # A three-phase source's ratings are per phase, line-to-neutral: the bay's voltage limit is
    # the line-to-line voltage it can give, its power limit the three phases'.
    line_voltage = src.max_voltage * (SQRT3 if phases == 3 else 1.0)
    channels = ", ".join(f"{w}: {list(c) if isinstance(c, (list, tuple)) else c}"
                         for w, c in scenario.resistance_meter.channels.items())
    return {
        **deenergised_thresholds(scenario),
        "analyser_channels": (f", channels: {{open_winding: {_one_or_list(an.open_winding)}}}" if an.open_winding else ""),
        "source_profile": "three-phase-ac-source" if phases == 3 else "generic-ac-source",
        "resistance_channels": "{" + channels + "}",
        "max_voltage": f"{line_voltage:g} V", "max_current": f"{src.max_current:g} A",
        "max_power": f"{phases * src.max_voltage * src.max_current:g} W", "max_slew": f"{src.max_slew:g} V/s",
        "vt": an.vt_ratio, "ct": an.ct_ratio,
        "burden": "ideal (simulated)" if (an.vt_ratio, an.ct_ratio) != (1, 1) else "none: direct connection",
        "u_reading": acc.voltage.reading, "u_range": acc.voltage.range, "i_reading": acc.current.reading,
        "i_range": acc.current.range, "p_reading": acc.power.reading, "p_range": acc.power.range,
        "voltage_ranges": ", ".join(f"{r:g} V" for r in an.voltage_ranges),
        "current_ranges": ", ".join(f"{r:g} A" for r in an.current_ranges),
        "serial": f"SIM{scenario.seed:04d}",  # what the simulated instruments answer to *IDN?
        "rm_accuracy": scenario.resistance_meter.accuracy, "th_accuracy": scenario.thermometer.accuracy,
    }


# The de-energised thresholds: 5 V and 0.05 A, or, where the analyser's own error at zero input on
# its top range (its range accuracy plus three sigma of its range noise, through the VT/CT) is
# not small against them, 1.5 times that error, so the off state is confirmed by a reading
# the instrument can make; never 50 V (extra-low voltage, IEC 61140) or more.
DEENERGISED_FLOOR = (5.0, 0.05)
ZERO_ERROR_MARGIN = 1.5
ELV_AC_V = 50.0


def deenergised_thresholds(scenario: Any) -> dict[str, str]:
    an = scenario.analyser
    out = {}
    for q, top, ratio, floor, unit in (("voltage", an.voltage_ranges[-1], an.vt_ratio, DEENERGISED_FLOOR[0], "V"),
                                       ("current", an.current_ranges[-1], an.ct_ratio, DEENERGISED_FLOOR[1], "A")):
        zero_error = (getattr(an.accuracy, q).range + 3.0 * getattr(an.noise, q).range) / 100.0 * top * ratio
        value = max(floor, ZERO_ERROR_MARGIN * zero_error)
        if q == "voltage":
            value = min(value, 0.9 * ELV_AC_V)
        out[f"deenergised_{q}"] = f"{value:.3g} {unit}"
    return out


def _one_or_list(channels: tuple[int, ...]) -> int | list[int]:
    return channels[0] if len(channels) == 1 else list(channels)


def _tap_changer_line(scenario: Any, resource: str) -> str:
    """A unit with taps: the simulated bay's drive, which a nameplate's on-load changer uses
    (an off-circuit one keeps its prompts)."""
    if getattr(scenario.transformer, "taps", None) is None:
        return ""
    return (f'  tap_changer: {{resource: "{resource}", profile: generic-tap-changer, timeout: 2 s, '
            f'move_timeout: {2 * scenario.bay.tap_change_time:g} s}}\n')


def sim_station_text(resources: dict[str, str] | None = None, scenario: Any = None) -> str:
    """The station file for a simulated bay (placeholder resources before it is served)."""
    if scenario is None:
        from harness.sim.scenario import load_scenario
        scenario = load_scenario("default")
    fields = {**PLACEHOLDER, **(resources or {}), **scenario_fields(scenario)}
    return _TEMPLATE.format(**fields, tap_changer_line=_tap_changer_line(scenario, fields["tap_changer"]))


def sim_station(resources: dict[str, str] | None = None, scenario: Any = None) -> tuple[Station, str]:
    text = sim_station_text(resources, scenario)
    return validate(Station, load_text(text, SIM_STATION_FILE)), text
