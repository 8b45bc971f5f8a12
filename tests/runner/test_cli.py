"""The command line as a user meets it: evaluate with a report, bad records, listing and
rebuilding runs, benchmarks that print their contract keys."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from tests.runner.conftest import ROOT, harness

RECORDS = ROOT / "sequences" / "records"


def test_evaluate_writes_the_html_report(tmp_path: Path) -> None:
    out = tmp_path / "hand" / "report.html"
    proc = harness("evaluate", str(RECORDS / "single_phase_pole_mount.yaml"), "--html", str(out), "--json", data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert {"no_load", "load", "checks"} <= set(json.loads(proc.stdout))
    html = out.read_text()
    assert "<svg" in html and "not a protective device" in html


def test_malformed_record_exits_2_with_its_position(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    text = (RECORDS / "single_phase_pole_mount.yaml").read_text().replace("rated_power:", "rated_powr:", 1)
    bad.write_text(text)
    proc = harness("evaluate", str(bad), data=tmp_path)
    line = next(n for n, l in enumerate(text.splitlines(), 1) if "rated_powr" in l)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert proc.stderr.startswith(f"{bad}:{line}:")


def test_bad_option_values_exit_2(tmp_path: Path) -> None:
    proc = harness("evaluate", str(RECORDS / "single_phase_pole_mount.yaml"), "--load", "0,-1", data=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr and "--load" in proc.stderr
    proc = harness("run", str(ROOT / "sequences" / "routine_single_phase.yaml"), "--fault", "gremlins", data=tmp_path)
    assert proc.returncode == 2 and "unknown fault 'gremlins'" in proc.stderr


def test_report_rebuilds_from_a_run_folder(demo_run) -> None:
    _, doc, data = demo_run
    folder = Path(doc["folder"])
    (folder / "report.html").unlink()
    proc = harness("report", str(folder), data=data)
    assert proc.returncode == 0, proc.stderr
    assert (folder / "report.html").is_file() and (folder / "samples.csv").is_file()
    rows = (folder / "samples.csv").read_text().splitlines()
    assert len(rows) == doc["samples"] + 1
    listing = harness("runs", data=data)
    assert doc["run_id"] in listing.stdout


def test_unknown_run_is_a_clear_error(tmp_path: Path) -> None:
    proc = harness("report", "19990101-000000-dead", data=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr


@pytest.mark.parametrize("args,keys", [
    (("reduce",), {"samples", "seconds"}),
    (("report", "--samples", "200"), {"samples", "wall_s", "peak_rss_mb"}),
])
def test_benchmarks_print_their_figures(tmp_path: Path, args: tuple[str, ...], keys: set[str]) -> None:
    # The slow benchmarks (whole simulated runs) are checked in tests/runner/test_bench.py on their parts.
    proc = harness("bench", *args, "--json", data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert keys <= set(json.loads(proc.stdout))


def test_bench_options_belong_to_their_benchmark(tmp_path: Path) -> None:
    for args in (("sequence",), ("reduce", "--samples", "10"), ("ramp", "sequences/routine_single_phase.yaml"),
                 ("startup", "--time-scale", "5")):
        proc = harness("bench", *args, data=tmp_path)
        assert proc.returncode == 2 and "bench" in proc.stderr and "Traceback" not in proc.stderr


def test_bench_sequence_runs_at_the_time_scale_asked(tmp_path: Path) -> None:
    """30: not the run's default of 20, and not so fast that a busy host stretches the bay time
    between two readings much (the benchmark needs the run to complete)."""
    proc = harness("bench", "sequence", str(ROOT / "sequences" / "routine_single_phase.yaml"), "--time-scale", "30",
                   "--json", data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    figures = json.loads(proc.stdout)
    assert figures["time_scale"] == 30.0 and figures["floor_s"] > 0


def test_a_record_given_to_run_says_what_to_do(tmp_path: Path) -> None:
    proc = harness("run", str(RECORDS / "single_phase_pole_mount.yaml"), "--yes", data=tmp_path)
    assert proc.returncode == 2 and "harness evaluate" in proc.stderr and "Traceback" not in proc.stderr


def test_unknown_scenario_is_a_usage_error(tmp_path: Path) -> None:
    proc = harness("run", str(ROOT / "sequences" / "routine_single_phase.yaml"), "--sim", "nosuch", data=tmp_path)
    assert proc.returncode == 2 and proc.stderr.startswith("harness: --sim: no scenario named 'nosuch'")


@pytest.mark.parametrize("given, expected", [(None, "1"), ("4", "4")])
def test_the_command_line_keeps_numpy_to_one_blas_thread_unless_told(given: str | None, expected: str) -> None:
    """numpy's BLAS thread pool spins at load (about 0.1 s of CPU per command): the command line
    asks for one thread before numpy loads, and a user's own setting stands."""
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    if given is not None:
        env["OPENBLAS_NUM_THREADS"] = given
    code = ("import sys, os; import harness.cli; assert 'numpy' not in sys.modules; "
            "print(os.environ['OPENBLAS_NUM_THREADS'])")
    proc = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == expected
