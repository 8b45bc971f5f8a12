"""The ratio step end to end on the simulated bays (on a stepped clock: the same readings every run).

The routine sequences' own nameplate and ratio step, run alone: on the three-phase Dyn11 unit
and the single-phase demo unit every tap's measured ratio is within 0.05 % of the model's true
ratio (``harness sim truth``) on every phase pair, at the right clock number (polarity for the
single-phase unit). The wrong-tap fault fails exactly that tap's check, the wrong-vector-group
fault the phase-displacement check; both runs end with exit 1 (failed), a sentence naming what
failed, and the bay's de-energisation confirmed.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import yaml

from harness.runner.summary import failed_checks
from tests.runner.conftest import ROOT, harness, run_json

UNITS = {"three-phase": "routine_three_phase.yaml", "default": "routine_single_phase.yaml"}
TRUE_WITHIN_PCT = 0.05


def ratio_sequence(scenario: str, folder: Path) -> Path:
    """The routine sequence of ``scenario``'s unit with only its ratio prompt and ratio step."""
    doc = yaml.safe_load((ROOT / "sequences" / UNITS[scenario]).read_text(encoding="utf-8"))
    steps = doc["steps"]
    at = next(i for i, s in enumerate(steps) if s["kind"] == "ratio")
    doc["steps"] = steps[at - 1:at + 1]
    doc["limits"] = {**doc["limits"], "current": "2 A"}
    path = folder / f"ratio-{scenario}.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


def run_ratio(scenario: str, folder: Path, *faults: str) -> tuple[int, dict]:
    args = [str(ratio_sequence(scenario, folder)), "--sim", scenario, "--yes", "--stepped-clock"]
    for fault in faults:
        args += ["--fault", fault]
    code, doc, _ = run_json(*args, data=folder)
    return code, doc


@pytest.fixture(scope="module", params=list(UNITS))
def healthy(request, tmp_path_factory):
    folder = tmp_path_factory.mktemp(f"ratio-{request.param}")
    code, doc = run_ratio(request.param, folder)
    true = json.loads(harness("sim", "truth", request.param, "--json", data=folder).stdout)["ratio"]
    return code, doc, true


def test_every_tap_recovers_the_true_ratio_and_clock(healthy) -> None:
    code, doc, true = healthy
    assert (code, doc["status"]) == (0, "passed"), doc["trip"]
    ratio = doc["results"]["ratio"]
    assert [t["tap"] for t in ratio["taps"]] == [int(k) for k in true["taps"]]      # every tap, -2 to +2
    for tap in ratio["taps"]:
        wanted = true["taps"][str(tap["tap"])]
        assert tap["declared"] == pytest.approx(wanted["turns_ratio"], rel=1e-12)
        for phase, want in zip(tap["phases"], wanted["ratio"]):
            assert abs(phase["measured"] / want - 1) * 100 <= TRUE_WITHIN_PCT, (tap["tap"], phase)
            assert phase["clock"] == true["clock"] and phase["passed"]


@pytest.mark.parametrize("fault, failing", [
    ("wrong-tap", "voltage_ratio_tap_+1"),        # tap +1 wired to tap +2's lead: one step (2.4 %) off
    ("wrong-vector-group", "phase_displacement"),  # Dyn11 connected as Dyn1
])
def test_ratio_faults_fail_their_check_and_leave_the_bay_safe(tmp_path, fault, failing) -> None:
    code, doc = run_ratio("three-phase", tmp_path, fault)
    assert (code, doc["status"]) == (1, "failed"), doc["trip"]
    assert doc["safe_state"]["confirmed"]
    failed = [c["quantity"] for c in doc["results"]["checks"] if not c["passed"]]
    assert failed == [failing]
    sentence = failed_checks(doc["results"])
    assert len(sentence) == 1 and sentence[0].startswith(failing.replace("_", " ") + " outside its tolerance: ")


def test_ratio_readings_average_distinct_analyser_updates_and_a_frozen_analyser_is_a_fault(tmp_path, monkeypatch):
    """An analyser whose voltages stop changing gives no new reading: the step counts only distinct
    updates, and after three times the readings asked for without them it stops, the bay made safe
    (common practice, no source: a repeated reading is the instrument's last update again)."""
    from drivers.power_analyser import PowerAnalyser
    from harness.runner.prepare import RunOptions
    from harness.runner.run import execute
    from harness.store import Store

    real = PowerAnalyser.voltages
    frozen: dict[str, tuple[float, ...]] = {}

    def voltages(self, channels):
        if "last" not in frozen:
            frozen["last"] = tuple(real(self, channels))
        return frozen["last"]

    monkeypatch.setattr(PowerAnalyser, "voltages", voltages)
    with Store(tmp_path / "data") as store:
        outcome = execute(RunOptions(ratio_sequence("default", tmp_path), scenario="default", yes=True, quiet=True,
                                     stepped_clock=True), store)
    assert (outcome.status, outcome.exit_code) == ("tripped", 3) and outcome.safe_state["confirmed"]
    assert outcome.trip is not None and "voltages did not change over 180 readings" in outcome.trip["cause"]  # 3 x the 60 asked
