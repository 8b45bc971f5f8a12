"""The report and start-up benchmarks' own arithmetic and what they promise scripts (their keys)."""

from __future__ import annotations

import pytest

from harness.runner.bench import report as bench_report_module
from harness.runner.bench.startup import installed_env, verdict


def test_a_figure_is_said_against_its_goal():
    assert verdict(2.5, 3.0) == "2.5 against < 3: met"
    assert verdict(3.0, 3.0) == "3 against < 3: NOT met"
    assert verdict(None, 0.5) == "not measured"


def test_children_keep_the_bytecode_cache(monkeypatch):
    monkeypatch.setenv("PYTHONDONTWRITEBYTECODE", "1")
    monkeypatch.setenv("HARNESS_DATA", "/somewhere")
    env = installed_env()
    assert "PYTHONDONTWRITEBYTECODE" not in env and env["HARNESS_DATA"] == "/somewhere"


def test_report_figures_keys_and_linearity(monkeypatch):
    # a made-up cost model, 1 s + 2 us per sample and 100 MB + 50 B per sample: linear, so the
    # marginal costs agree and linearity is 1
    def cost(samples):
        return {"wall_s": 1.0 + 2e-6 * samples, "cpu_s": 1.5 + 3e-6 * samples,
                "peak_rss_mb": 100.0 + 50 * samples / 2**20, "files": {"samples.csv": 1}}

    monkeypatch.setattr(bench_report_module, "_report_cost", cost)
    figures = bench_report_module.bench_report(1_000_000)
    assert figures["samples"] == 1_000_000 and figures["wall_s"] == pytest.approx(3.0)
    assert figures["peak_rss_mb"] == pytest.approx(147.7, abs=0.05)
    assert figures["us_per_sample"] == pytest.approx(2.0) and figures["cpu_us_per_sample"] == pytest.approx(3.0)
    assert figures["bytes_per_sample"] == pytest.approx(50.0, abs=0.1)
    assert figures["linearity"] == pytest.approx(1.0)
    assert figures["goals"] == {"wall_s": "3 against < 3: NOT met", "peak_rss_mb": "147.7 against < 150: met"}
    assert figures["at_a_tenth"]["samples"] == 100_000 and figures["at_a_half"]["samples"] == 500_000


def test_report_benchmark_refuses_a_run_too_small():
    with pytest.raises(ValueError, match="at least 10 samples"):
        bench_report_module.bench_report(5)
