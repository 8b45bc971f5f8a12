"""Checks of a station that need more than its own fields, before anything is energised.

The station model checks each value on its own; this checks what must hold between them and
against the outside: every command profile exists and is for its instrument's kind, every
resource string is one pyvisa can parse, the de-energised thresholds are small enough that
"de-energisation confirmed" means something, and the source is read back often enough to feed
its own watchdog. Each problem is reported at its place in the station file.

Profiles are loaded by the caller's loader (the drivers' ``load_profile``), so this layer does
not import the drivers.
"""

from __future__ import annotations

import datetime as dt
from typing import Any, Callable

from harness.common.errors import InputError, InputErrors
from harness.common.yamlio import LoadedYaml
from harness.config.station import Instrument, Station

ProfileLoader = Callable[[str, str], Any]
"""``(name_or_path, kind) -> profile``; raises :class:`InputError` when it cannot."""

ROLE_KINDS = {"source": "ac_source", "analyser": "power_analyser", "resistance_meter": "resistance_meter",
              "thermometer": "thermometer", "bay_control": "bay_control", "tap_changer": "tap_changer"}
# Roles that neither measure nor supply: no calibration to state or check.
UNCALIBRATED = ("bay_control", "tap_changer")

# Extra-low voltage: not exceeding 50 V a.c. (IEC 61140's ELV band, as IEC 61347-2-2 note 1 cites
# it; the IEC term in IEC 62257-7-1, 3.55). Voltage band I of IEC 60449 (withdrawn 2016) is the
# same band (IEC 60519-1:2020, 4.2 note). A bay at or above it is live; the threshold sits below.
EXTRA_LOW_VOLTAGE_AC_V = 50.0
# The thresholds must also be a small part of the bay's hard limits, or "below the threshold"
# would include a live bay (our own choice of fraction: common practice, no source).
DEENERGISED_FRACTION = 0.05
# One missed or late read-back must not let the source's watchdog drop the output mid-step.
READBACKS_PER_WATCHDOG = 2
WINDINGS = ("hv", "lv")


def check_station(station: Station, loaded: LoadedYaml, load_profile: ProfileLoader) -> None:
    """Raise :class:`InputErrors` with every problem found, each located in ``loaded``."""
    errors: list[InputError] = []
    for role, kind in ROLE_KINDS.items():
        spec: Instrument | None = getattr(station.instruments, role)
        if spec is None:
            continue
        where = ("instruments", role)
        for key, problem in (("profile", _profile_problem(spec.profile, kind, load_profile)),
                             ("resource", resource_problem(spec.resource)),
                             ("channels", _channel_problem(role, spec.channels))):
            if problem:
                errors.append(loaded.error(where + (key,), f"instruments.{role}.{key}: {problem}"))
    errors += [loaded.error(path, message) for path, message in _safe_state_problems(station)]
    if errors:
        raise InputErrors(errors)


def _profile_problem(name: str, kind: str, load_profile: ProfileLoader) -> str | None:
    try:
        load_profile(name, kind)
    except InputError as exc:
        if exc.line:  # a problem inside the profile file: say where, there
            return f"profile '{name}' is not valid for kind '{kind}': {exc}"
        return exc.message
    return None


def resource_problem(resource: str) -> str | None:
    """Why ``resource`` is not a VISA resource string pyvisa can open, or None."""
    from pyvisa import rname  # pyvisa's own parser: exactly the rules the link is opened with

    example = "write e.g. TCPIP0::10.0.0.5::5025::SOCKET or GPIB0::12::INSTR"
    try:
        parsed = rname.parse_resource_name(resource)
    except rname.InvalidResourceName as exc:
        reason = str(exc).rsplit(": ", 1)[-1]
        return f"'{resource}' is not a VISA resource string ({reason}); {example}"
    port = getattr(parsed, "port", None)
    if port is not None and not (str(port).isdigit() and 1 <= int(port) <= 65535):
        return f"'{resource}': port {port} is not a TCP port (1 to 65535); {example}"
    return None


def _channel_problem(role: str, channels: dict[str, int | list[int]]) -> str | None:
    numbers = [n for given in channels.values() for n in ([given] if isinstance(given, int) else given)]
    if len(set(numbers)) != len(numbers):
        return "two names (or pairs) share one channel number"
    if any(isinstance(given, list) and len(given) != 3 for given in channels.values()):
        return "a list of channels is for a three-phase winding: three, the line-to-line pairs 1-2, 2-3, 3-1"
    if role == "resistance_meter":
        unknown = sorted(set(channels) - set(WINDINGS))
        if unknown:
            return f"{', '.join(map(repr, unknown))}: a resistance meter's channels are named by winding (hv, lv)"
    return None


def _safe_state_problems(station: Station) -> list[tuple[tuple[str, ...], str]]:
    safe, hard, readings = station.safe_state, station.limits, station.readings
    problems: list[tuple[tuple[str, ...], str]] = []
    voltage = ("safe_state", "deenergised_voltage")
    if safe.deenergised_voltage >= EXTRA_LOW_VOLTAGE_AC_V:
        problems.append((voltage, f"safe_state.deenergised_voltage: {safe.deenergised_voltage:g} V is not extra-low voltage "
                                  f"(below {EXTRA_LOW_VOLTAGE_AC_V:g} V a.c., IEC 61140): a bay at this voltage is live"))
    elif safe.deenergised_voltage > DEENERGISED_FRACTION * hard.voltage:
        problems.append((voltage, _fraction_message("safe_state.deenergised_voltage", safe.deenergised_voltage, "V",
                                                    hard.voltage)))
    if safe.deenergised_current > DEENERGISED_FRACTION * hard.current:
        problems.append((("safe_state", "deenergised_current"),
                         _fraction_message("safe_state.deenergised_current", safe.deenergised_current, "A", hard.current)))
    watchdog = safe.source_watchdog
    if watchdog is not None and readings.source_check_interval * READBACKS_PER_WATCHDOG > watchdog:
        problems.append((("readings", "source_check_interval"),
                         f"readings.source_check_interval: {readings.source_check_interval:g} s must be at most "
                         f"1/{READBACKS_PER_WATCHDOG} of safe_state.source_watchdog ({watchdog:g} s): the read-backs "
                         "feed the source's watchdog, which would otherwise switch it off during a step"))
    return problems


def _fraction_message(name: str, value: float, unit: str, hard: float) -> str:
    return (f"{name}: {value:g} {unit} is more than {DEENERGISED_FRACTION:.0%} of the bay's hard limit "
            f"({hard:g} {unit}): 'de-energisation confirmed' would include a live bay")


def calibration_errors(station: Station, loaded: LoadedYaml, today: dt.date) -> list[InputError]:
    """An instrument past its ``calibration_due`` on ``today`` (the test date), unless the station
    allows it with a reason (``allow_expired_calibration``): one located error each."""
    errors = []
    for role, spec in _instruments(station):
        if spec.calibration_due is not None and spec.calibration_due < today and not spec.allow_expired_calibration:
            errors.append(loaded.error(("instruments", role, "calibration_due"), (
                f"instruments.{role}.calibration_due: calibration expired on {spec.calibration_due.isoformat()} "
                f"(test date {today.isoformat()}); recalibrate it, or let the lab allow it with "
                f"instruments.{role}.allow_expired_calibration: REASON")))
    return errors


def calibration_lines(station: Station, today: dt.date) -> list[str]:
    """One line per instrument: its calibration state on ``today`` and the serial *IDN? must give."""
    lines = []
    for role, spec in _instruments(station):
        due = spec.calibration_due
        if due is None:
            state = "no calibration date given"
        elif due < today:
            state = f"calibration EXPIRED {due.isoformat()}, allowed by the station: {spec.allow_expired_calibration}"
        else:
            state = f"calibrated until {due.isoformat()}"
        if spec.calibration_certificate:
            state += f" (certificate {spec.calibration_certificate})"
        serial = (f"serial {spec.serial}, compared with *IDN? when the run opens it" if spec.serial
                  else "no serial given (*IDN? not compared)")
        lines.append(f"{role.replace('_', ' ')}: {state}; {serial}")
    return lines


def serial_mismatches(station: Station, identities: list[dict[str, Any]]) -> list[str]:
    """Instruments whose *IDN? serial is not the one the station names (another unit is
    connected than the one whose calibration the station states)."""
    given = dict(_instruments(station))
    found = []
    for identity in identities:
        spec = given.get(str(identity.get("role")))
        if spec is not None and spec.serial and str(identity.get("serial") or "").strip() != spec.serial.strip():
            found.append(f"{identity['role'].replace('_', ' ')}: *IDN? gives serial '{identity.get('serial')}', "
                         f"the station names '{spec.serial}': another instrument is connected than the "
                         f"one the station's calibration is for")
    return found


def _instruments(station: Station) -> list[tuple[str, Instrument]]:
    """The measuring and supplying instruments (the simulated bay's control and a tap changer's
    drive are not calibrated)."""
    return [(role, spec) for role in ROLE_KINDS if role not in UNCALIBRATED
            and (spec := getattr(station.instruments, role)) is not None]
