"""A reading: one analyser snapshot of 1 or 3 phases in primary quantities.

Per phase (per analyser channel): rms voltage, mean-value voltage scaled to rms, rms current,
active power. For a three-phase unit the voltages are line-to-line and the currents line
currents. The reading's own values are the ones the test codes set (IEC 60076-1, recalled):
the arithmetic mean of the three line-to-line voltages (rms and mean-value), the mean of the
three line currents, and the total power. A single-phase reading is the one-channel case.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

SQRT3 = math.sqrt(3.0)
QUANTITIES = ("u_rms", "u_mean", "i_rms", "p")


@dataclass(frozen=True, slots=True, init=False)
class Phase:
    u_rms: float
    u_mean: float
    i_rms: float
    p: float

    def __init__(self, u_rms: float, u_mean: float, i_rms: float, p: float):
        # A frozen dataclass assigns through object.__setattr__; the slot descriptors do the
        # same in about half the time, and this runs per phase of every reading.
        _SET_U_RMS(self, u_rms)
        _SET_U_MEAN(self, u_mean)
        _SET_I_RMS(self, i_rms)
        _SET_P(self, p)


_SET_U_RMS, _SET_U_MEAN, _SET_I_RMS, _SET_P = (Phase.__dict__[name].__set__ for name in QUANTITIES)


@dataclass(frozen=True, slots=True, init=False)
class Sample:
    """One checked reading (wiring ratios applied). ``id`` is the store id of its first channel;
    the others follow it. ``u_source`` is the mean applied voltage in the source's own terms
    (line-to-neutral of a three-phase source), which the ramp compares with its setpoint."""
    id: int
    t: float
    u_rms: float
    u_mean: float
    i_rms: float
    p: float
    freq: float
    setpoint: float
    phases: tuple[Phase, ...]
    u_source: float

    def __init__(self, id: int, t: float, u_rms: float, u_mean: float, i_rms: float, p: float, freq: float,
                 setpoint: float, phases: tuple[Phase, ...], u_source: float):
        # as Phase: the slot descriptors, once per reading
        _S_ID(self, id)
        _S_T(self, t)
        _S_U_RMS(self, u_rms)
        _S_U_MEAN(self, u_mean)
        _S_I_RMS(self, i_rms)
        _S_P(self, p)
        _S_FREQ(self, freq)
        _S_SETPOINT(self, setpoint)
        _S_PHASES(self, phases)
        _S_U_SOURCE(self, u_source)

    @property
    def last_id(self) -> int:
        return self.id + len(self.phases) - 1


_S_ID, _S_T, _S_U_RMS, _S_U_MEAN, _S_I_RMS, _S_P, _S_FREQ, _S_SETPOINT, _S_PHASES, _S_U_SOURCE = (
    Sample.__dict__[name].__set__ for name in ("id", "t", "u_rms", "u_mean", "i_rms", "p", "freq", "setpoint", "phases",
                                               "u_source"))


def combine(sample_id: int, t: float, phases: tuple[Phase, ...], freq: float, setpoint: float) -> Sample:
    """The reading's own values from its phases (means of U and I, total P)."""
    n = len(phases)
    if n == 1:
        ph = phases[0]
        return Sample(sample_id, t, ph.u_rms, ph.u_mean, ph.i_rms, ph.p, freq, setpoint, phases, ph.u_rms)
    u = sum(ph.u_rms for ph in phases) / n
    return Sample(sample_id, t, u, sum(ph.u_mean for ph in phases) / n, sum(ph.i_rms for ph in phases) / n,
                  sum(ph.p for ph in phases), freq, setpoint, phases, u / SQRT3)


def phase_name(index: int, phases: int) -> str:
    """How a trip or a table names channel ``index`` (0-based): L1, L2, L3 for three-phase."""
    return f"L{index + 1}" if phases == 3 else ""
