"""Equivalent circuit: the shunt (core) branch from the no-load test, the series branch from the
load-loss test, both per phase (star-equivalent) and referred to either winding.
"""

from __future__ import annotations

import math

from harness.calc.basis import Basis


def shunt_branch(u_phase: float, p_phase: float, i_phase: float) -> tuple[float, float | None]:
    """Rc = U^2/P, Xm = U/Im with Im = sqrt(I^2 - (P/U)^2); Xm is None when I <= P/U."""
    rc = u_phase**2 / p_phase
    i_loss = p_phase / u_phase
    i_mag_sq = i_phase**2 - i_loss**2
    return rc, (u_phase / math.sqrt(i_mag_sq) if i_mag_sq > 0 else None)


def magnetising_current(u_phase: float, p_phase: float, i_phase: float) -> float:
    return math.sqrt(max(i_phase**2 - (p_phase / u_phase) ** 2, 0.0))


def series_branch(z_pu: float, r_pu: float) -> tuple[float, float]:
    """(r, x) per unit from |z| and r; x = sqrt(z^2 - r^2)."""
    return r_pu, math.sqrt(max(z_pu**2 - r_pu**2, 0.0))


def refer(value: float | None, basis: Basis, from_winding: str, to_winding: str) -> float | None:
    """Refer an impedance across the unit by the square of the rated-voltage ratio."""
    if value is None:
        return None
    ratio = basis.rated_voltage_V[to_winding] / basis.rated_voltage_V[from_winding]
    return value * ratio**2


def from_per_unit(value_pu: float | None, basis: Basis, winding: str) -> float | None:
    return None if value_pu is None else value_pu * basis.base_impedance(winding)
