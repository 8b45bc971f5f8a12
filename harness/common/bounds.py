"""Plausible upper bounds of the numbers in input files, shared by the file models.

A value above one of these cannot be what a test bay does; refusing it at load time means
``harness check`` catches it, with its place in the file, instead of a run failing (or a timer
overflowing) after the source is on. The bounds are wide on purpose: they catch typos and
nonsense, not unusual bays. Ranges of the trade are recalled from memory; the exact figures are
our own choice (common practice, no source).
"""

from __future__ import annotations

# Time. A temperature-rise (heat) run lasts hours to about a day; a week is beyond any step or limit.
MAX_DURATION_S = 7 * 24 * 3600.0
# Between two readings, or between two checks of the bay: an hour is already far apart.
MAX_INTERVAL_S = 3600.0
# An instrument's reply timeout (real seconds): a slow resistance measurement takes tens of seconds.
MAX_REPLY_TIMEOUT_S = 600.0

# Counts of readings in one step, and of points of a sweep.
MAX_READINGS = 10_000
MAX_SWEEP_POINTS = 200

# Primary quantities at a test bay. The highest a.c. system voltages are about 1.2 MV; the
# largest units' low-voltage currents are tens of kA; losses measured in a test are at most a
# few MW. Each bound is well above these.
MAX_VOLTAGE_V = 2.0e6
MAX_CURRENT_A = 2.0e5
MAX_POWER_W = 1.0e8
# Winding temperature: above the hottest insulation class (220) with room; a limit at or below
# 0 degC would trip at once.
MAX_WINDING_TEMPERATURE_C = 250.0

# Rates of the source voltage (rms): slower than 0.1 V/s a ramp to a few hundred volts takes an
# hour; faster than 1 MV/s is a step, not a ramp.
MIN_SLEW_V_PER_S = 0.1
MAX_SLEW_V_PER_S = 1.0e6

# Instrument-transformer ratios (primary/secondary): 1.2 MV/100 V is 12 000; 50 kA/1 A is 50 000.
MAX_TRANSFORMER_RATIO = 1.0e6

# SCPI channel numbers of a multi-channel instrument.
MAX_CHANNEL = 9999
