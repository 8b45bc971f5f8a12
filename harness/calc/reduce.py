"""Reduction of raw samples to readings with numpy: mean, spread, stability of a window.

Works on whole arrays (one pass of numpy per statistic), so a million samples reduce in a few
milliseconds; the runner calls it for every reading window.
"""

from __future__ import annotations

import time

import numpy as np


def window_stats(values: np.ndarray) -> dict[str, float]:
    """Statistics of one window of samples of one quantity.

    ``drift_pct``: the change across the window of a least-squares straight line, in % of the
    mean; a settled reading has a small drift even when its noise is large.
    """
    x = np.asarray(values, dtype=float)
    count = x.size
    if count == 0:
        raise ValueError("a window of samples needs at least one sample")
    mean = float(x.mean())
    std = float(x.std(ddof=1)) if count > 1 else 0.0
    return {"count": count, "mean": mean, "std": std, "sem": std / count**0.5,
            "min": float(x.min()), "max": float(x.max()),
            "relative_std_pct": _pct(std, mean), "drift_pct": _pct(_drift(x), mean)}


def _pct(value: float, reference: float) -> float:
    return 100.0 * abs(value) / abs(reference) if reference else float("inf")


def _drift(x: np.ndarray) -> float:
    """Slope of the least-squares line times the window length, in the samples' unit."""
    n = x.size
    if n < 2:
        return 0.0
    t = np.arange(n, dtype=float) - (n - 1) / 2.0
    slope = float(t @ (x - x.mean())) / float(t @ t)
    return slope * (n - 1)


def is_stable(values: np.ndarray, relative_std_pct: float, drift_pct: float | None = None) -> bool:
    """Stable when the noise (and, if asked, the drift) of the window is within the criterion."""
    stats = window_stats(values)
    limit = relative_std_pct if drift_pct is None else drift_pct
    return stats["relative_std_pct"] <= relative_std_pct and stats["drift_pct"] <= limit


def channels_stats(samples: np.ndarray) -> dict[str, np.ndarray]:
    """Column-wise mean, standard deviation and count of a (samples x quantities) array."""
    x = np.asarray(samples, dtype=float)
    count = x.shape[0]
    std = x.std(axis=0, ddof=1) if count > 1 else np.zeros(x.shape[1:])
    return {"count": np.full(x.shape[1:], count), "mean": x.mean(axis=0), "std": std,
            "sem": std / np.sqrt(count)}


def bench(n: int = 1_000_000, seed: int = 1) -> dict[str, float]:
    """Time the reduction of ``n`` synthetic samples, each a row of U, I, P as the store keeps them.

    The synthetic data are made before the clock starts; only the reduction is timed.
    """
    if n < 2:
        raise ValueError("the benchmark needs at least two samples")
    rng = np.random.default_rng(seed)
    nominal = np.array([270.0, 4.3, 1050.0])
    samples = nominal * (1.0 + 1e-3 * rng.standard_normal((n, 3)))
    start = time.perf_counter()
    for column in samples.T:
        window_stats(column)
    seconds = time.perf_counter() - start
    return {"samples": n, "quantities": 3, "seconds": seconds, "samples_per_second": n / seconds}
