"""Reduction of raw samples, against the standard library's statistics module."""

from __future__ import annotations

import statistics

import numpy as np
import pytest

from harness.calc.reduce import bench, channels_stats, is_stable, window_stats


def test_window_stats_match_the_statistics_module():
    rng = np.random.default_rng(7)
    values = 230.0 + rng.standard_normal(1001)
    stats = window_stats(values)
    assert stats["count"] == 1001
    assert stats["mean"] == pytest.approx(statistics.fmean(values.tolist()), rel=1e-12)
    assert stats["std"] == pytest.approx(statistics.stdev(values.tolist()), rel=1e-9)
    assert stats["sem"] == pytest.approx(stats["std"] / 1001**0.5)
    assert (stats["min"], stats["max"]) == (values.min(), values.max())


def test_drift_of_a_straight_ramp_is_its_change_across_the_window():
    values = np.linspace(100.0, 102.0, 50)
    assert window_stats(values)["drift_pct"] == pytest.approx(100 * 2.0 / 101.0)
    assert window_stats(np.full(50, 5.0))["drift_pct"] == pytest.approx(0.0)


def test_stability():
    rng = np.random.default_rng(3)
    steady = 100.0 + 0.01 * rng.standard_normal(200)
    assert is_stable(steady, 0.1)
    assert not is_stable(np.linspace(100.0, 101.0, 200), 0.5, drift_pct=0.5)


def test_channels_match_single_windows():
    rng = np.random.default_rng(5)
    samples = rng.standard_normal((300, 3)) + [1.0, 2.0, 3.0]
    reduced = channels_stats(samples)
    for k in range(3):
        single = window_stats(samples[:, k])
        assert reduced["mean"][k] == pytest.approx(single["mean"])
        assert reduced["std"][k] == pytest.approx(single["std"])


def test_one_sample_and_empty_windows():
    assert window_stats(np.array([2.0]))["std"] == 0.0
    with pytest.raises(ValueError):
        window_stats(np.array([]))


def test_bench_reports_its_figures():
    figures = bench(10_000)
    assert figures["samples"] == 10_000
    assert figures["seconds"] > 0 and figures["samples_per_second"] == pytest.approx(10_000 / figures["seconds"])
