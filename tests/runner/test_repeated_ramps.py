"""Repeated ramps to rated current: the raw load loss drifts up as the winding warms, the loss
corrected to the reference temperature holds (IEC 60076-1 temperature correction of load loss,
as implemented in harness.calc; the simulated winding warms a few kelvin per bay minute)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.runner.conftest import ROOT, run_json


def test_raw_loss_drifts_and_corrected_loss_holds(tmp_path: Path) -> None:
    code, doc, _ = run_json(str(ROOT / "sequences" / "repeated_load_ramps.yaml"), "--yes", "--stepped-clock",
                            data=tmp_path)
    assert code == 0, (doc["trip"], doc["warnings"])
    series = doc["results"]["load_series"]
    assert len(series) == 5
    temps = [r["winding_temperature_C"] for r in series]
    raw = [r["loss_W"] for r in series]
    ref = [r["loss_ref_W"] for r in series]
    assert all(b > a for a, b in zip(temps, temps[1:])) and temps[-1] - temps[0] > 10
    assert all(b > a for a, b in zip(raw, raw[1:])) and raw[-1] / raw[0] > 1.03, series
    assert max(ref) / min(ref) - 1 < 0.003, series    # held within 0.3 % while raw moved > 3 %
    assert ref[0] == pytest.approx(doc["results"]["load"]["loss_ref_W"], rel=0.003)
