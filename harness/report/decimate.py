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
    """Thins several quantities of one trace read chunk by chunk, its length not known before:
    the kept samples are those that are an extreme of any quantity in their bucket, plus the
    trace's first and last.

    Buckets start one sample wide and double whenever the trace outgrows ``points`` (the
    extremes of ``len(keys)`` quantities, two per bucket). A bucket of width 2s is two buckets
    of width s (all counted from the trace's first sample), so its extremes are among theirs:
    the samples kept so far are re-thinned at the wider buckets, and the result is the same as
    thinning the whole trace at the final width, the least power of two that keeps it within
    ``points``. No count of the trace's samples is needed first (a pass over the store saved).
    """

    def __init__(self, keys: Sequence[str], axis: str, points: int = MAX_POINTS):
        self.keys, self.axis = tuple(keys), axis
        self.buckets = max(1, points // (2 * len(self.keys)))
        self.size = 1
        self.seen = 0
        self._names = (self.axis, *self.keys)
        self._position = np.empty(0, dtype=np.int64)
        self._kept = {k: np.empty(0) for k in self._names}
        self._parts: list[tuple[np.ndarray, dict[str, np.ndarray]]] = []
        self._held = 0
        self._last: dict[str, np.ndarray] = {}

    def add(self, columns: Mapping[str, np.ndarray]) -> None:
        """The next consecutive samples of the trace, one array per key and the axis."""
        n = len(columns[self.axis])
        if not n:
            return
        while -(-(self.seen + n) // self.size) > self.buckets:
            self.size *= 2
        parts = [extremes(np.asarray(columns[k], dtype=float), self.seen, self.size) for k in self.keys]
        keep = np.unique(np.concatenate([*parts, [0] if self.seen == 0 else []]).astype(np.int64))
        self._parts.append((keep + self.seen, {k: np.asarray(columns[k], dtype=float)[keep] for k in self._names}))
        self._last = {k: np.asarray(columns[k], dtype=float)[n - 1:] for k in self._names}
        self.seen += n
        self._held += len(keep)
        if self._held > 8 * self.buckets * len(self.keys):
            self._rethin()

    def _rethin(self) -> None:
        """Keep, of the samples held, each bucket's extremes at the present width (and the first)."""
        position = np.concatenate([self._position, *(p for p, _ in self._parts)])
        values = {k: np.concatenate([self._kept[k], *(part[k] for _, part in self._parts)]) for k in self._names}
        self._parts, self._held = [], 0
        bucket = position // self.size
        starts = np.flatnonzero(np.r_[True, bucket[1:] != bucket[:-1]]) if len(bucket) else bucket
        chosen = [np.zeros(1, dtype=np.int64)] if len(position) and position[0] == 0 else []
        for k in self.keys:
            y = values[k]
            missing = np.isnan(y)
            for ranked in (np.where(missing, np.inf, y), np.where(missing, np.inf, -y)):
                # per bucket the lowest value, the earliest of equals (as argmin over the bucket)
                order = np.lexsort((position, ranked, bucket))
                chosen.append(order[starts])
        keep = np.unique(np.concatenate(chosen)) if chosen else np.empty(0, dtype=np.int64)
        self._position = position[keep]
        self._kept = {k: v[keep] for k, v in values.items()}

    def result(self) -> dict[str, np.ndarray]:
        self._rethin()
        if not self.seen:
            return {k: np.empty(0) for k in self._names}
        if self._position[-1] == self.seen - 1:
            return dict(self._kept)
        return {k: np.concatenate([self._kept[k], self._last[k]]) for k in self._names}
