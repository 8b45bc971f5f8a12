"""Runs, steps, events, instruments and readings: what goes in comes out; bad input is refused."""

from __future__ import annotations

import datetime as dt
import os
import re
import subprocess
import sys
import time

import pytest
from store_helpers import RUN_FIELDS, add, begin, committed, execute

from harness.store import AmbiguousRunError, StoreError, UnknownRunError
from harness.store.paths import new_run_id
from harness.store.process import process_token, station_id

# FIPS 180-2, appendix B.1: SHA-256("abc").
SHA256_ABC = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


@pytest.fixture
def store(tmp_path, open_store):
    with open_store() as opened:
        yield opened


def test_a_run_is_committed_as_soon_as_it_begins(store):
    run_id = begin(store)
    assert committed(store, "SELECT status FROM runs WHERE run_id = ?", (run_id,)) == "running"


def test_run_ids_carry_the_utc_start_time_and_sort_by_it(store):
    before = time.strftime("%Y%m%d-%H%M%S", time.gmtime())
    run_id = begin(store)
    after = time.strftime("%Y%m%d-%H%M%S", time.gmtime())
    assert re.fullmatch(r"\d{8}-\d{6}-[0-9a-f]{4}", run_id) and before <= run_id[:15] <= after
    # 2026-12-02 03:15:00 UTC is Unix time 1796181300 (computed by datetime, not by the store).
    stamp = dt.datetime(2026, 12, 2, 3, 15, tzinfo=dt.timezone.utc).timestamp()
    assert new_run_id(stamp).startswith("20261202-031500-")
    assert new_run_id(stamp) < new_run_id(stamp + 1) < new_run_id(stamp + 3600)


def test_the_run_keeps_texts_hashes_and_identity(store):
    run_id = begin(store, sequence_text="abc", station_text=None)
    run = store.run(run_id)
    assert run["sequence_text"] == "abc" and run["sequence_sha256"] == SHA256_ABC
    assert run["station_text"] is None and run["station_sha256"] is None
    assert run["unit"] == RUN_FIELDS["unit"] and run["lab"] == RUN_FIELDS["lab"]
    assert run["software_version"] == "0.1.0" and run["simulated"] == {"scenario": "routine", "fault": None}
    assert run["pid"] == os.getpid() and run["status"] == "running"


def test_finish_run_keeps_status_trip_record_and_results(store):
    run_id = begin(store)
    trip = {"cause": "current limit", "quantity": "i_rms", "value": float("nan"), "limit": 2.5, "step": 3}
    store.finish_run(run_id, "tripped", 3, trip, {"no_load": {"power": 160.0}}, {"warnings": []})
    run = store.run(run_id)
    assert (run["status"], run["exit_code"]) == ("tripped", 3) and run["finished"] >= run["started"]
    assert run["trip"]["value"] != run["trip"]["value"]  # NaN kept: the trip was on a not-a-number
    assert run["record"] == {"no_load": {"power": 160.0}} and run["results"] == {"warnings": []}
    listed = store.runs()
    assert listed == [{"run_id": run_id, "status": "tripped", "samples": 0, "started": run["started"],
                       "unit": RUN_FIELDS["unit"], "exit_code": 3, "station_id": station_id(),
                       "station_name": RUN_FIELDS["station_name"], "journal": None}]


def test_a_finished_run_takes_no_more_samples_or_steps(store):
    run_id = begin(store)
    store.finish_run(run_id, "passed", 0, None, None, None)
    with pytest.raises(StoreError, match="finished"):
        store.add_sample(run_id, 0, 0.0, 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0)
    with pytest.raises(StoreError, match="finished"):
        store.begin_step(run_id, 0, "hold", "hold")
    with pytest.raises(StoreError, match="finished"):
        store.finish_run(run_id, "failed", 1, None, None, None)
    store.add_event(run_id, None, "report", "report written")  # events may follow the end
    assert [e["kind"] for e in store.events(run_id)] == ["report"]


def test_steps_events_instruments_and_readings_come_back(store):
    run_id = begin(store)
    store.set_instruments(run_id, [
        {"role": "source", "maker": "Acme", "model": "AS-10", "serial": "A1", "firmware": "2.1",
         "resource": "TCPIP::127.0.0.1::5025::SOCKET", "profile": "generic-ac-source"},
        {"role": "analyser", "maker": "Acme", "model": "PA-3", "calibration_due": "2027-03-01"}])
    store.begin_step(run_id, 0, "ramp", "to rated voltage")
    ids = add(store, run_id, 5)
    store.add_event(run_id, 0.4, "warning", "headroom below 5 %", {"headroom_pct": 4.2})
    store.add_reading(run_id, 0, "no_load_rated", ids[1], ids[4],
                      {"count": 4, "stable": True, "u_rms_mean": 417.5, "u_rms_std": 1.118, "p_mean": 160.0})
    store.end_step(run_id, 0, "done")
    steps = store.steps(run_id)
    assert [(s["step_index"], s["kind"], s["name"], s["status"]) for s in steps] == [
        (0, "ramp", "to rated voltage", "done")]
    assert steps[0]["finished"] >= steps[0]["started"]
    event = store.events(run_id)[0]
    assert (event["t"], event["kind"], event["data"]) == (0.4, "warning", {"headroom_pct": 4.2})
    assert [(i["role"], i["serial"]) for i in store.instruments(run_id)] == [("analyser", None), ("source", "A1")]
    reading = store.readings(run_id)[0]
    assert (reading["first_id"], reading["last_id"], reading["count"], reading["stable"]) == (1, 4, 4, True)
    assert reading["u_rms_mean"] == 417.5 and reading["i_rms_mean"] is None
    assert store.run(run_id)["readings"] == [reading]


def test_set_instruments_replaces_the_earlier_list(store):
    run_id = begin(store)
    store.set_instruments(run_id, [{"role": "source", "serial": "A1"}])
    store.set_instruments(run_id, [{"role": "source", "serial": "B7"}])
    assert [i["serial"] for i in store.instruments(run_id)] == ["B7"]


@pytest.mark.parametrize("instruments, message", [
    ([{"maker": "Acme"}], "role"),
    ([{"role": "source", "colour": "red"}], "unknown instrument field"),
    ([{"role": "source"}, {"role": "source"}], "given twice"),
    ("source", "list of mappings"),
])
def test_bad_instrument_lists_are_refused(store, instruments, message):
    run_id = begin(store)
    with pytest.raises(StoreError, match=message):
        store.set_instruments(run_id, instruments)


@pytest.mark.parametrize("args, message", [
    ((0, "t", 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "t \\(bay seconds\\)"),
    ((0, float("inf"), 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "finite"),
    ((0, float("nan"), 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "finite"),
    ((0, 0.0, 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0, 5), "tag"),
    ((True, 0.0, 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "step index"),
    ((-1, 0.0, 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "step index"),
    ((0, 0.0, 1.5, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0), "channel"),
    ((0, 0.0, 0, "415 V", 1.0, 1.0, 1.0, 50.0, 1.0), "u_rms"),
    ((0, 0.0, 0, 1.0, 1.0, True, 1.0, 50.0, 1.0), "i_rms"),
])
def test_bad_samples_are_refused_without_taking_an_id(store, args, message):
    run_id = begin(store)
    with pytest.raises(StoreError, match=message):
        store.add_sample(run_id, *args)
    assert store.add_sample(run_id, 0, 0.0, 0, 1.0, None, 1.0, 1.0, 50.0, None) == 0


def test_samples_of_an_unknown_run_are_refused(store):
    with pytest.raises(UnknownRunError, match="begin_run"):
        store.add_sample("20261202-031500-ab12", 0, 0.0, 0, 1.0, 1.0, 1.0, 1.0, 50.0, 1.0)


def test_step_misuse_is_refused(store):
    run_id = begin(store)
    store.begin_step(run_id, 0, "hold", "hold")
    with pytest.raises(StoreError, match="begun already"):
        store.begin_step(run_id, 0, "hold", "again")
    with pytest.raises(StoreError, match="not begun"):
        store.end_step(run_id, 1, "done")
    store.end_step(run_id, 0, "done")
    with pytest.raises(StoreError, match="ended already"):
        store.end_step(run_id, 0, "done")
    with pytest.raises(StoreError, match="kind"):
        store.begin_step(run_id, 2, "", "x")


@pytest.mark.parametrize("stats, message", [
    ({"count": 3, "stable": True, "q_mean": 1.0}, "unknown reading stat"),
    ({"count": 0, "stable": True}, "count >= 1"),
    ({"count": 3, "stable": "yes"}, "stable"),
    ({"count": 3, "stable": True, "p_mean": "160 W"}, "p_mean"),
])
def test_bad_readings_are_refused(store, stats, message):
    run_id = begin(store)
    with pytest.raises(StoreError, match=message):
        store.add_reading(run_id, 0, "load_rated", 0, 2, stats)


def test_a_reading_cannot_end_before_it_begins(store):
    run_id = begin(store)
    with pytest.raises(StoreError, match="before its first"):
        store.add_reading(run_id, 0, "load_rated", 5, 2, {"count": 1, "stable": True})


@pytest.mark.parametrize("status, code", [("running", 0), ("done", 0), ("passed", -1)])
def test_a_run_ends_with_a_known_status_and_exit_code(store, status, code):
    run_id = begin(store)
    with pytest.raises(StoreError):
        store.finish_run(run_id, status, code, None, None, None)


def test_unknown_and_ambiguous_run_ids_are_clear_errors(store, monkeypatch):
    ids = iter(["20261202-031500-ab12", "20261202-031500-ab34"])
    monkeypatch.setattr("harness.store.store.new_run_id", lambda: next(ids))
    first, second = begin(store), begin(store)
    with pytest.raises(UnknownRunError, match="harness runs"):
        store.run("19991231-235959-0000")
    with pytest.raises(UnknownRunError):
        store.run("")
    with pytest.raises(UnknownRunError):
        store.samples("20%")
    with pytest.raises(AmbiguousRunError, match="give more"):
        store.run("20261202-031500-ab")
    assert store.run("20261202-031500-ab1")["run_id"] == first
    assert store.run(f" {second} ")["run_id"] == second


def test_json_that_cannot_be_kept_is_a_clear_error(store):
    run_id = begin(store)
    with pytest.raises(StoreError, match="as JSON"):
        store.add_event(run_id, 0.0, "note", "x", {"bad": object()})
    with pytest.raises(StoreError, match="simulated"):
        begin(store, simulated="routine")


def test_a_closed_store_says_so(tmp_path, open_store):
    store = open_store()
    store.close()
    store.close()
    store.flush()  # a late signal handler may still call it
    with pytest.raises(StoreError, match="closed"):
        store.runs()


# -- runs whose process is gone --------------------------------------------------------------

def _set(store, sql, params):
    execute(store, sql, params)


def test_a_running_run_of_a_gone_process_is_listed_incomplete(store):
    run_id = begin(store)
    child = subprocess.Popen([sys.executable, "-c", "pass"])
    child.wait()
    _set(store, "UPDATE runs SET pid = ? WHERE run_id = ?", (child.pid, run_id))
    assert store.runs()[0]["status"] == "incomplete" and store.run(run_id)["status"] == "incomplete"


def test_a_run_of_this_live_process_is_listed_running(store):
    run_id = begin(store)
    assert store.runs()[0]["status"] == "running" == store.run(run_id)["status"]


@pytest.mark.skipif(process_token(os.getpid()) is None, reason="process start times need /proc")
def test_a_reused_pid_is_not_taken_for_the_run(store):
    run_id = begin(store)
    _set(store, "UPDATE runs SET process_token = 'another-boot:12' WHERE run_id = ?", (run_id,))
    assert store.runs()[0]["status"] == "incomplete"


def test_a_run_begun_on_another_host_stays_running(store):
    run_id = begin(store)
    _set(store, "UPDATE runs SET host = 'bay-pc-7', pid = 1 WHERE run_id = ?", (run_id,))
    assert store.runs()[0]["status"] == "running"


def test_closing_without_finishing_leaves_the_run_incomplete(tmp_path, open_store):
    with open_store() as store:
        run_id = begin(store)
        add(store, run_id, 3)
    with open_store() as store:
        assert store.runs() == [{**store.runs()[0], "status": "incomplete", "samples": 3}]
