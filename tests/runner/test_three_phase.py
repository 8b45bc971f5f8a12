"""Three-phase units end to end on the simulated three-phase bays: the routine test recovers the
model's own truth (equivalent circuit within 2 %, no-load loss, no-load current and load loss at
reference temperature within 1 %), with noise and supply distortion on; the outer limbs of the
three-limb core draw more no-load current than the middle one, as in the model; every channel of
every reading is stored; and the phase faults end tripped with the phase named and the bay safe."""

from __future__ import annotations

import json
import sqlite3

import pytest

from tests.runner.conftest import ROOT, harness, run_json

CASES = [("routine_three_phase.yaml", "three-phase"), ("routine_large_three_phase.yaml", "large-three-phase")]


@pytest.fixture(scope="module", params=CASES, ids=[c[1] for c in CASES])
def three_phase_run(request, tmp_path_factory):
    sequence, scenario = request.param
    data = tmp_path_factory.mktemp(scenario)
    code, doc, _ = run_json(str(ROOT / "sequences" / sequence), "--sim", scenario, "--yes", "--stepped-clock",
                            data=data)
    truth = json.loads(harness("sim", "truth", scenario, "--json", data=data).stdout)
    return code, doc, truth, data


def test_completes_and_passes(three_phase_run) -> None:
    code, doc, _, _ = three_phase_run
    assert (code, doc["status"]) == (0, "passed"), doc["trip"]


def test_truth_recovered(three_phase_run) -> None:
    _, doc, truth, _ = three_phase_run
    r = doc["results"]
    assert r["no_load"]["loss_W"] == pytest.approx(truth["no_load"]["loss_W"], rel=0.01)
    assert r["no_load"]["current_pct"] == pytest.approx(truth["no_load"]["current_pct"], rel=0.01)
    assert r["load"]["loss_ref_W"] == pytest.approx(truth["load"]["loss_ref_W"], rel=0.01)
    for side in ("hv", "lv"):
        for element in ("Rc_ohm", "Xm_ohm", "Req_ohm", "Xeq_ohm"):
            assert r["equivalent_circuit"][side][element] == pytest.approx(
                truth["equivalent_circuit"][side][element], rel=0.02), (side, element)


def test_outer_limbs_draw_more_no_load_current_than_the_middle(three_phase_run) -> None:
    _, doc, truth, _ = three_phase_run
    measured = doc["results"]["phases"]["no_load"]["current_A"]
    modelled = truth["phases"]["no_load_line_current_A"]
    for currents in (measured, modelled):
        assert currents[1] < min(currents[0], currents[2])
    for m, t in zip(measured, modelled):
        assert m == pytest.approx(t, rel=0.02)
    assert "expected, not a fault" in doc["results"]["phases"]["no_load"]["note"]


def test_every_channel_of_every_reading_is_stored(three_phase_run) -> None:
    _, doc, _, data = three_phase_run
    db = sqlite3.connect(data / "harness.sqlite")
    try:
        per_channel = dict(db.execute("SELECT channel, count(*) FROM samples WHERE run_id = ? GROUP BY channel",
                                      (doc["run_id"],)).fetchall())
    finally:
        db.close()
    assert set(per_channel) == {1, 2, 3} and len(set(per_channel.values())) == 1
    assert sum(per_channel.values()) == doc["samples"]


@pytest.mark.parametrize("fault, phase, words", [
    ("open-link-phase", "L3", "short-circuit link"),   # the link leg of LV phase 1: HV line 3 carries double
    ("dead-source-phase", "L1", "source phase"),
    # on limb 1 (phase U), an outer limb: the ramp's guard or the limit itself, both on that line current
    ("shorted-turn", "L1", "current"),
])
def test_phase_faults_trip_with_the_phase_named(tmp_path, fault, phase, words) -> None:
    code, doc, _ = run_json(str(ROOT / "sequences" / "routine_three_phase.yaml"), "--sim", "three-phase",
                            "--fault", fault, "--stepped-clock", "--yes", data=tmp_path)
    assert (code, doc["status"]) == (3, "tripped"), doc["trip"]
    assert doc["trip"]["phase"] == phase and f"phase {phase}" in doc["trip"]["text"] and words in doc["trip"]["text"]
    assert doc["safe_state"]["confirmed"] is True
