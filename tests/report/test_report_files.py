"""Report files on disk, the results JSON, the bundle's own checks and number formatting."""

from __future__ import annotations

import dataclasses
import json
import math
import stat

import pytest

from harness.report import REPORT_HTML, RESULTS_JSON, STATUSES, ReportBundle, ReportError, write_reports
from harness.report import fmt
from harness.report.demo import demo_bundle, demo_tripped_bundle


def test_write_reports_writes_html_and_json(tmp_path, demo):
    paths = write_reports(tmp_path / "runs" / demo.run["run_id"], demo)
    assert set(paths) == {"html", "json"}
    assert paths["html"].name == REPORT_HTML and paths["json"].name == RESULTS_JSON
    assert paths["html"].read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert sorted(p.name for p in paths["html"].parent.iterdir()) == [REPORT_HTML, RESULTS_JSON]
    assert stat.S_IMODE(paths["html"].stat().st_mode) == 0o644


def test_results_json_carries_results_and_run_metadata(tmp_path, demo):
    document = json.loads(write_reports(tmp_path, demo)["json"].read_text(encoding="utf-8"))
    assert document["format"] == "transformer-test-results" and document["format_version"] == 1
    assert document["run"]["run_id"] == demo.run["run_id"] and document["run"]["status"] == "passed"
    assert document["unit"]["serial"] == demo.unit["serial"]
    assert document["results"]["no_load"]["loss_W"] == demo.results["no_load"]["loss_W"]
    assert document["results"]["checks"] == demo.results["checks"]
    assert len(document["instruments"]) == len(demo.instruments) and document["trip"] is None
    assert demo.results["warnings"][0] in document["warnings"] and demo.warnings[0] in document["warnings"]


def test_html_holds_the_numbers_of_results_json(tmp_path, demo):
    paths = write_reports(tmp_path, demo)
    results = json.loads(paths["json"].read_text(encoding="utf-8"))["results"]
    html = paths["html"].read_text(encoding="utf-8")
    for section in ("no_load", "load"):
        for key, value in results[section].items():
            if isinstance(value, float):
                assert f">{fmt.num(value)}<" in html, f"{section}.{key}"
    for check in results["checks"]:
        assert f">{fmt.num(check['value'])}<" in html, check["quantity"]


def test_tripped_json_keeps_the_trip(tmp_path):
    document = json.loads(write_reports(tmp_path, demo_tripped_bundle())["json"].read_text(encoding="utf-8"))
    assert document["run"]["status"] == "tripped" and document["trip"]["limit"] == 4.0
    assert "no_load" not in document["results"]


def test_results_json_is_strict_json_with_nan_as_null(tmp_path, demo):
    results = dict(demo.results, no_load=dict(demo.results["no_load"], loss_W=math.nan, current_A=math.inf))
    text = write_reports(tmp_path, dataclasses.replace(demo, results=results))["json"].read_text(encoding="utf-8")
    document = json.loads(text, parse_constant=lambda name: pytest.fail(f"non-standard JSON constant {name}"))
    assert document["results"]["no_load"]["loss_W"] is None and document["results"]["no_load"]["current_A"] is None


def test_a_folder_that_cannot_be_made_is_a_clear_error(tmp_path, demo):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    with pytest.raises(ReportError, match="cannot write the report into"):
        write_reports(blocker / "run", demo)


def test_rewriting_replaces_whole_files(tmp_path, demo):
    write_reports(tmp_path, demo_tripped_bundle())
    write_reports(tmp_path, demo)
    assert json.loads((tmp_path / RESULTS_JSON).read_text(encoding="utf-8"))["run"]["status"] == "passed"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


@pytest.mark.parametrize("status", STATUSES)
def test_every_status_renders(tmp_path, status):
    bundle = dataclasses.replace(demo_tripped_bundle(), run={**demo_bundle().run, "status": status})
    assert write_reports(tmp_path, bundle)["html"].stat().st_size > 10_000


def test_unknown_status_is_refused_in_words():
    with pytest.raises(ReportError, match="run status 'finished' is not one of: passed, failed"):
        ReportBundle(run={"status": "finished"})


@pytest.mark.parametrize(("field", "value", "message"), [
    ("results", [1, 2], "'results' must be a mapping"),
    ("events", "started", "'events' must be a list"),
    ("readings", [{"tag": "a"}, 3], r"'readings\[1\]' must be a mapping"),
    ("warnings", "one warning", "'warnings' must be a list of text"),
    ("trip", "over-current", "'trip' must be a mapping"),
])
def test_malformed_bundle_parts_are_refused_in_words(field, value, message):
    with pytest.raises(ReportError, match=message):
        ReportBundle(run={"status": "passed"}, **{field: value})


def test_bundle_is_frozen_and_has_default_cautions():
    bundle = ReportBundle(run={"status": "evaluated"})
    with pytest.raises(dataclasses.FrozenInstanceError):
        bundle.trip = {}  # type: ignore[misc]
    assert any("not a protective device" in c for c in bundle.cautions)
    assert bundle.unit == {} and bundle.sweep == [] and bundle.trip is None


# Rounding to significant digits, half away from zero as Python's round() on these exact
# decimals: arithmetic, common practice, no source.
@pytest.mark.parametrize(("value", "digits", "text"), [
    (1873.6, 4, "1874"), (238.14, 4, "238.1"), (4.080, 4, "4.08"), (0.0123456, 4, "0.01235"),
    (20, 4, "20"), (0.0, 4, "0"), (-0.6463, 4, "-0.6463"), (98.68219, 5, "98.682"), (12_345_678.0, 4, "1.235e+07"),
    (None, 4, "—"), (math.nan, 4, "—"), (True, 4, "—"), ("lv", 4, "lv"),
])
def test_significant_digits(value, digits, text):
    assert fmt.num(value, digits) == text


@pytest.mark.parametrize(("value", "text"), [
    (508_200.0, "508.2 kΩ"), (0.03227, "32.27 mΩ"), (22.67, "22.67 Ω"), (2.5e-7, "0.25 µΩ"), (3.3e6, "3.3 MΩ"),
])
def test_engineering_prefixes(value, text):
    assert fmt.eng(value, "Ω") == text


def test_verdicts_are_words_and_symbols():
    assert (fmt.verdict(True), fmt.verdict(False), fmt.verdict(None)) == ("✔ PASS", "✘ FAIL", "– not checked")
    assert fmt.limit_text([3.6, 4.4], "%") == "3.6 … 4.4 %"


@pytest.mark.parametrize(("iso", "text"), [
    ("2026-11-18T09:12:04+00:00", "2026-11-18 09:12:04 UTC"), ("2026-11-18T09:12:04.531Z", "2026-11-18 09:12:04 UTC"),
    ("2026-11-18T10:12:04+01:00", "2026-11-18 10:12:04 +01:00"), (None, "—"), ("yesterday", "yesterday"),
])
def test_times(iso, text):
    assert fmt.when_text(iso) == text


def test_long_traces_are_thinned_but_keep_their_spike():
    from harness.report.figures import decimate

    t = [0.01 * k for k in range(100_000)]
    y = [1.0] * len(t)
    y[77_777] = 9.0  # one sample over the limit
    tx, ty = decimate(t, y, 1000)
    assert len(tx) <= 1002 and max(ty) == 9.0 and tx[ty.index(9.0)] == t[77_777]
    assert tx[0] == t[0] and tx[-1] == t[-1] and tx == sorted(tx)
    assert decimate(t[:10], y[:10], 1000) == (t[:10], y[:10])


def test_thinning_in_chunks_keeps_what_thinning_whole_keeps():
    """Common practice, no source: min/max per bucket keeps a spike and is independent of chunking.

    The thinner does not know the trace's length: its buckets double as the trace grows, and
    what it keeps must be exactly each bucket's extremes at the final width (computed here
    directly on the whole trace with ``extremes``), plus the first and last sample."""
    import numpy as np

    from harness.report.decimate import TraceThinner, extremes

    rng = np.random.default_rng(7)
    n = 50_000
    columns = {"t": np.arange(n) * 0.05, "u": rng.normal(400, 1, n), "i": rng.normal(7, 0.1, n)}
    columns["i"][31_337] = 40.0  # the sample that tripped
    columns["u"][100:200] = np.nan  # the analyser gave no value here
    columns["i"][5000:9000] = 7.0  # ties: the earliest of equal values is the bucket's extreme
    whole = TraceThinner(("u", "i"), "t")
    whole.add(columns)
    for chunk in (4096, 1000, 7):
        chunked = TraceThinner(("u", "i"), "t")
        for start in range(0, n, chunk):
            chunked.add({k: v[start:start + chunk] for k, v in columns.items()})
        a, b = whole.result(), chunked.result()
        assert chunked.size == whole.size and all(np.array_equal(a[k], b[k], equal_nan=True) for k in a)
    size = whole.size
    assert size & (size - 1) == 0 and -(-n // size) <= whole.buckets < -(-n // (size // 2))
    expected = np.unique(np.concatenate([extremes(columns["u"], 0, size), extremes(columns["i"], 0, size), [0, n - 1]]))
    assert np.array_equal(a["t"], columns["t"][expected]) and np.array_equal(a["i"], columns["i"][expected])
    assert b["i"].max() == 40.0 and b["t"][b["i"].argmax()] == columns["t"][31_337]
    assert b["t"][0] == 0.0 and b["t"][-1] == columns["t"][-1] and np.all(np.diff(b["t"]) > 0)
    assert len(a["t"]) <= 1500 + 2


def test_a_short_trace_is_kept_whole():
    import numpy as np

    from harness.report.decimate import TraceThinner

    thinner = TraceThinner(("u",), "t")
    for start in range(0, 700, 100):
        thinner.add({"t": np.arange(start, start + 100) * 1.0, "u": np.full(100, 2.0)})
    assert thinner.size == 1 and np.array_equal(thinner.result()["t"], np.arange(700) * 1.0)
    assert TraceThinner(("u",), "t").result()["t"].size == 0
