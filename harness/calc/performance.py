"""Efficiency, maximum efficiency, all-day efficiency and regulation: pure functions on floats.

Loads in per unit of rated power, losses in W, impedances in %.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Iterable


def efficiency(n: float, pf: float, rated_power: float, p0: float, pk: float) -> float:
    """eta = n S pf / (n S pf + P0 + n^2 Pk), as a fraction."""
    output = n * rated_power * pf
    return output / (output + p0 + n * n * pk)


def max_efficiency_load(p0: float, pk: float) -> float:
    """The load at which the load loss equals the no-load loss: n = sqrt(P0/Pk)."""
    return math.sqrt(p0 / pk)


def all_day_efficiency(blocks: Iterable[tuple[float, float, float]], rated_power: float,
                       p0: float, pk: float) -> tuple[float, float, float]:
    """(efficiency, energy out J, energy lost J) over blocks of (seconds, load pu, power factor).

    The unit stays energised all day, so the no-load loss counts for every block.
    """
    out = lost = 0.0
    for seconds, n, pf in blocks:
        out += n * rated_power * pf * seconds
        lost += (p0 + n * n * pk) * seconds
    return out / (out + lost), out, lost


def _phi(pf: float, lagging: bool) -> float:
    return math.acos(pf) * (1.0 if lagging else -1.0)


def regulation(n: float, pf: float, lagging: bool, ur_pct: float, ux_pct: float) -> float:
    """Exact regulation in %: output held at rated voltage, V_in = V_out + I (R + jX) per unit."""
    drop = n * cmath.exp(-1j * _phi(pf, lagging)) * complex(ur_pct, ux_pct) / 100.0
    # |1 + drop| - 1 written without the cancellation of two numbers near 1 (small loads).
    v_in_sq_minus_1 = 2.0 * drop.real + abs(drop) ** 2
    return 100.0 * v_in_sq_minus_1 / (abs(1.0 + drop) + 1.0)


def voltage_drop(n: float, pf: float, lagging: bool, ur_pct: float, ux_pct: float) -> float:
    """IEC 60076-8 approximate voltage drop in %: n(ur cos + ux sin) + n^2 (ux cos - ur sin)^2 / 200."""
    phi = _phi(pf, lagging)
    cos, sin = math.cos(phi), math.sin(phi)
    return n * (ur_pct * cos + ux_pct * sin) + (n * (ux_pct * cos - ur_pct * sin)) ** 2 / 200.0
