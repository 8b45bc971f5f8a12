"""The terminal table shows what the evaluation produced."""

from __future__ import annotations

from pathlib import Path

from rich.console import Console

from harness.calc import evaluate, load_record
from harness.calc.table import render_results

from ._records import reading, single_phase

RECORD = Path(__file__).resolve().parents[2] / "sequences" / "records" / "single_phase_pole_mount.yaml"


def _text(results) -> str:
    console = Console(record=True, width=120, color_system=None)
    render_results(results, console)
    return console.export_text()


def test_every_section_and_the_verdicts_are_shown():
    text = _text(evaluate(load_record(RECORD)))
    for heading in ("No-load test", "Load-loss test", "Equivalent circuit", "Efficiency", "Regulation",
                    "Checks against guarantees", "PASS"):
        assert heading in text
    assert "461.37" in text  # load loss at 75 degC


def test_partial_results_and_warnings():
    results = evaluate(single_phase("10 kVA", "1 kV", "100 V", no_load=reading("lv", "100 V", "1 A", "50 W")))
    text = _text(results)
    assert "No-load test" in text and "Load-loss test" not in text and "Efficiency" not in text
    assert "warning: The record has no load-loss test" in text
