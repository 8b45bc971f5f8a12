"""The ratio section of the report: every tap and phase pair of the results in its table, with
the numbers the calculation core gave, and the tap-by-tap figure with its tolerance band."""

from __future__ import annotations

from pathlib import Path

import pytest
from report_htmlcheck import strict_walk

from harness.calc import evaluate
from harness.calc.record import load_record
from harness.report import ReportBundle, render_html
from harness.report import fmt
from harness.report.figures import ratio_figure
from harness.report.tables import ratio_rows

RECORD = Path(__file__).resolve().parents[2] / "sequences" / "records" / "three_phase_ratio_by_hand.yaml"


def test_the_ratio_table_and_figure_carry_every_tap_and_phase() -> None:
    record = load_record(RECORD)
    results = evaluate(record).to_dict()
    rows = ratio_rows(results["ratio"])
    assert len(rows) == 5 * 3
    assert [r["tap"] for r in rows[::3]] == ["-2", "-1", "0", "+1", "+2"]
    first = results["ratio"]["taps"][0]["phases"][0]
    assert rows[0]["measured"] == fmt.num(first["measured"], 6) and rows[0]["clock"] == "11"
    walk = strict_walk(render_html(ReportBundle(run={"status": "evaluated", "standard": "iec"}, results=results)))
    assert walk.problems == []
    assert "Voltage ratio and phase displacement" in walk.plain and rows[4]["deviation"] in walk.plain
    svg = ratio_figure(results["ratio"])
    assert svg is not None and svg.startswith("<svg") and "tolerance" in svg


def test_no_ratio_test_no_section() -> None:
    assert ratio_rows(None) == [] and ratio_figure(None) is None


@pytest.mark.parametrize("degrees, shown", [(359.99, "0.0"), (-0.02, "0.0"), (330.04, "330.0"), (29.96, "30.0"), (None, "—")])
def test_a_lag_reads_as_it_rounds_within_a_turn(degrees, shown):
    """A lag just under a whole turn is the same displacement as 0 degrees: it reads 0.0, never
    360.0 (angles in 0 .. 360, common practice, no source)."""
    assert fmt.angle(degrees) == shown
