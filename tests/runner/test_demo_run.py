"""The demo sequence on the simulated bay recovers the model's own truth (harness sim truth).

Tolerances from the issue: equivalent circuit within 2 %, no-load loss and load loss at reference
temperature within 1 %, with the scenario's noise and supply distortion on.
"""

from __future__ import annotations

import json

import pytest

from tests.runner.conftest import harness

CONTRACT_KEYS = {"rated_current_A", "no_load", "load", "equivalent_circuit", "efficiency", "max_efficiency",
                 "regulation", "checks", "warnings"}


def truth(data) -> dict:
    proc = harness("sim", "truth", "default", "--json", data=data)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def test_demo_run_passes_and_keeps_everything(demo_run) -> None:
    code, doc, data = demo_run
    assert (code, doc["status"], doc["exit_code"], doc["trip"]) == (0, "passed", 0, None)
    assert CONTRACT_KEYS <= set(doc["results"])
    assert doc["samples"] > 100
    assert doc["report"].endswith("report.html")
    runs = json.loads(harness("runs", "--json", data=data).stdout)
    assert runs[-1]["run_id"] == doc["run_id"] and runs[-1]["status"] == "passed"
    assert runs[-1]["samples"] == doc["samples"]


@pytest.mark.parametrize("side", ["hv", "lv"])
@pytest.mark.parametrize("element", ["Rc_ohm", "Xm_ohm", "Req_ohm", "Xeq_ohm"])
def test_equivalent_circuit_within_2_pct_of_truth(demo_run, side: str, element: str) -> None:
    _, doc, data = demo_run
    measured = doc["results"]["equivalent_circuit"][side][element]
    true = truth(data)["equivalent_circuit"][side][element]
    assert measured == pytest.approx(true, rel=0.02)


def test_losses_within_1_pct_of_truth(demo_run) -> None:
    _, doc, data = demo_run
    t = truth(data)
    assert doc["results"]["no_load"]["loss_W"] == pytest.approx(t["no_load"]["loss_W"], rel=0.01)
    assert doc["results"]["load"]["loss_ref_W"] == pytest.approx(t["load"]["loss_ref_W"], rel=0.01)
    assert doc["results"]["load"]["impedance_ref_pct"] == pytest.approx(t["load"]["impedance_ref_pct"], rel=0.01)


def test_excitation_curve_is_kept(demo_run) -> None:
    _, doc, _ = demo_run
    sweep = doc["results"]["sweep"]
    assert [round(p["u_pct"]) for p in sweep] == [90, 100, 105, 110]
    currents = [p["i_A"] for p in sweep]
    assert currents == sorted(currents) and currents[-1] / currents[1] > 1.3  # steep above rated flux
