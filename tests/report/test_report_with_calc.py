"""The report of results from the calculation core itself: its contract, not the demo's guess of it."""

from __future__ import annotations

from pathlib import Path

import pytest
from report_htmlcheck import strict_walk

from harness.calc import evaluate
from harness.calc.record import load_record
from harness.report import ReportBundle, render_html
from harness.report import fmt

RECORDS = Path(__file__).resolve().parents[2] / "sequences" / "records"


@pytest.mark.parametrize("name", ["three_phase_ground_mount", "ieee_single_phase_pad_mount", "single_phase_pole_mount"])
def test_evaluated_record_renders_with_its_numbers(name):
    record = load_record(RECORDS / f"{name}.yaml")
    results = evaluate(record).to_dict()
    bundle = ReportBundle(run={"status": "evaluated", "standard": record.standard}, results=results)
    walk = strict_walk(render_html(bundle))
    assert walk.problems == []
    text = walk.plain
    for check in results["checks"]:
        assert fmt.num(check["value"]) in text and fmt.verdict(check["passed"]) in text
    for section in ("no_load", "load"):
        for key, value in results[section].items():
            if fmt.is_number(value):
                assert fmt.num(value) in text, f"{section}.{key}"
    assert len(walk.of("svg")) >= 2  # equivalent circuit and efficiency at least
