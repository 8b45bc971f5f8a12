"""The certificate parts of the report: winding resistances at the reference temperature, the
temperatures table, the summary page, the approval block, the rating-plate fields and the
printed copy's footer."""

from __future__ import annotations

import dataclasses
import math
import re

import pytest

from harness.calc.record import record_from_text
from harness.common.errors import InputError
from harness.report import render_html
from harness.report.certificate import approval_rows, footer_css
from harness.report.demo import demo_bundle
from harness.runner.certificate import resistance_rows, temperature_rows

COPPER = {"winding_material": "copper", "reference_temperature": 75.0}


def resistance_event(winding: str, values: list[float], temperature: float) -> dict:
    return {"kind": "resistance", "data": {"winding": winding, "ohm": values[0] if len(values) == 1 else values,
                                           "temperature": temperature, "values": values}}


def test_resistance_at_reference_temperature_follows_the_copper_constant():
    # IEC 60076-1:2011, 11.2 / Annex E: R2 = R1 (235 + t2) / (235 + t1) for copper (recalled from memory).
    [row] = resistance_rows([resistance_event("hv", [1.0], 20.0)], COPPER, "iec")
    assert row["ohm_ref"] == pytest.approx(310 / 255, rel=1e-12)
    # Cross-check with the temperature coefficient of annealed copper at 20 degC, 0.00393 /K
    # (IEC 60028, recalled from memory): linear over 55 K, within 0.05 %.
    assert row["ohm_ref"] == pytest.approx(1 + 0.00393 * 55, rel=5e-4)


def test_aluminium_and_ieee_constants_and_three_line_to_line_pairs():
    rows = resistance_rows([resistance_event("lv", [0.1, 0.2, 0.3], 25.0)],
                           {"winding_material": "aluminium", "reference_temperature": None}, "ieee")
    assert [r["terminals"] for r in rows] == ["1-2", "2-3", "3-1"]
    # IEEE C57.12.90: 225 for aluminium, reference 85 degC for 65 degC-rise units (recalled from memory).
    assert [r["ohm_ref"] for r in rows] == pytest.approx([v * 310 / 250 for v in (0.1, 0.2, 0.3)])
    assert {r["reference_C"] for r in rows} == {85.0}


def test_no_material_means_no_conversion_rather_than_a_guess():
    [row] = resistance_rows([resistance_event("hv", [1.0], 20.0)], {}, "iec")
    assert row["ohm_ref"] is None and row["constant"] is None
    html = render_html(dataclasses.replace(demo_bundle(), certificate={**demo_bundle().certificate, "resistances": [row]}))
    assert "Not converted: the nameplate gives no winding material" in html


def test_temperatures_name_the_step_they_were_read_in():
    events = [{"kind": "step-start", "data": {"step": 0}},
              {"kind": "temperature", "data": {"ambient": 19.5, "oil": 20.1, "winding": 20.2}},
              {"kind": "step-start", "data": {"step": 1}}, resistance_event("hv", [5.0], 20.3),
              {"kind": "step-start", "data": {"step": 4}},
              {"kind": "core-temperature", "data": {"step": 4, "temperature_C": 20.6}}]
    rows = temperature_rows(events, {0: "1: before", 1: "2: cold resistance", 4: "5: no-load"},
                            {"load": {"temperature": 23.4}})
    assert [(r["when"], r["ambient"], r["oil"], r["winding"]) for r in rows] == [
        ("1: before", 19.5, 20.1, 20.2), ("2: cold resistance (HV)", None, None, 20.3),
        ("5: no-load", None, 20.6, None), ("load-loss test: mean winding temperature, as evaluated", None, None, 23.4)]


def test_summary_page_comes_first_and_carries_the_certificate():
    html = render_html(demo_bundle())
    first = html[html.index('<div class="first-page">'):html.index('id="cautions"')]
    for text in ("Nameplate", "ONAN", "105 °C (IEC 60085)", "2026", "IEC 60076-1:2011", "Routine tests",
                 "Measurement of winding resistance", "IEC 60076-1, 11.4", "Results against guarantees",
                 "Overall: <strong>PASSED</strong>", "tested by (operator)", "R. Adeyemi", "J. Okafor"):
        assert text in first, text
    # checked but not approved: the approved row is open and the mark says so
    assert re.search(r"<th scope=\"row\">approved</th><td>not yet</td>", first)
    assert "NOT YET APPROVED" in first
    for section in ('id="conditions"', "Winding resistance", "Temperatures", 'id="load-series"', "fig-load-series"):
        assert section in html, section
    assert html.index('id="conditions"') < html.index('id="results"') < html.index('id="load-series"')


def test_approval_block_marks_a_stale_approval():
    stale = {"approved": "2026-11-18T11:05:12+00:00", "name": "J. Okafor", "role": "approved", "note": "",
             "results_sha256": "ab" * 32, "results_match": False}
    valid = {**stale, "role": "checked", "results_match": True}
    block = approval_rows({"rows": [valid, stale], "approved": False, "changed_after": True, "tested_by": "A"})
    assert block["missing"] == ["approved"]  # a stale approval is no approval
    cert = {**demo_bundle().certificate, "approval": {"tested_by": "A", "rows": [valid, stale], "approved": False,
                                                      "changed_after": True, "results_sha256": "cd" * 32}}
    html = render_html(dataclasses.replace(demo_bundle(), certificate=cert))
    assert "approval-stale" in html and "does not match the results now stored" in html
    assert "NOT YET APPROVED: the results changed after they were approved" in html


def test_footer_names_serial_and_run_and_cannot_break_out_of_the_stylesheet():
    bundle = dataclasses.replace(demo_bundle(), unit={**demo_bundle().unit, "serial": 'X"1</style><b>'})
    css = str(footer_css(bundle))
    assert "</style" not in css and '"1' not in css
    assert 'counter(page) " of " counter(pages)' in css
    html = render_html(bundle)
    assert html.count("</style>") == 1
    assert "Serial HEW-26-0417 · run 20261118-091204-nf2" in str(footer_css(demo_bundle()))


NAMEPLATE = """transformer: {{rated_power: 50 kVA, phases: 1, frequency: 50 Hz, hv: {{rated_voltage: 6.6 kV}},
  lv: {{rated_voltage: 415 V}}, {fields}}}
standard: {standard}
"""


@pytest.mark.parametrize("fields, standard", [
    ("cooling: ONAN, insulation: liquid-immersed", "iec"), ("cooling: ODWF", "iec"), ("cooling: AN, insulation: dry-type", "iec"),
    ("thermal_class: 155", "iec"), ("year_of_manufacture: 1998", "iec"),
    ("standard_edition: 'IEC 60076-1:2011'", "iec"), ("standard_edition: IEEE C57.12.00-2021", "ieee"),
])
def test_rating_plate_fields_accepted(fields, standard):
    record_from_text(NAMEPLATE.format(fields=fields, standard=standard))


@pytest.mark.parametrize("fields, standard, message", [
    ("cooling: ONAX", "iec", "is not a cooling code"),
    ("cooling: AN, insulation: liquid-immersed", "iec", "dry-type cooling code, but insulation is liquid-immersed"),
    ("cooling: ONAF, insulation: dry-type", "iec", "liquid-immersed cooling code, but insulation is dry-type"),
    ("thermal_class: 150", "iec", "thermal_class"),
    ("year_of_manufacture: 3026", "iec", "is not a year of manufacture"),
    ("standard_edition: IEC 60076-1", "iec", "is not a standard and its year"),
    ("standard_edition: IEEE C57.12.00-2021", "iec", "is not the standard the results are judged by"),
])
def test_rating_plate_fields_refused_at_their_place(fields, standard, message):
    with pytest.raises(InputError) as caught:
        record_from_text(NAMEPLATE.format(fields=fields, standard=standard), "unit.yaml")
    text = str(caught.value)
    assert message in text and re.search(r"unit\.yaml:\d+:\d+:", text), text


def test_resistance_conversion_matches_the_calculation_core():
    # The table and the evaluation use one formula: the core's resistance_at.
    from harness.calc.temperature import resistance_at
    [row] = resistance_rows([resistance_event("hv", [5.27], 20.9)], COPPER, "iec")
    assert math.isclose(row["ohm_ref"], resistance_at(5.27, 20.9, 75.0, 235.0))
