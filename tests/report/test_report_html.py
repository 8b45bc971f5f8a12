"""The HTML report: well-formed, self-contained, complete, and honest about partial runs."""

from __future__ import annotations

import dataclasses
import re

import pytest
from report_htmlcheck import strict_walk

from harness.report import DEFAULT_CAUTIONS, render_html
from harness.report import fmt
from harness.report.demo import demo_tripped_bundle

# Attributes that make a browser fetch something (HTML living standard; SVG 1.1 xlink:href).
FETCHING = ("src", "href", "xlink:href", "srcset", "poster", "data", "action", "formaction", "background", "cite")


def test_page_parses_with_balanced_tags_and_unique_ids(demo_html):
    walk = strict_walk(demo_html)
    assert walk.problems == []
    assert len(walk.ids) == len(set(walk.ids)), "duplicate element ids"
    assert demo_html.lstrip().startswith("<!DOCTYPE html>")


@pytest.mark.parametrize("html_name", ["demo_html", "tripped_html"])
def test_no_external_references(html_name, request):
    html = request.getfixturevalue(html_name)
    walk = strict_walk(html)
    for tag, attrs in walk.tags:
        for name in FETCHING:
            value = attrs.get(name)
            if value is not None:
                assert value.startswith("#"), f"<{tag} {name}={value!r}> points outside the page"
    assert walk.of("script") == [] and walk.of("link") == [] and walk.of("img") == [] and walk.of("iframe") == []
    assert "@import" not in html and "@font-face" not in html
    assert re.findall(r"url\((?!#)", html) == []
    # The only addresses left are XML namespace names, which nothing fetches.
    addresses = set(re.findall(r"https?://[^\s\"')<>]+", html))
    assert addresses <= {"http://www.w3.org/2000/svg", "http://www.w3.org/1999/xlink"}


def test_at_least_three_figures_with_size(demo_html):
    svgs = strict_walk(demo_html).of("svg")
    assert len(svgs) >= 3
    for attrs in svgs:
        width, height = (float(re.sub(r"[a-z]+$", "", attrs[k] or "0")) for k in ("width", "height"))
        assert width > 0 and height > 0 and attrs.get("viewbox")
    assert "<?xml" not in demo_html and "<!DOCTYPE svg" not in demo_html and "<metadata" not in demo_html


def test_results_numbers_appear(demo, demo_html):
    text = strict_walk(demo_html).plain
    results = demo.results
    for section in ("no_load", "load"):
        for key, value in results[section].items():
            if fmt.is_number(value):
                assert fmt.num(value) in text, f"{section}.{key} = {value}"
    for check in results["checks"]:
        assert fmt.num(check["guaranteed"]) in text
        assert fmt.limit_text(check["limit"], "") in text
    for point in results["efficiency"]:
        assert fmt.fixed(point["efficiency_pct"], 3) in text
    for point in results["regulation"]:
        assert fmt.num(point["regulation_pct"]) in text and fmt.num(point["voltage_drop_pct"]) in text
    for side in ("hv", "lv"):
        for value in results["equivalent_circuit"][side].values():
            assert fmt.eng(value, "Ω") in text
    assert fmt.num(results["max_efficiency"]["efficiency_pct"], 5) in text


def test_known_values_of_the_demo_as_written(demo_html):
    # The demo's no-load loss 238.1 W and load loss at reference temperature 1873.6 W (to 4
    # significant digits: 1874); total 2111.7 W -> 2112. Rounding rule: common practice, no source.
    text = strict_walk(demo_html).plain
    for expected in ("238.1", "1874", "2112", "3.6 … 4.4", "✔ PASS", "IEC 60076-1"):
        assert expected in text


def test_header_names_lab_unit_and_hashes(demo, demo_html):
    text = strict_walk(demo_html).plain
    for key in ("lab", "station", "operator", "software_version", "sequence_name", "sequence_hash", "station_hash", "run_id"):
        assert str(demo.run[key]) in text, key
    assert demo.unit["serial"] in text and demo.unit["maker"] in text
    assert "2026-11-18 09:12:04 UTC" in text


def test_instruments_show_identity_resource_profile_and_due_date(demo, demo_html):
    text = strict_walk(demo_html).plain
    for inst in demo.instruments:
        assert inst["identity"]["serial"] in text and inst["resource"] in text and inst["profile"] in text
    assert "2027-04-30" in text and "not given by the station" in text


def test_cautions_are_shown(demo_html):
    text = strict_walk(demo_html).plain
    for caution in DEFAULT_CAUTIONS:
        assert " ".join(caution.split()) in text
    assert "not a protective device" in text and "local codes" in text and "full rated voltage" in text


def test_print_style_paginates_on_a4(demo_html):
    assert re.search(r"@page\s*{[^}]*size:\s*A4", demo_html)
    assert "@media print" in demo_html


def test_sections_present_in_order(demo_html):
    order = ["cautions", "unit", "instruments", "results", "circuit", "efficiency", "regulation",
             "excitation", "traces", "readings", "uncertainty", "warnings", "events"]
    positions = [demo_html.index(f'<section id="{name}"') for name in order]
    assert positions == sorted(positions)


def test_reading_statistics_and_stability_in_words(demo, demo_html):
    text = strict_walk(demo_html).plain
    assert "✔ stable" in text and "✘ not stable" in text
    first = demo.readings[0]
    assert fmt.num(first["mean"]["p"]) in text and fmt.num(first["std"]["p"], 2) in text


def test_a_three_phase_readings_rows_say_their_phase(demo):
    """A reading of a three-phase run is stored per phase (channel 1-3) and for the three together
    (no channel): each row says which; a single-phase run's table has no phase column."""
    first = demo.readings[0]
    phased = [{**first, "channel": None}] + [{**first, "channel": ch} for ch in (1, 2, 3)]
    html = render_html(dataclasses.replace(demo, readings=phased))
    section = html[html.index('id="readings"'):]
    section = section[:section.index("</section>")]
    cells = re.findall(r"<td>(L[^<]*)</td>", section)
    assert cells == ["L1–L3", "L1", "L2", "L3"] and ">Phase</th>" in section
    assert "the three phases together" in section
    single = render_html(demo)
    single = single[single.index('id="readings"'):]
    assert ">Phase</th>" not in single[:single.index("</section>")]


def test_uncertainty_budget_rows(demo_html):
    text = strict_walk(demo_html).plain
    assert "Uncertainty budget" in text and "phase error at low power factor" in text and "k = 2" in text


def test_no_banner_on_a_passed_run(demo_html):
    assert 'class="banner' not in demo_html


def test_tripped_banner_says_what_when_value_and_limit(tripped_html):
    walk = strict_walk(tripped_html)
    assert walk.problems == []
    text = walk.plain
    assert "RUN TRIPPED" in text
    assert "current over limit in step 2" in text
    assert "When: 2026-11-18 09:12:42 UTC" in text
    assert "current 4.12 A against the limit 4 A" in text
    assert tripped_html.index('class="banner') < tripped_html.index('id="cautions"')
    assert ">trip</text>" in tripped_html  # the trip is marked on the ramp it stopped


def test_unsafe_banner_says_the_bay_may_be_live():
    text = strict_walk(render_html(demo_tripped_bundle("unsafe", 5))).plain
    assert "THE BAY MAY STILL BE LIVE" in text and "absence of voltage" in text


@pytest.mark.parametrize("status", ["aborted", "incomplete"])
def test_aborted_and_incomplete_runs_get_a_banner(status):
    bundle = demo_tripped_bundle(status, 4)
    bundle = dataclasses.replace(bundle, trip=None)
    walk = strict_walk(render_html(bundle))
    assert walk.problems == [] and "banner" in (walk.of("section")[0].get("class") or "")


def test_partial_results_without_load_test_still_render(demo):
    results = {k: demo.results[k] for k in ("rated_current_A", "no_load")}
    results["checks"] = [c for c in demo.results["checks"] if c["quantity"].startswith("no_load")]
    bundle = dataclasses.replace(demo, results=results, sweep=[], traces=demo.traces[:1])
    html = render_html(bundle)
    walk = strict_walk(html)
    assert walk.problems == []
    text = walk.plain
    assert fmt.num(demo.results["no_load"]["loss_W"]) in text
    assert "Not available: the equivalent circuit needs" in text and "Not available: regulation" in text
    assert 'id="excitation"' not in html and len(walk.of("svg")) == 1


def test_empty_results_and_gaps_render(demo):
    bundle = dataclasses.replace(
        demo, results={}, readings=[{"tag": "x"}], traces=[{"step": 1, "t_s": [0.0, 1.0], "u_V": [0.0]}],
        sweep=[{"u_V": 1.0}], events=[{}], instruments=[{}], unit={},
    )
    walk = strict_walk(render_html(bundle))
    assert walk.problems == [] and "No results" in walk.plain


def test_not_a_number_renders_as_a_dash(demo):
    results = dict(demo.results, no_load=dict(demo.results["no_load"], loss_W=float("nan")))
    text = strict_walk(render_html(dataclasses.replace(demo, results=results))).plain
    assert "nan" not in text.lower().split()


def test_a_failed_check_reads_without_colour(demo):
    checks = [dict(c, passed=False) if c["quantity"] == "load_loss" else c for c in demo.results["checks"]]
    bundle = dataclasses.replace(demo, run={**demo.run, "status": "failed", "exit_code": 1},
                                 results=dict(demo.results, checks=checks))
    text = strict_walk(render_html(bundle)).plain
    assert "✘ FAIL" in text and "FAILED" in text


def test_text_from_the_bundle_is_escaped(demo):
    bundle = dataclasses.replace(demo, run={**demo.run, "operator": "<script>alert(1)</script>"},
                                 warnings=["<b>bold</b> & more"])
    html = render_html(bundle)
    assert "<script>" not in html and "&lt;script&gt;" in html and "&lt;b&gt;bold&lt;/b&gt; &amp; more" in html


def test_the_compared_value_is_marked_where_the_check_took_it(demo):
    from harness.report.tables import main_rows

    rows = {r.quantity: r for r in main_rows(demo.results)}
    assert rows["No-load loss"].checked == 1 and rows["Load loss"].checked == 2 and rows["Total losses"].checked == 2
    # An IEEE-style no-load loss, compared at reference temperature: the third column is marked.
    no_load = dict(demo.results["no_load"], loss_ref_W=240.2)
    checks = [dict(c, value=240.2) if c["quantity"] == "no_load_loss" else c for c in demo.results["checks"]]
    rows = {r.quantity: r for r in main_rows(dict(demo.results, no_load=no_load, checks=checks))}
    assert rows["No-load loss"].checked == 2 and rows["No-load loss"].at_reference == "240.2"
