"""How far a ramp's readings may go, worked out before anything is energised.

The checks (``checks.py``) refuse a target whose reach is not strictly inside the step's limits;
the ramp (``harness/runner/steps/ramp.py``) keeps to the same figures: its first setpoint assumes
the lowest plausible impedance, and its learned method never takes a reading past the top of the
tolerance band. Plain floats in SI units and percent.
"""

from __future__ import annotations

import math

# The lowest short-circuit impedance a two-winding unit plausibly has, in % (common practice, no
# source): distribution units are usually 4-6 %, small single-phase ones down to about 2 %, and a
# few special units lower. A current ramp's first setpoint is half the voltage that would drive
# its target through this impedance, so it stays below the target on any unit above 0.5 %.
LOWEST_PLAUSIBLE_IMPEDANCE_PCT = 1.0
FIRST_SETPOINT_SHARE = 0.5

# The fixed-increment method raises the setpoint by the slew of this many seconds per reading and
# stops at the first reading inside the band: it may pass the band by one increment.
FIXED_INCREMENT_S = 0.5

# Magnetising current above rated voltage: the core nears saturation and the current rises much
# faster than the voltage. Bound used here: proportional to the voltage up to rated, then a factor
# of 2 for every 10 % of over-voltage on top (common practice, no source; a rule of thumb for
# grain-oriented cores up to about 120 %, it understates the rise of a core pushed further into
# saturation, where the ramp's own guard and the supervisor still stop it).
OVEREXCITATION_FACTOR_PER_10PCT = 2.0


def band_top(target: float, tolerance_pct: float) -> float:
    """The highest reading a ramp to ``target`` may take."""
    return target * (1 + tolerance_pct / 100)


def fixed_increment_volts(slew: float) -> float:
    return slew * FIXED_INCREMENT_S


def ramp_reach(target: float, tolerance_pct: float, method: str, increment_reach: float) -> float:
    """The highest reading a ramp may take: the band's top, plus for the fixed-increment method
    ``increment_reach`` (one increment's worth of the ramped quantity)."""
    top = band_top(target, tolerance_pct)
    return top + increment_reach if method == "fixed-increment" else top


def current_per_volt(rated_voltage: float, rated_current: float, impedance_pct: float | None) -> float:
    """Amperes per applied volt of a shorted unit: at the guaranteed impedance when given, else at the
    lowest plausible one (the most current a volt can drive)."""
    z_pct = impedance_pct if impedance_pct is not None else LOWEST_PLAUSIBLE_IMPEDANCE_PCT
    return rated_current / (z_pct / 100 * rated_voltage)


def magnetising_current(no_load_current_pct: float, rated_current: float, voltage_pu: float) -> float:
    """The no-load current at ``voltage_pu`` of rated voltage, from the no-load current at rated
    voltage (% of the fed winding's rated current), bounded as described above."""
    at_rated = no_load_current_pct / 100 * rated_current
    over = max(0.0, voltage_pu - 1.0) / 0.10
    return at_rated * voltage_pu * math.pow(OVEREXCITATION_FACTOR_PER_10PCT, over)
