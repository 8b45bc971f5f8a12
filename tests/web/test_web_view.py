"""harness web: read-only pages over a store, escaping, the token rule, the live data, the design statistics."""

from __future__ import annotations

import json
import shutil
import statistics
import subprocess
import sys
import urllib.error
import urllib.request
from pathlib import Path

import numpy as np
import pytest

from harness.store import Store, StoreError
from harness.web.designs import design_key
from harness.web.server import WebServer, serve_in_thread

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "store"))
from store_helpers import RUN_FIELDS, add

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
PLATE = {"rated_power": 50000.0, "phases": 1, "frequency": 50.0, "hv": {"rated_voltage": 6600.0},
         "lv": {"rated_voltage": 415.0}, "winding_material": "copper"}


def _unit_run(store: Store, unit: str, no_load: float, load: float, z: float, i0: float) -> str:
    run_id = store.begin_run(**{**RUN_FIELDS, "unit": unit})
    results = {"no_load": {"loss_W": no_load, "current_pct": i0}, "load": {"loss_ref_W": load, "impedance_ref_pct": z}}
    store.finish_run(run_id, "passed", 0, None, {"transformer": PLATE}, results)
    return run_id


@pytest.fixture
def served(tmp_path):
    store = Store(tmp_path)
    server = WebServer(store, "127.0.0.1", 0)
    stop = serve_in_thread(server)
    yield store, server.address
    stop()
    store.close()


def _get(url: str, **headers: str) -> tuple[int, str, dict]:
    request = urllib.request.Request(url, headers=headers)
    try:
        with urllib.request.urlopen(request, timeout=30) as reply:
            return reply.status, reply.read().decode(), dict(reply.headers)
    except urllib.error.HTTPError as exc:
        with exc:
            return exc.code, exc.read().decode(), dict(exc.headers)


def test_the_run_list_and_run_page_escape_every_value(served):
    store, address = served
    run_id = store.begin_run(**{**RUN_FIELDS, "unit": "<script>alert(1)</script> & co"})
    store.add_event(run_id, 0.5, "note", "<img src=x onerror=alert(2)>")
    status, page, headers = _get(address)
    assert status == 200 and run_id in page
    assert "<script>alert(1)" not in page and "&lt;script&gt;alert(1)&lt;/script&gt; &amp; co" in page
    assert "default-src 'none'" in headers["Content-Security-Policy"]
    status, page, _ = _get(f"{address}runs/{run_id}")
    assert status == 200 and "<img src=x" not in page and "&lt;img src=x onerror=alert(2)&gt;" in page
    assert f"/runs/{run_id}/live" in page  # a running run can be watched


def test_filters_and_bad_input(served):
    store, address = served
    kept = store.begin_run(**{**RUN_FIELDS, "unit": "NT-0500"})
    other = store.begin_run(**{**RUN_FIELDS, "unit": "NT-0600"})
    status, page, _ = _get(f"{address}?unit=0500")
    assert status == 200 and kept in page and other not in page
    assert _get(f"{address}?since=yesterday")[0] == 400
    assert _get(f"{address}runs/20000101-000000-dead")[0] == 404
    assert _get(f"{address}runs/{kept}/live.json?after=x")[0] == 400
    assert _get(f"{address}nowhere")[0] == 404


def test_nothing_but_reading_is_allowed(served):
    _, address = served
    for method in ("POST", "PUT", "DELETE", "PATCH"):
        request = urllib.request.Request(address, data=b"x", method=method)
        with pytest.raises(urllib.error.HTTPError) as refused:
            urllib.request.urlopen(request, timeout=30)
        with refused.value:
            assert refused.value.code == 405


def test_live_data_gives_the_samples_after_the_last_seen(served):
    store, address = served
    run_id = store.begin_run(**RUN_FIELDS)
    store.begin_step(run_id, 0, "ramp", "to rated voltage")
    add(store, run_id, 30)
    first = json.loads(_get(f"{address}runs/{run_id}/live.json?after=-1")[1])
    assert [row[0] for row in first["samples"]] == list(range(30)) and first["last_id"] == 29
    assert first["step"]["name"] == "to rated voltage" and first["status"] == "running"
    assert first["limits"] is None  # no step-start event with the step's limits yet
    add(store, run_id, 5, start=30)
    later = json.loads(_get(f"{address}runs/{run_id}/live.json?after=29")[1])
    assert [row[0] for row in later["samples"]] == [30, 31, 32, 33, 34]
    assert later["samples"][0][3] == 415.0 + 0  # u_rms of add()'s first sample of that call


def test_off_loopback_a_token_is_required(tmp_path, monkeypatch):
    monkeypatch.delenv("HARNESS_WEB_TOKEN", raising=False)
    with Store(tmp_path) as store:
        with pytest.raises(StoreError, match="needs an access token"):
            WebServer(store, "0.0.0.0", 0)
        with pytest.raises(StoreError, match="at least 16"):
            WebServer(store, "127.0.0.1", 0, token="short")
        server = WebServer(store, "127.0.0.1", 0, token="a-long-enough-token")
        stop = serve_in_thread(server)
        try:
            assert _get(server.address)[0] == 401
            assert _get(f"{server.address}?token=wrong-but-long-token")[0] == 401
            status, _, headers = _get(f"{server.address}?token=a-long-enough-token")
            assert status == 200 and "HttpOnly" in headers["Set-Cookie"]
            assert _get(server.address, Cookie="harness_token=a-long-enough-token")[0] == 200
            assert _get(server.address, Authorization="Bearer a-long-enough-token")[0] == 200
        finally:
            stop()


def test_a_design_gathers_its_units_with_mean_spread_and_control_limits(served, monkeypatch):
    store, address = served
    # Run ids one minute apart: the re-test below is the unit's latest run, as on a real bay.
    minutes = iter(range(100))

    def next_run_id() -> str:
        i = next(minutes)
        return f"20261202-{10 + i // 60:02d}{i % 60:02d}00-{i:04x}"

    monkeypatch.setattr("harness.store.store.new_run_id", next_run_id)
    monkeypatch.setattr("harness.store.rows.utc_now", lambda: "2026-12-02T10:00:00.000+00:00")
    rng = np.random.default_rng(7)
    no_load = list(150.0 + rng.normal(0, 2.0, 24))
    no_load[17] = 185.0  # a core-steel batch gone wrong
    for i, value in enumerate(no_load):
        _unit_run(store, f"NTW-50-{i:04d}", float(value), 800.0 + i, 4.0 + 0.01 * i, 1.5)
    _unit_run(store, "NTW-50-0003", 151.0, 803.0, 4.03, 1.5)  # a re-test: the unit counts once, latest
    key = design_key({"transformer": PLATE})
    status, page, _ = _get(f"{address}designs/{key}")
    assert status == 200 and "24 units" in page
    values = [151.0 if i == 3 else float(v) for i, v in enumerate(no_load)]
    mean, std = float(np.mean(values)), float(np.std(values, ddof=1))  # numpy, not the view's statistics
    assert f"{mean:.5g}" in page and f"{std:.3g}" in page and f"{mean + 3 * std:.5g}" in page
    assert statistics.fmean(values) == pytest.approx(mean)
    summary = page.split("<table id=\"summary\">")[1].split("</table>")[0]
    assert "NTW-50-0017" in summary and "NTW-50-0016" not in summary
    assert page.count("class='outside'") >= 1 and "<polyline class='trend'" in page
    assert _get(f"{address}designs/none-such")[0] == 404
    status, listing, _ = _get(f"{address}designs")
    assert key in listing


@pytest.mark.skipif(CHROMIUM is None, reason="Debian's chromium is not installed (/usr/bin/chromium)")
def test_the_live_page_draws_the_trace_in_a_real_browser(served, tmp_path):
    store, address = served
    run_id = store.begin_run(**RUN_FIELDS)
    store.begin_step(run_id, 0, "ramp", "to rated voltage")
    store.add_event(run_id, 0.0, "step-start", "ramp: to rated voltage",
                    {"step": 0, "limits": {"voltage_V": 500.0, "current_A": 4.0, "power_W": 400.0}})
    add(store, run_id, 40)
    store.flush()
    command = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               f"--user-data-dir={tmp_path / 'profile'}", "--virtual-time-budget=4000", "--dump-dom",
               f"{address}runs/{run_id}/live"]
    done = subprocess.run(command, capture_output=True, text=True, timeout=90, check=False)
    assert done.returncode == 0, done.stderr[-2000:]
    dom = done.stdout
    trace = dom.split('id="trace-u" points="')[1].split('"')[0]
    assert len(trace.split()) == 40  # one point per sample, drawn by the page's own script
    assert 'id="count">40<' in dom and "1: to rated voltage" in dom
    # add()'s last sample: u_rms 454 V, i_rms 2.1 A, p 160 W -> 9.2 %, 47.5 %, 60.0 % left
    assert 'id="room-u">9.2 %<' in dom and 'id="room-i">47.5 %<' in dom and 'id="room-p">60.0 %<' in dom
