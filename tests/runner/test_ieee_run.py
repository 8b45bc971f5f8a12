"""A run to IEEE on the simulated bay corrects its no-load loss to 20 degC with the oil temperature
read during the no-load reading, and judges the guarantees with the IEEE tolerances."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.runner.conftest import ROOT, run_json


def test_ieee_run_corrects_no_load_loss_to_20C(tmp_path: Path) -> None:
    code, document, _ = run_json(str(ROOT / "sequences" / "routine_ieee_single_phase.yaml"), "--yes",
                                 "--stepped-clock", data=tmp_path)
    assert code == 0, document
    results = document.get("results", document)
    nl = results["no_load"]
    assert nl["temperature_C"] is not None             # the simulated bay's oil channel
    # IEEE C57.12.90 form: P(20) = P(t) (1 + (t - 20) 0.00065)
    assert nl["temperature_correction_factor"] == pytest.approx(1 + (nl["temperature_C"] - 20) * 0.00065)
    assert nl["loss_W"] == pytest.approx(nl["loss_waveform_corrected_W"] * nl["temperature_correction_factor"])
    assert nl["waveform_form"] == "ieee"
    assert results["tolerance_source"].startswith("IEEE C57.12.00")
    assert {c["quantity"]: c["tolerance_pct"] for c in results["checks"]}["total_loss"] == 6.0
