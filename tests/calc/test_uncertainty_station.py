"""The station's measurement chain reaches the record the runner builds, and the uncertainty follows."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import pytest
from pydantic import ValidationError

from harness.calc import Record, evaluate
from harness.calc.record import Transformer
from harness.common.yamlio import load_text, validate
from harness.runner.sim_station import sim_station, sim_station_text
from harness.config.station import Station
from harness.runner.context import MeasuredReading
from harness.runner.record import build_record
from harness.sim.scenario import load_scenario

DEFAULT_SCENARIO = Path(__file__).resolve().parents[2] / "sim_configs" / "default.yaml"


def test_simulated_station_chain_matches_the_simulated_analyser():
    chain = sim_station()[0].measurement_chain
    spec = load_scenario(DEFAULT_SCENARIO).analyser
    for q in ("voltage", "current", "power"):
        assert getattr(chain.analyser, q).reading == getattr(spec.accuracy, q).reading
        assert getattr(chain.analyser, q).range == getattr(spec.accuracy, q).range
    assert tuple(chain.analyser.voltage_ranges) == tuple(spec.voltage_ranges)
    assert tuple(chain.analyser.current_ranges) == tuple(spec.current_ranges)
    ct = chain.channels[0].current_transformer
    assert (ct.ratio, ct.ratio_error, ct.phase_displacement) == (1.0, 0.0, 0.0)


def test_chain_ratio_must_match_the_wiring_ratio():
    text = sim_station_text().replace("measurement: {vt_ratio: 1, ct_ratio: 1}",
                                      "measurement: {vt_ratio: 1, ct_ratio: 10}")
    with pytest.raises(Exception, match="differs from measurement.ct_ratio"):
        validate(Station, load_text(text, "station.yaml"))


def _reading(test: str, winding: str, mean: dict, std: dict, temperature=None) -> MeasuredReading:
    return MeasuredReading(test, test, 1, winding, 20, mean, std, True, temperature, None, (456.5, 2.2))


def _run():
    station = sim_station()[0]
    transformer = Transformer.model_validate({"rated_power": "50 kVA", "phases": 1, "frequency": "50 Hz",
                                              "hv": {"rated_voltage": "6600 V"}, "lv": {"rated_voltage": "415 V"},
                                              "winding_material": "copper"})
    sequence = SimpleNamespace(standard="iec", transformer=transformer, guarantees=None, tolerances=None,
                               waveform=None, compliance=None)
    no_load = _reading("no-load", "lv", {"u_rms": 416.9, "u_mean": 415.0, "i_rms": 1.87, "p": 149.7},
                       {"u_rms": 0.09, "u_mean": 0.09, "i_rms": 0.0007, "p": 0.08})
    load = _reading("load-loss", "hv", {"u_rms": 262.3, "u_mean": 261.0, "i_rms": 7.21, "p": 687.0},
                    {"u_rms": 0.06, "u_mean": 0.06, "i_rms": 0.002, "p": 0.4}, temperature=22.0)
    return SimpleNamespace(sequence=sequence, station=station, readings=[no_load, load], ratio_readings=[],
                           resistances={"hv": (5.25, 21.0), "lv": (0.0206, 21.0)})


def test_runner_record_carries_chain_samples_and_ranges():
    record = build_record(_run())  # type: ignore[arg-type]
    assert record["no_load"]["samples"] == {"count": 20, "voltage_sd": 0.09, "current_sd": 0.0007, "power_sd": 0.08,
                                            "voltage_mean_sd": 0.09}
    assert record["load"]["analyser_ranges"] == {"voltage": 456.5, "current": 2.2}
    results = evaluate(Record.model_validate(record)).to_dict()
    assert {"no_load_loss_W", "load_loss_ref_W", "total_loss_W", "impedance_ref_pct",
            "no_load_current_pct"} <= set(results["uncertainty"])
    # 2.2 A requested: the simulated analyser reads on its 5 A range.
    entry = next(c for c in results["uncertainty"]["load_loss_ref_W"]["budget"] if c["source"].startswith("analyser I"))
    bound = (0.02 * 7.21 + 0.02 * 5) / 7.21  # % of reading
    assert entry["standard_uncertainty"] == pytest.approx(bound / 3**0.5)


def test_a_record_chain_of_bad_values_is_refused():
    with pytest.raises(ValidationError, match="cannot be negative"):
        Record.model_validate({"transformer": {"rated_power": "50 kVA", "phases": 1, "frequency": "50 Hz",
                                               "hv": {"rated_voltage": "6600 V"}, "lv": {"rated_voltage": "415 V"}},
                               "measurement_chain": {"channels": [{}], "thermometer": {"accuracy": "-1 K"}}})
