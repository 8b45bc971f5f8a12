"""Periodic waveforms held as harmonic phasors: rms and mean-rectified value without simulation.

The rms follows from the phasors directly (Parseval). The mean-rectified value needs the shape;
it is taken from one period sampled through a table of cosines and sines precomputed once per
set of harmonic orders, so a query costs a couple of small dot products.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

SAMPLES = 512
# Mean-rectified value of a sine times this gives its rms (the "rms-scaled mean" of the test codes).
MEAN_TO_RMS = math.pi / (2.0 * math.sqrt(2.0))

Phasors = tuple[complex, ...]  # rms phasors, one per harmonic order of the table


@lru_cache(maxsize=32)
def _table(orders: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray]:
    angle = 2.0 * math.pi * np.arange(SAMPLES) / SAMPLES
    cos = np.array([np.cos(h * angle) for h in orders]) * math.sqrt(2.0)
    sin = np.array([np.sin(h * angle) for h in orders]) * math.sqrt(2.0)
    return cos, sin


def rms(phasors: Phasors) -> float:
    return math.sqrt(sum(abs(p) ** 2 for p in phasors))


def mean_rectified_scaled(orders: tuple[int, ...], phasors: Phasors) -> float:
    """Mean of |u(t)| over a period times pi/(2 sqrt 2): equals the rms for a pure sine."""
    cos, sin = _table(orders)
    re = np.fromiter((p.real for p in phasors), float, len(phasors))
    im = np.fromiter((p.imag for p in phasors), float, len(phasors))
    wave = re @ cos - im @ sin
    return float(np.abs(wave).mean()) * MEAN_TO_RMS


def shape(orders: tuple[int, ...], amplitudes: tuple[float, ...], phases: tuple[float, ...]) -> Phasors:
    """Harmonic phasors of unit rms: fundamental at angle 0, harmonics relative to it."""
    raw = tuple(a * complex(math.cos(ph), math.sin(ph)) for a, ph in zip(amplitudes, phases))
    scale = rms(raw)
    return tuple(p / scale for p in raw)
