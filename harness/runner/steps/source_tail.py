"""Where a source's applied voltage comes to rest, read off the tail of its settling.

After a setpoint change a programmable source slews, then approaches its setpoint as a
first-order lag; under load it rests below the setpoint by the drop in its own output impedance
and the leads (proportional to the current, so unknown until the unit's current flows). A ramp
that waits for the source to stand still before it learns that drop loses several time
constants. Instead the gap between setpoint and applied voltage along the tail is fitted to

    gap(t) = drop + B * exp(-(t - t0) / tau)

(drop and B by least squares for each tau on a logarithmic grid; the tau with the least squared
error wins). The exponential is the textbook step response of a first-order system (common
practice, no source); B > 0 means the source is still rising towards its rest. The fit is used
only when it is plausible: enough readings after the slew has ended, a decaying tail, a tau
inside the grid, and the same answer from the tail without its last readings.

numpy's least squares does the fitting: two linear parameters per grid point need nothing more.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

TAU_GRID_S = np.geomspace(0.01, 5.0, 40)    # 17 % apart, then ...
TAU_STEP = TAU_GRID_S[1] / TAU_GRID_S[0]
FINE_STEPS = 9                                # ... narrowed around the best, each pass to
REFINEMENTS = 3                               # a quarter of the spacing: 0.25 % apart at the end
MIN_READINGS = 6          # readings in the tail before a fit is tried
LEAVE_OUT = 2             # the fit without the last readings must agree ...
NEAR_REST = 20            # ... and the decay left at the last reading be within this many times that agreement


@dataclass
class SettlingTail:
    """The source's approach to its setpoint: where its slew has got to (it slews at the rate the
    runner set, from the setpoints it was sent), the readings of the applied voltage averaged wholly
    after the slew ended, and the small setpoint trims sent since (each a step of its own that
    decays with the same time constant)."""
    slew: float
    averaging: float
    setpoint: float
    at: float
    level: float = field(init=False)   # where the slew has got to at ``at``: at rest on the setpoint to begin with
    slew_end: float = 0.0
    times: list[float] = field(default_factory=list)
    applied: list[float] = field(default_factory=list)
    trims: list[tuple[float, float]] = field(default_factory=list)

    def __post_init__(self) -> None:
        self.level = self.setpoint

    def command(self, t: float, setpoint: float, trim: bool) -> None:
        """A setpoint sent at ``t``; a trim keeps the tail (its step is fitted), a move starts a new one."""
        self.level += max(-self.slew * (t - self.at), min(self.slew * (t - self.at), self.setpoint - self.level))
        if trim and self.times:
            self.trims.append((t, setpoint - self.setpoint))
        else:
            self.times, self.applied, self.trims = [], [], []
            self.slew_end = t + abs(setpoint - self.level) / self.slew
        self.setpoint, self.at = setpoint, t

    def add(self, t: float, applied: float) -> None:
        if t - self.averaging > self.slew_end and (not self.times or t > self.times[-1]):
            self.times.append(t)
            self.applied.append(applied)

    def rest_share(self, agree: float) -> float | None:
        """The applied voltage at rest per volt of setpoint, when the tail says so within ``agree``
        (relative); None while it cannot."""
        if len(self.times) < MIN_READINGS + LEAVE_OUT:
            return None
        t = np.asarray(self.times)
        gap = self.setpoint - np.asarray(self.applied)
        whole = fit_drop(t, gap, self.trims, self.averaging)
        early = fit_drop(t[:-LEAVE_OUT], gap[:-LEAVE_OUT], self.trims, self.averaging)
        if whole is None or early is None or abs(whole[0] - early[0]) > agree * self.setpoint:
            return None
        drop, left = whole
        if left > NEAR_REST * agree * self.setpoint:
            return None   # too far from rest: a small error in the tail's shape is a large one in its end
        return (self.setpoint - drop) / self.setpoint


def fit_drop(t: np.ndarray, gap: np.ndarray, trims: Sequence[tuple[float, float]] = (),
             update: float = 0.0) -> tuple[float, float] | None:
    """The constant the gap decays to and what is left of the decay at the last reading, or None
    when no decaying first-order tail fits.

    An averaging analyser's values change only at its update instants, every ``update`` seconds
    on a grid of its own; a reading returns the last update's values, so its own time stamp is
    late by up to one update. The grid's phase is fitted with the time constant: a reading counts
    at the last grid instant before it was taken. Each reading is weighted by the inverse of its
    gap (a time error costs in proportion to the slope, largest at the start of the tail)."""
    origin = t[0]
    t = t - origin
    if update > 0:
        # Which update each reading's values come from changes only where the grid's phase passes
        # a reading's stamp: one phase inside each such interval tries every way they can fall
        # (shifting all instants alike only rescales the amplitude).
        edges = np.unique(np.mod(t, update))
        phases = ((edges + np.append(edges[1:], edges[0] + update)) / 2)[:, None]  # the midpoints, round the turn
        times = np.floor((t[None, :] - phases) / update) * update + phases      # [phase, reading]
    else:
        times = t[None, :]
    trims = [(at - origin, delta) for at, delta in trims]
    coarse = _best_fit(times, gap, trims, TAU_GRID_S)
    if coarse is None:
        return None
    tau = coarse[0]
    if tau in (TAU_GRID_S[0], TAU_GRID_S[-1]):
        return None   # a time constant the grid cannot place: no tail to trust
    best, step = coarse, TAU_STEP
    for _ in range(REFINEMENTS):   # each pass spans the last one's neighbours with FINE_STEPS points
        refined = _best_fit(times, gap, trims, np.geomspace(tau / step, tau * step, FINE_STEPS))
        if refined is None:
            return None
        best, tau, step = refined, refined[0], step ** (2 / (FINE_STEPS - 1))
    return best[1:]


def _best_fit(times: np.ndarray, gap: np.ndarray, trims: list[tuple[float, float]],
              taus_s: np.ndarray) -> tuple[float, float, float] | None:
    """(tau, drop, decay left at the last reading) of the least weighted squared error over
    ``taus_s`` and the grid phases; None when the best has no decay (amplitude <= 0)."""
    taus = taus_s[:, None, None]
    decay = np.exp(-(times[None] - times[None, :, :1]) / taus)                 # [tau, phase, reading]
    own = np.broadcast_to(gap, decay.shape).copy()
    for at, delta in trims:   # what is left of each trim's step: all of it before it was sent
        own -= delta * np.exp(-np.clip(times[None] - at, 0.0, None) / taus)
    w = 1 / np.maximum(gap, 1e-3 * gap.max()) ** 2
    # weighted least squares of own = drop + amplitude * decay, in closed form for every (tau, phase)
    sw, sx, sy = w.sum(), (w * decay).sum(-1), (w * own).sum(-1)
    sxx, sxy = (w * decay * decay).sum(-1), (w * decay * own).sum(-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        amplitude = (sw * sxy - sx * sy) / (sw * sxx - sx * sx)
        drop = (sy - amplitude * sx) / sw
        error = (w * (own - drop[..., None] - amplitude[..., None] * decay) ** 2).sum(-1)
    error = np.where(np.isfinite(error), error, np.inf)
    i_tau, i_phase = np.unravel_index(int(np.argmin(error)), error.shape)
    if not np.isfinite(error[i_tau, i_phase]) or amplitude[i_tau, i_phase] <= 0:
        return None   # not decaying
    return (float(taus_s[i_tau]), float(drop[i_tau, i_phase]),
            float(amplitude[i_tau, i_phase] * decay[i_tau, i_phase, -1]))
