"""The record model: units parsed once, strict keys, plausibility errors located in the file."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pydantic
import pytest

from harness.calc import Record, evaluate, load_record
from harness.calc.results import CONTRACT_KEYS
from harness.common.errors import InputError

RECORDS = sorted((Path(__file__).resolve().parents[2] / "sequences" / "records").glob("*.yaml"))

BASE = """\
standard: iec
transformer:
  rated_power: 50 kVA
  phases: {phases}
  frequency: 50 Hz
  hv: {{rated_voltage: 6.6 kV{hv_conn}}}
  lv: {{rated_voltage: 415 V{lv_conn}}}
  winding_material: copper
no_load:
  winding: lv
  voltage: {nl_voltage}
  current: {nl_current}
  power: {nl_power}
load:
  winding: hv
  voltage: {ld_voltage}
  current: 4.3 A
  power: 1.05 kW
  temperature: 21 degC
winding_resistance:
  hv: {{resistance: 9.8 ohm, temperature: 20 degC}}
  lv: {{resistance: 0.011 ohm, temperature: 20 degC}}
guarantees:
  no_load_loss: 150 W
  impedance: 4 %
{extra}"""
DEFAULTS = {"phases": 1, "hv_conn": "", "lv_conn": "", "nl_voltage": "415 V", "nl_current": "2.1 A",
            "nl_power": "160 W", "ld_voltage": "270 V", "extra": ""}


def _write(tmp_path: Path, **changes) -> Path:
    path = tmp_path / "record.yaml"
    path.write_text(BASE.format(**{**DEFAULTS, **changes}), encoding="utf-8")
    return path


def _error(tmp_path: Path, **changes) -> str:
    path = _write(tmp_path, **changes)
    with pytest.raises(InputError) as caught:
        load_record(path)
    return str(caught.value)


def _line_of(text: str, needle: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)


def test_the_contract_example_loads_with_units_in_si(tmp_path):
    record = load_record(_write(tmp_path))
    assert record.spec == 1
    assert record.transformer.rated_power == 50_000.0
    assert record.transformer.hv.rated_voltage == pytest.approx(6600.0)
    assert record.load.power == pytest.approx(1050.0)
    assert record.load.temperature == 21.0
    assert record.winding_resistance.lv.resistance == pytest.approx(0.011)
    assert record.guarantees.impedance == pytest.approx(4.0)


def test_plain_numbers_are_si(tmp_path):
    record = load_record(_write(tmp_path, nl_voltage="415", nl_power="160.0"))
    assert record.no_load.voltage == 415.0 and record.no_load.power == 160.0


def test_record_is_frozen(tmp_path):
    record = load_record(_write(tmp_path))
    with pytest.raises(pydantic.ValidationError):
        record.standard = "ieee"


@pytest.mark.parametrize("path", RECORDS, ids=lambda p: p.stem)
def test_shipped_records_evaluate_to_exactly_the_contract_keys(path):
    data = evaluate(load_record(path)).to_dict()
    assert tuple(data) == CONTRACT_KEYS
    assert set(data["equivalent_circuit"]) == {"hv", "lv"}
    assert {"loss_W", "loss_measured_W", "current_A", "current_pct", "power_factor"} <= set(data["no_load"])
    assert {"loss_W", "loss_ref_W", "impedance_pct", "impedance_ref_pct", "resistance_pct", "reactance_pct",
            "test_current_pu", "reference_temperature_C"} <= set(data["load"])
    assert all({"quantity", "value", "guaranteed", "limit", "passed"} <= set(c) for c in data["checks"])
    json.dumps(data, allow_nan=False)


def _located(message: str, path_line: int, text: str) -> None:
    match = re.match(r"^(.+):(\d+):(\d+): (.+)$", message.splitlines()[0])
    assert match, message
    assert int(match.group(2)) == path_line, message
    assert re.search(text, match.group(4)), message


def test_wrong_dimension_is_located(tmp_path):
    message = _error(tmp_path, nl_power="160 V")
    _located(message, _line_of(BASE, "  power: {nl_power}"), "not a power")


def test_unknown_key_is_an_error(tmp_path):
    message = _error(tmp_path, extra="waveform: {p1: 0.5, p3: 0.5}\n")
    _located(message, _line_of(BASE, "{extra}"), "unknown key 'p3'")


def test_duplicate_key_is_an_error(tmp_path):
    message = _error(tmp_path, extra="standard: ieee\n")
    _located(message, _line_of(BASE, "{extra}"), "duplicate key 'standard'")


def test_power_above_u_times_i_is_an_error(tmp_path):
    # 415 V * 2.1 A = 871.5 VA: a 900 W reading cannot be right.
    message = _error(tmp_path, nl_power="900 W")
    _located(message, _line_of(BASE, "  power: {nl_power}"), r"above U\*I = 871.5 VA")


def test_three_phase_power_limit_is_sqrt3_u_i(tmp_path):
    three = {"phases": 3, "hv_conn": ", connection: delta", "lv_conn": ", connection: star"}
    assert load_record(_write(tmp_path, nl_power="1.4 kW", **three)).no_load.power == 1400.0
    message = _error(tmp_path, nl_power="1.6 kW", **three)
    _located(message, _line_of(BASE, "  power: {nl_power}"), r"sqrt\(3\)\*U\*I")


@pytest.mark.parametrize("value", ["0 A", "-2.1 A"])
def test_zero_or_negative_reading_is_an_error(tmp_path, value):
    message = _error(tmp_path, nl_current=value)
    _located(message, _line_of(BASE, "  current: {nl_current}"), "must be positive")


def test_load_loss_voltage_above_rated_is_an_error(tmp_path):
    message = _error(tmp_path, ld_voltage="7 kV")
    _located(message, _line_of(BASE, "  voltage: {ld_voltage}"), "above the rated voltage of the energised hv")


def test_no_load_current_of_rated_size_is_an_error(tmp_path):
    message = _error(tmp_path, nl_current="121 A", nl_power="1 kW")
    _located(message, _line_of(BASE, "  current: {nl_current}"), "not a no-load current")


def test_three_phase_needs_connections(tmp_path):
    message = _error(tmp_path, phases=3, lv_conn=", connection: star")
    _located(message, _line_of(BASE, "  hv: {{"), "needs its connection")


def test_single_phase_rejects_connection_and_lists_of_three(tmp_path):
    assert "three-phase units only" in _error(tmp_path, hv_conn=", connection: star")
    message = _error(tmp_path, nl_voltage="[415 V, 414 V, 416 V]")
    _located(message, _line_of(BASE, "  voltage: {nl_voltage}"), "single-phase unit has one value")


def test_three_phase_values_are_one_mean_or_three(tmp_path):
    three = {"phases": 3, "hv_conn": ", connection: delta", "lv_conn": ", connection: star"}
    record = load_record(_write(tmp_path, nl_voltage="[415 V, 414 V, 416 V]", **three))
    assert record.no_load.voltage == (415.0, 414.0, 416.0)
    message = _error(tmp_path, nl_voltage="[415 V, 414 V]", **three)
    _located(message, _line_of(BASE, "  voltage: {nl_voltage}"), "list of three")
    message = _error(tmp_path, nl_voltage="[415 V, 414 A, 416 V]", **three)
    _located(message, _line_of(BASE, "  voltage: {nl_voltage}"), "phase 2: '414 A' is not a voltage")


def test_unsupported_format_version(tmp_path):
    message = _error(tmp_path, extra="spec: 2\n")
    _located(message, _line_of(BASE, "{extra}"), "format version 2 is not supported")


def test_load_profile_must_cover_24_hours(tmp_path):
    message = _error(tmp_path, extra="load_profile:\n  - {duration: 20 h, load: 0.5}\n")
    # Located at the list itself, which starts on the line after its key.
    _located(message, _line_of(BASE, "{extra}") + 1, "covers 20 h")


def test_waveform_fractions_sum_to_one(tmp_path):
    message = _error(tmp_path, extra="waveform: {p1: 0.7, p2: 0.4}\n")
    _located(message, _line_of(BASE, "{extra}"), "p1 \\+ p2 must be 1")


def test_hv_below_lv_is_an_error(tmp_path):
    path = _write(tmp_path)
    path.write_text(path.read_text().replace("6.6 kV", "400 V"))
    with pytest.raises(InputError, match="swapped"):
        load_record(path)


def test_every_error_of_a_file_is_reported(tmp_path):
    message = _error(tmp_path, nl_current="-1 A", nl_power="x W")
    assert len(message.splitlines()) == 2


def test_record_from_a_runner_dict_validates_the_same_way():
    with pytest.raises(pydantic.ValidationError, match="above U"):
        Record.model_validate({"transformer": {"rated_power": 1e3, "phases": 1, "frequency": 50,
                                               "hv": {"rated_voltage": 400}, "lv": {"rated_voltage": 200}},
                               "load": {"winding": "hv", "voltage": 10, "current": 2, "power": 30}})


def test_json_schema_is_available():
    schema = Record.model_json_schema()
    assert "transformer" in schema["properties"] and "no_load" in schema["properties"]
