"""Thinning long traces for a figure, in numpy, keeping each bucket's lowest and highest sample.

A long ramp or hold would otherwise make a heavy page; keeping the extremes keeps a spike (the
one that tripped the run) visible where plain thinning could drop it. Buckets are fixed runs of
consecutive samples, counted from a trace's first sample, so a trace read in chunks is thinned
chunk by chunk (:class:`TraceThinner`) with the same buckets as when read whole.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

MAX_POINTS = 1500


def extremes(y: np.ndarray, start: int, size: int) -> np.ndarray:
    """Indices into ``y`` of the lowest and highest value of each bucket, sorted and unique.

    ``y`` holds the samples at positions ``start``, ``start + 1``, ... of a trace whose buckets
    are positions ``[k * size, (k + 1) * size)``. NaN counts as neither low nor high; a bucket of
    NaN only gives one of its NaN samples (a gap in the drawn line).
    """
    n = len(y)
    if n == 0:
        return np.empty(0, dtype=np.int64)
    if size <= 1:
        return np.arange(n)
    lead = start % size
    rows = -(-(lead + n) // size)
    grid = np.full(rows * size, np.nan)
    grid[lead:lead + n] = y
    grid = grid.reshape(rows, size)
    missing = np.isnan(grid)
    low = np.where(missing, np.inf, grid).argmin(axis=1)
    high = np.where(missing, -np.inf, grid).argmax(axis=1)
    first = np.arange(rows) * size - lead
    found = np.concatenate([low + first, high + first])
    return np.unique(found[(found >= 0) & (found < n)])


def bucket_size(count: int, points: int = MAX_POINTS, series: int = 1) -> int:
    """Samples per bucket so that ``series`` quantities' extremes stay within about ``points``."""
    buckets = max(1, points // (2 * series))
    return max(1, math.ceil(count / buckets))


def decimate(t: Sequence[float] | np.ndarray, y: Sequence[float] | np.ndarray,
             points: int = MAX_POINTS) -> tuple[Any, Any]:
    """At most about ``points`` points of (t, y), keeping each bucket's lowest and highest sample
    and the first and last; short traces come back as given."""
    if len(t) <= points:
        return t, y
    ys = np.asarray(y, dtype=float)
    keep = np.union1d(extremes(ys, 0, bucket_size(len(ys), points)), [0, len(ys) - 1])
    ts = np.asarray(t, dtype=float)
    if isinstance(t, np.ndarray):
        return ts[keep], ys[keep]
    return ts[keep].tolist(), ys[keep].tolist()


class TraceThinner:
    """Thins several quantities of one trace read chunk by chunk; the kept samples are those that
    are an extreme of any quantity in their bucket, plus the trace's first and last."""

    def __init__(self, count: int, keys: Sequence[str], axis: str, points: int = MAX_POINTS):
        self.count, self.keys, self.axis = count, tuple(keys), axis
        self.size = bucket_size(count, points, len(self.keys))
        self.seen = 0
        self._kept: list[dict[str, np.ndarray]] = []

    def add(self, columns: Mapping[str, np.ndarray]) -> None:
        """The next consecutive samples of the trace, one array per key and the axis."""
        n = len(columns[self.axis])
        parts = [extremes(np.asarray(columns[k], dtype=float), self.seen, self.size) for k in self.keys]
        ends = [i for i, position in ((0, self.seen), (n - 1, self.seen + n - 1)) if position in (0, self.count - 1)]
        keep = np.unique(np.concatenate([*parts, np.asarray(ends, dtype=np.int64)])) if n else np.empty(0, np.int64)
        self._kept.append({k: np.asarray(columns[k])[keep] for k in (self.axis, *self.keys)})
        self.seen += n

    def result(self) -> dict[str, np.ndarray]:
        names = (self.axis, *self.keys)
        if not self._kept:
            return {k: np.empty(0) for k in names}
        return {k: np.concatenate([part[k] for part in self._kept]) for k in names}
