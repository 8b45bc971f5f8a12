"""Reading a source's rest voltage off the tail of its settling (harness/runner/steps/source_tail.py).

The tails are made here from the first-order step response, y(t) = y_end - (y_end - y0) exp(-t/tau),
the textbook response of a first-order lag (common practice, no source), sampled the way an
averaging analyser gives it: values change only at update instants on a grid of its own, and a
reading returns the last update's values. Noise is drawn from a fixed seed: no host timing here.
"""

from __future__ import annotations

import numpy as np
import pytest

from harness.runner.steps.source_tail import SettlingTail, fit_drop

UPDATE = 0.05
TAU = 0.2


def _tail(drop: float, amplitude: float, *, n: int = 10, phase: float = 0.013, every: float = 0.057,
          noise: float = 0.0, seed: int = 1, trims: tuple[tuple[float, float], ...] = ()) -> tuple[np.ndarray, np.ndarray]:
    """Reading times (stamped when read, late by up to one update) and the gap setpoint - applied."""
    rng = np.random.default_rng(seed)
    t_read = 1.0 + every * np.arange(n) + rng.uniform(0, 0.01, n)
    t_update = np.floor((t_read - phase) / UPDATE) * UPDATE + phase
    gap = drop + amplitude * np.exp(-(t_update - t_read[0]) / TAU)
    for at, delta in trims:   # a trim raises the setpoint at ``at``: its own step decays from then on
        gap += delta * np.where(t_update < at, 1.0, np.exp(-np.clip(t_update - at, 0, None) / TAU))
    return t_read, gap + rng.normal(0, noise, n)


@pytest.mark.parametrize("drop, amplitude", [(0.8, 15.0), (0.3, 6.0), (2.5, 20.0)])
def test_the_drop_is_recovered_from_a_tail_far_from_rest(drop: float, amplitude: float) -> None:
    t, gap = _tail(drop, amplitude)
    fitted = fit_drop(t, gap, update=UPDATE)
    assert fitted is not None
    assert fitted[0] == pytest.approx(drop, abs=0.02)
    # what is left of the decay at the last reading, against the response itself
    assert fitted[1] == pytest.approx(gap[-1] - drop, rel=0.05)


def test_the_update_grid_matters_stamps_alone_mislead() -> None:
    """Read every 1.14 updates, the stamps stretch the tail: fitted as stamped it rests elsewhere."""
    t, gap = _tail(0.8, 15.0)
    with_grid, stamped = fit_drop(t, gap, update=UPDATE), fit_drop(t, gap)
    assert with_grid is not None and abs(with_grid[0] - 0.8) < 0.02
    assert stamped is None or abs(stamped[0] - 0.8) > 0.1


def test_a_trim_sent_during_the_tail_is_its_own_step() -> None:
    t, gap = _tail(0.8, 15.0, trims=((1.2, 0.1),))
    fitted = fit_drop(t, gap, [(1.2, 0.1)], UPDATE)
    assert fitted is not None and fitted[0] == pytest.approx(0.8, abs=0.02)


@pytest.mark.parametrize("gap", [np.full(10, 0.8), np.linspace(0.5, 3.0, 10)])
def test_no_rest_is_read_from_a_gap_that_does_not_decay(gap: np.ndarray) -> None:
    t = 1.0 + 0.057 * np.arange(10)
    assert fit_drop(t, gap, update=UPDATE) is None


def _settling(drop: float, noise: float, n: int, seed: int = 3) -> SettlingTail:
    tail = SettlingTail(slew=100.0, averaging=UPDATE, setpoint=0.0, at=0.0)
    tail.command(0.0, 100.0, trim=False)        # the slew ends after 1 s
    t, gap = _tail(drop, 15.0, n=n, noise=noise, seed=seed)
    for ti, g in zip(t + 0.1, gap):              # read from 1.1 s on
        tail.add(float(ti), 100.0 - float(g))
    return tail


def test_the_rest_share_is_given_once_the_tail_agrees_with_itself() -> None:
    assert _settling(0.8, 0.0, 5).rest_share(0.00075) is None          # too few readings yet
    share = _settling(0.8, 0.0, 14).rest_share(0.00075)
    assert share == pytest.approx((100.0 - 0.8) / 100.0, abs=2e-4)


def test_a_noisy_tail_gives_no_rest_share_rather_than_a_wrong_one() -> None:
    """Noise of 1 V on a 15 V tail: the fits with and without the last readings disagree."""
    shares = [_settling(0.8, 1.0, 12, seed).rest_share(0.00075) for seed in range(20)]
    assert all(s is None or abs(s - 0.992) < 0.00075 * 3 for s in shares)


def test_readings_taken_while_the_source_slews_are_not_in_the_tail() -> None:
    tail = SettlingTail(slew=100.0, averaging=UPDATE, setpoint=0.0, at=0.0)
    tail.command(0.0, 100.0, trim=False)
    for t in (0.2, 0.5, 1.0, 1.04):                 # before the slew's end plus one update
        tail.add(t, 100.0 * t - 20.0)
    assert tail.times == []
    tail.add(1.06, 95.0)
    assert tail.times == [1.06]
    tail.command(1.1, 100.2, trim=True)             # a trim keeps the tail ...
    assert tail.times == [1.06] and tail.trims == [(1.1, pytest.approx(0.2))]
    tail.command(1.2, 110.0, trim=False)            # ... a move starts a new one, after its own slew
    assert tail.times == [] and tail.slew_end == pytest.approx(1.2 + (110.0 - 100.2) / 100.0, abs=0.01)
