"""Voltage ratio and phase displacement (routine test): pure functions on floats.

Declared ratio of a tap: the rated line-to-line voltages, the tapped winding's scaled by
``1 + tap x step / 100`` (tap 0 is the principal tap). Ratio deviation in % of the declared ratio.

Tolerance, IEC 60076-1 Table 1 item 2 (read in a public copy of the 1993+A1:1999 table; the 2011
edition's table was not re-read): on the principal tap of the first pair of windings the lower of
+/-0.5 % of the declared ratio and +/-1/10 of the actual percentage impedance on the principal
tap; on the other taps of the same pair "to be agreed, but not less than the lesser" of those two
values. Without an agreement the harness takes that least value on every tap; a sequence or a
record overrides it (``tolerances.ratio``).

Phase displacement: the LV voltage's lag behind the corresponding HV voltage (line-to-line pairs
U-V, V-W, W-U), in degrees 0..360; the clock number is that lag in steps of 30 degrees (IEC
60076-1 Annex D, recalled). A measured lag belongs to the clock number it is nearest to, so a
clock check passes within +/-15 degrees of the declared displacement (half a step; common
practice, no source). A single-phase unit has clock 0 (same polarity); 6 is reversed polarity.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from harness.calc.tolerances import Check

RATIO_LIMIT_PCT = 0.5
IMPEDANCE_FRACTION = 0.1
CLOCK_STEP_DEG = 30.0
CLOCK_HALF_STEP_DEG = 15.0
PRINCIPAL_SOURCE = "IEC 60076-1 Table 1, voltage ratio, principal tap"
OTHER_TAP_SOURCE = "IEC 60076-1 Table 1, voltage ratio, other taps (least value)"
CLOCK_SOURCE = "IEC 60076-1 Annex D (recalled)"


def tap_factor(step_pct: float, tap: int) -> float:
    """The tapped winding's voltage at ``tap``, per unit of its rated (principal-tap) voltage."""
    return 1.0 + tap * step_pct / 100.0


def declared_ratio(u_hv: float, u_lv: float, tapped: str | None, step_pct: float, tap: int) -> float:
    """HV/LV no-load voltage ratio of ``tap`` (rated voltages line-to-line for three-phase)."""
    k = tap_factor(step_pct, tap) if tapped is not None else 1.0
    return u_hv * k / u_lv if tapped == "hv" else u_hv / (u_lv * k) if tapped == "lv" else u_hv / u_lv


def deviation_pct(measured: float, declared: float) -> float:
    return 100.0 * (measured - declared) / declared


def ratio_limit_pct(impedance_pct: float | None) -> float:
    """The principal tap's tolerance: the lower of 0.5 % and a tenth of the impedance (if known)."""
    if impedance_pct is None:
        return RATIO_LIMIT_PCT
    return min(RATIO_LIMIT_PCT, IMPEDANCE_FRACTION * impedance_pct)


def lag_deg(hv_angle_deg: float, lv_angle_deg: float) -> float:
    """The LV voltage's lag behind the HV voltage, 0 <= lag < 360."""
    return (hv_angle_deg - lv_angle_deg) % 360.0


def clock_number(lag: float) -> int:
    """The clock number nearest a lag of ``lag`` degrees (0..11)."""
    return int(math.floor((lag % 360.0) / CLOCK_STEP_DEG + 0.5)) % 12


def displacement_error_deg(lag: float, clock: int) -> float:
    """The lag's distance from the declared clock's displacement, in (-180, 180]."""
    e = (lag - CLOCK_STEP_DEG * clock) % 360.0
    return e - 360.0 if e > 180.0 else e


@dataclass(frozen=True)
class RatioPhase:
    phase: str
    declared: float
    measured: float
    deviation_pct: float
    limit_pct: float
    passed: bool
    phase_displacement_deg: float | None = None
    clock: int | None = None
    clock_passed: bool | None = None


@dataclass(frozen=True)
class RatioTap:
    tap: int
    tapped_voltage_V: float | None
    declared: float
    limit_pct: float
    source: str
    phases: tuple[RatioPhase, ...]

    @property
    def passed(self) -> bool:
        return all(p.passed for p in self.phases)

    @property
    def worst(self) -> RatioPhase:
        return max(self.phases, key=lambda p: abs(p.deviation_pct))


@dataclass(frozen=True)
class RatioResult:
    fed_winding: str
    tapped_winding: str | None
    step_pct: float | None
    declared_clock: int
    impedance_pct: float | None
    impedance_basis: str
    """'measured' (the same record's load-loss test), 'declared' (the guarantee), 'none', or 'record'
    when the record's tolerances give the ratio tolerance."""
    taps: tuple[RatioTap, ...]


def phase_result(name: str, declared: float, measured: float, limit_pct: float, lag: float | None,
                 clock: int) -> RatioPhase:
    dev = deviation_pct(measured, declared)
    if lag is None:
        return RatioPhase(name, declared, measured, dev, limit_pct, abs(dev) <= limit_pct)
    found = clock_number(lag)
    return RatioPhase(name, declared, measured, dev, limit_pct, abs(dev) <= limit_pct, lag, found, found == clock)


@dataclass(frozen=True)
class TapReading:
    """One tap's readings on plain floats: per phase pair HV and LV voltage, LV lag (deg) or None."""
    tap: int
    hv: tuple[float, ...]
    lv: tuple[float, ...]
    lag_deg: tuple[float, ...] | None


@dataclass(frozen=True)
class Nameplate:
    u_hv: float
    u_lv: float
    tapped: str | None
    step_pct: float | None
    clock: int
    phases: int


PAIR_NAMES = ("U-V", "V-W", "W-U")


def evaluate_ratio(plate: Nameplate, fed: str, readings: tuple[TapReading, ...], limit_pct: float,
                   impedance_pct: float | None, basis: str) -> RatioResult:
    """Each tap's measured ratio per phase pair against its declared ratio, and the clock found."""
    taps = tuple(_tap(plate, r, limit_pct) for r in sorted(readings, key=lambda r: r.tap))
    return RatioResult(fed, plate.tapped, plate.step_pct, plate.clock, impedance_pct, basis, taps)


def _tap(plate: Nameplate, r: TapReading, limit_pct: float) -> RatioTap:
    step = plate.step_pct or 0.0
    declared = declared_ratio(plate.u_hv, plate.u_lv, plate.tapped, step, r.tap)
    n = max(len(r.hv), len(r.lv))
    names = PAIR_NAMES if plate.phases == 3 and n == 3 else ("mean" if plate.phases == 3 else "",) * n
    hv, lv = _spread(r.hv, n), _spread(r.lv, n)
    lags = _spread(r.lag_deg, n) if r.lag_deg is not None else (None,) * n
    phases = tuple(phase_result(names[k], declared, hv[k] / lv[k], limit_pct, lags[k], plate.clock) for k in range(n))
    tapped_v = None
    if plate.tapped is not None:
        tapped_v = (plate.u_hv if plate.tapped == "hv" else plate.u_lv) * tap_factor(step, r.tap)
    source = PRINCIPAL_SOURCE if r.tap == 0 else OTHER_TAP_SOURCE
    return RatioTap(r.tap, tapped_v, declared, limit_pct, source, phases)


def _spread(values: tuple, n: int) -> tuple:
    return values if len(values) == n else tuple(values) * n if len(values) == 1 else values


def tap_name(tap: int) -> str:
    return "0" if tap == 0 else f"{tap:+d}"


def ratio_checks(result: RatioResult, overridden: bool) -> list[Check]:
    """One check per tap (its worst phase pair decides the value shown; every pair must pass) and
    one of the phase displacement (three-phase: the vector group's clock; single-phase: polarity)."""
    checks = [_tap_check(t, overridden) for t in result.taps]
    shown = [(t, p) for t in result.taps for p in t.phases if p.phase_displacement_deg is not None]
    if shown:
        checks.append(_clock_check(result, shown))
    return checks


def _tap_check(t: RatioTap, overridden: bool) -> Check:
    w = t.worst
    where = f" {w.phase}" if w.phase else ""
    voltage = f" ({t.tapped_voltage_V:.6g} V)" if t.tapped_voltage_V is not None else ""
    failed = [p.phase or "the winding" for p in t.phases if not p.passed]
    note = (f"tap {tap_name(t.tap)}{voltage}: measured ratio {w.deviation_pct:+.3f} % off the declared "
            f"{t.declared:.6g}{' on' + where + ' (worst)' if where else ''}"
            + (f", outside +/-{t.limit_pct:.3g} % on {', '.join(failed)}" if failed else ""))
    band = (t.declared * (1 - t.limit_pct / 100.0), t.declared * (1 + t.limit_pct / 100.0))
    return Check(f"voltage_ratio_tap_{tap_name(t.tap)}", "", w.measured, t.declared, t.limit_pct, band,
                 t.passed, note, "record" if overridden else t.source)


def _clock_check(result: RatioResult, shown: list[tuple[RatioTap, RatioPhase]]) -> Check:
    c = result.declared_clock
    errors = [(displacement_error_deg(p.phase_displacement_deg or 0.0, c), t, p) for t, p in shown]
    error, _, _ = max(errors, key=lambda e: abs(e[0]))
    wrong = [f"tap {tap_name(t.tap)}{(' ' + p.phase) if p.phase else ''} clock {p.clock}"
             for _, t, p in errors if not p.clock_passed]
    clocks = {p.clock for _, _, p in errors}
    if len(wrong) == len(errors) and len(clocks) == 1:
        wrong = [f"clock {clocks.pop()} on every tap and phase pair"]
    single = all(not p.phase for _, p in shown)
    what = "same polarity (clock 0)" if single else f"clock {c}"
    note = f"{what} declared; " + (f"measured {'; '.join(wrong[:6])}" + (" ..." if len(wrong) > 6 else "")
                                   if wrong else "every tap and phase pair at it")
    nominal = CLOCK_STEP_DEG * c
    return Check("polarity" if single else "phase_displacement", "deg", nominal + error, nominal, math.nan,
                 (nominal - CLOCK_HALF_STEP_DEG, nominal + CLOCK_HALF_STEP_DEG), not wrong, note, CLOCK_SOURCE)
