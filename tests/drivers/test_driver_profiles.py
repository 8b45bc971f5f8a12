"""Command profiles: the shipped ones load, bad ones fail at their line, short forms are right.

Short forms follow the SCPI-1999 vol. 1 mnemonic rule as written in the long form's capitals
(section 6.2.1, recalled from memory): SOURce -> SOUR, FREQuency -> FREQ, PROTection -> PROT.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from drivers import KINDS, load_profile
from drivers.profile import PROFILE_DIR, available_profiles, short_form
from harness.common.errors import InputError

GENERIC_AC_SOURCE = (PROFILE_DIR / "generic-ac-source.yaml").read_text()


@pytest.mark.parametrize("kind", KINDS)
def test_every_generic_profile_loads(kind: str) -> None:
    profile = load_profile("generic", kind)
    assert profile.kind == kind and profile.name == f"generic-{kind.replace('_', '-')}"
    assert profile.mnemonics == "long" and profile.error_query == "SYSTem:ERRor?"


def test_every_shipped_profile_loads_for_its_kind() -> None:
    names = available_profiles()
    assert "compact-power-analyser" in names and len(names) >= len(KINDS) + 1
    for name in names:
        kind = next(k for k in KINDS if name.endswith(k.replace("_", "-")))
        assert load_profile(name, kind).name == name


def test_each_command_set_describes_every_field() -> None:
    from drivers.profile import PROFILE_MODELS
    for model in PROFILE_MODELS.values():
        commands = model.model_fields["commands"].annotation
        assert set(commands.SPECS) == set(commands.model_fields)


def test_generic_commands_are_the_agreed_scpi_forms() -> None:
    source = load_profile("generic", "ac_source")
    assert source.command("set_voltage") == "SOURce:VOLTage {value}"
    assert source.command("set_output") == "OUTPut:STATe {state}"
    assert source.command("protection_tripped") == "SOURce:CURRent:PROTection:TRIPped?"
    analyser = load_profile("generic", "power_analyser")
    assert analyser.snapshot.query.split(";") == [
        "MEASure:VOLTage:AC? {channels}", ":MEASure:VOLTage:MEAN? {channels}",
        ":MEASure:CURRent:AC? {channels}", ":MEASure:POWer:AC? {channels}", ":MEASure:FREQuency? {channels}"]


@pytest.mark.parametrize("long, short", [
    ("SOURce:VOLTage {value}", "SOUR:VOLT {value}"),
    ("SOURce:CURRent:PROTection:STATe {state}", "SOUR:CURR:PROT:STAT {state}"),
    ("MEASure:VOLTage:AC? (@1);:MEASure:FREQuency? (@1)", "MEAS:VOLT:AC? (@1);:MEAS:FREQ? (@1)"),
    ("SYSTem:ERRor?", "SYST:ERR?"),
    ("*IDN?", "*IDN?"),
    ("INPut2:VOLTage:RANGe {value}", "INP2:VOLT:RANG {value}"),
    ("OUTPut:STATe ON", "OUTP:STAT ON"),
    ("SYST:ERR?", "SYST:ERR?"),  # a short form stays itself
])
def test_short_forms(long: str, short: str) -> None:
    assert short_form(long) == short


def test_compact_profile_sends_short_forms() -> None:
    profile = load_profile("compact-power-analyser", "power_analyser")
    assert profile.command("set_voltage_range") == "INP:VOLT:RANG {value:g}"
    assert profile.send_form(profile.error_query or "") == "SYST:ERR?"


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "lab-source.yaml"
    path.write_text(text)
    return path


def _error(tmp_path: Path, text: str, kind: str = "ac_source") -> InputError:
    with pytest.raises(InputError) as info:
        load_profile(_write(tmp_path, text), kind)
    return info.value


def _line_of(text: str, needle: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)


@pytest.mark.parametrize("old, new, message", [
    ('set_voltage: "SOURce:VOLTage {value}"', 'set_voltage: "SOURce:VOLTage {volts}"', "unknown placeholder {volts}"),
    ('set_voltage: "SOURce:VOLTage {value}"', 'set_voltage: "SOURce:VOLTage"', "must contain {value}"),
    ('set_voltage: "SOURce:VOLTage {value}"', 'set_voltage: "SOURce:VOLTage {value:.3q}"', "cannot fill"),
    ('voltage_setpoint: "SOURce:VOLTage?"', 'voltage_setpoint: "SOURce:VOLTage"', "a query must contain '?'"),
    ('set_frequency: "SOURce:FREQuency {value}"', 'set_frequency: "SOURce:FREQuency? {value}"', "must not contain '?'"),
    ('  enabled: "ON"', '  enabled: ON', "put the word in quotes"),
    ('  disabled: "OFF"', '  disabled: "O F F"', "not one SCPI word"),
    ('  slew: "SOURce:VOLTage:SLEW?"', '  slew: "SOURce:VOLTage:SLEW?"\n  ramp: "X"', "unknown key 'ramp'"),
    ("format: 1", "format: 7", "profile format 7 is not supported"),
    ("mnemonics: long", "mnemonics: tiny", "mnemonics"),
    ('error_query: "SYSTem:ERRor?"', 'error_query: "SYSTem:ERRor"', "a query must contain '?'"),
])
def test_bad_profiles_fail_at_their_line(tmp_path: Path, old: str, new: str, message: str) -> None:
    assert old in GENERIC_AC_SOURCE
    text = GENERIC_AC_SOURCE.replace(old, new, 1)
    error = _error(tmp_path, text)
    assert message in str(error)
    assert error.file.endswith("lab-source.yaml")
    assert error.line == _line_of(text, new.strip().splitlines()[-1].split(":")[0].strip())


def test_missing_required_command_is_located(tmp_path: Path) -> None:
    text = "\n".join(l for l in GENERIC_AC_SOURCE.splitlines() if "set_output:" not in l)
    error = _error(tmp_path, text)
    assert "'commands.set_output' is required" in str(error)
    assert error.line == _line_of(text, "commands:") + 1  # where the commands mapping begins


def test_watchdog_needs_both_commands(tmp_path: Path) -> None:
    text = "\n".join(l for l in GENERIC_AC_SOURCE.splitlines() if "set_watchdog_state" not in l)
    assert "both set_watchdog_timeout and set_watchdog_state" in str(_error(tmp_path, text))


def test_duplicate_key_is_located(tmp_path: Path) -> None:
    text = GENERIC_AC_SOURCE + '  set_voltage: "VOLT {value}"\n'
    error = _error(tmp_path, text)
    assert "duplicate key 'set_voltage'" in str(error)
    assert error.line == len(text.splitlines())


def test_wrong_kind_is_located(tmp_path: Path) -> None:
    error = _error(tmp_path, GENERIC_AC_SOURCE, kind="power_analyser")
    assert "for kind 'ac_source', not 'power_analyser'" in str(error)
    assert error.line == _line_of(GENERIC_AC_SOURCE, "kind:")


def test_short_mnemonics_need_capitals(tmp_path: Path) -> None:
    text = GENERIC_AC_SOURCE.replace("mnemonics: long", "mnemonics: short").replace(
        '"SOURce:FREQuency?"', '"source:frequency?"')
    error = _error(tmp_path, text)
    assert "mnemonic 'source' has no short form in capitals" in str(error)
    assert error.line == _line_of(text, "frequency_setpoint:")


def test_yaml_syntax_error_is_located(tmp_path: Path) -> None:
    text = GENERIC_AC_SOURCE.replace('  set_voltage: "SOURce:VOLTage {value}"', '  set_voltage: "SOURce:VOLTage {value}')
    error = _error(tmp_path, text)
    assert "YAML syntax" in str(error) and error.line > 1


ANALYSER = (PROFILE_DIR / "generic-power-analyser.yaml").read_text()


@pytest.mark.parametrize("old, new, message", [
    ("fields: [u_rms, u_mean, i_rms, p, freq]", "fields: [u_rms, u_mean, i_rms, p]", "'freq' must appear exactly once"),
    ("fields: [u_rms, u_mean, i_rms, p, freq]", "fields: [u_rms, u_rms, u_mean, i_rms, p, freq]", "'u_rms' must appear exactly once"),
    ("fields: [u_rms, u_mean, i_rms, p, freq]", "fields: [u_rms, u_mean, i_rms, p, freq, q]", "unknown field 'q'"),
    ('channel_separator: ","', 'channel_separator: "."', "cannot separate numbers"),
    ('channel_separator: ","', 'channel_separator: ";"', "must differ"),
    ("layout: by_quantity", "layout: sideways", "layout"),
])
def test_bad_snapshot_formats_are_refused(tmp_path: Path, old: str, new: str, message: str) -> None:
    assert old in ANALYSER
    text = ANALYSER.replace(old, new)
    error = _error(tmp_path, text, kind="power_analyser")
    assert message in str(error)
    assert _line_of(text, "snapshot:") <= error.line <= _line_of(text, "commands:")


def test_unknown_profile_name_lists_the_available_ones() -> None:
    with pytest.raises(InputError, match="no profile 'nonesuch'.*generic-ac-source"):
        load_profile("nonesuch", "ac_source")


def test_unknown_kind_is_a_clear_error() -> None:
    with pytest.raises(ValueError, match="unknown instrument kind 'oscilloscope'"):
        load_profile("generic", "oscilloscope")
