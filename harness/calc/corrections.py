"""Corrections for the measurement chain: ratio-correction factors and the phase displacement.

Sign convention (IEC 61869, recalled from the standard, not re-read): a phase displacement is the
secondary phasor's angle minus the primary's, positive when the secondary leads. With phi the
angle by which the primary voltage leads the primary current (phi > 0: the current lags, as in
both the no-load and the load-loss test), the analyser sees

    phi_m = (alpha_u + delta_U) - (alpha_i + delta_I) = phi - delta,   delta = delta_I - delta_U

so the true power is  P = RCF_U RCF_I S_m cos(phi_m + delta) = RCF_U RCF_I (P_m cos delta - Q_m sin delta),
to first order ``Pc = Pm - delta * Qm`` with ``Qm = Um Im sin(phi_m) > 0``. A current transformer
whose secondary leads (delta_I > 0) makes the measured angle too small and the measured power too
large: the correction lowers it. The analyser's own phase error adds to delta like a current
transformer's (known value zero; it enters the uncertainty only).

The analyser gives active power only; ``Qm`` is taken from ``sqrt(Sm^2 - Pm^2)`` with the current
lagging, which is what a transformer draws in both tests. Three-phase totals are shared equally
between the three channels (a balanced three-wattmeter connection); each channel's voltage is the
star-equivalent ``U_LL/sqrt(3)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from harness.calc.chain import Channel, MeasurementChain, ratio_correction_factor
from harness.calc.phases import PhaseValue, SQRT3, values_of


@dataclass(frozen=True)
class ChannelErrors:
    """The known errors of one channel as plain floats (ratio errors in %, angles in rad)."""
    voltage_ratio_error_pct: float = 0.0
    current_ratio_error_pct: float = 0.0
    voltage_displacement_rad: float = 0.0
    current_displacement_rad: float = 0.0
    analyser_phase_rad: float = 0.0

    @property
    def rcf_voltage(self) -> float:
        return ratio_correction_factor(self.voltage_ratio_error_pct)

    @property
    def rcf_current(self) -> float:
        return ratio_correction_factor(self.current_ratio_error_pct)

    @property
    def net_displacement_rad(self) -> float:
        """delta = delta_I - delta_U (+ the analyser's): the angle the measured phi_m falls short by."""
        return self.current_displacement_rad - self.voltage_displacement_rad + self.analyser_phase_rad


def channel_errors(channel: Channel) -> ChannelErrors:
    vt, ct = channel.voltage_transformer, channel.current_transformer
    return ChannelErrors(vt.ratio_error if vt else 0.0, ct.ratio_error if ct else 0.0,
                         vt.phase_displacement if vt else 0.0, ct.phase_displacement if ct else 0.0)


def chain_errors(chain: MeasurementChain, phases: int) -> list[ChannelErrors]:
    return [channel_errors(c) for c in chain.channels_for(phases)]


def reactive_power(p_m: float, s_m: float) -> float:
    """Qm from the apparent power, current lagging; a reading with P > S (noise at PF ~ 1) gives 0."""
    return math.sqrt(max(s_m * s_m - p_m * p_m, 0.0))


def corrected_power(p_m: float, s_m: float, e: ChannelErrors) -> float:
    """P = RCF_U RCF_I (Pm cos delta - Qm sin delta): exact for the phasor model above."""
    d = e.net_displacement_rad
    return e.rcf_voltage * e.rcf_current * (p_m * math.cos(d) - reactive_power(p_m, s_m) * math.sin(d))


def first_order_power(p_m: float, q_m: float, delta: float) -> float:
    """Pc = Pm - delta Qm: the form the test codes quote (ratio errors aside)."""
    return p_m - delta * q_m


@dataclass(frozen=True)
class CorrectedReadings:
    voltage: PhaseValue
    voltage_mean: PhaseValue | None
    current: PhaseValue
    power: float


def _per_channel(value: PhaseValue, n: int) -> tuple[float, ...]:
    items = values_of(value)
    return items if len(items) == n else items * n


def _shaped(items: list[float], like: PhaseValue) -> PhaseValue:
    """Back to the record's shape: three values stay three; one mean value stays the mean."""
    return tuple(items) if isinstance(like, tuple) else sum(items) / len(items)  # type: ignore[return-value]


def correct_readings(voltage: PhaseValue, voltage_mean: PhaseValue | None, current: PhaseValue, power: float,
                     errors: list[ChannelErrors]) -> CorrectedReadings:
    """Readings at the rated ratios -> primary values, channel by channel."""
    n = len(errors)
    u, i = _per_channel(voltage, n), _per_channel(current, n)
    star = SQRT3 if n == 3 else 1.0
    p = [corrected_power(power / n, u[k] / star * i[k], errors[k]) for k in range(n)]
    u_c = [u[k] * errors[k].rcf_voltage for k in range(n)]
    i_c = [i[k] * errors[k].rcf_current for k in range(n)]
    um_c = None
    if voltage_mean is not None:
        um = _per_channel(voltage_mean, n)
        um_c = _shaped([um[k] * errors[k].rcf_voltage for k in range(n)], voltage_mean)
    return CorrectedReadings(_shaped(u_c, voltage), um_c, _shaped(i_c, current), sum(p))


def correction_summary(test, corrected: CorrectedReadings, errors: list[ChannelErrors]) -> dict[str, float]:
    """What the corrections did to one test, for the results."""
    n = len(errors)
    return {
        "voltage_ratio_correction_factor": sum(e.rcf_voltage for e in errors) / n,
        "current_ratio_correction_factor": sum(e.rcf_current for e in errors) / n,
        "net_phase_displacement_rad": sum(e.net_displacement_rad for e in errors) / n,
        "power_read_W": test.power,
        "power_corrected_W": corrected.power,
        "power_correction_W": corrected.power - test.power,
        "power_correction_pct": 100 * (corrected.power / test.power - 1),
    }


def corrected_test(test, errors: list[ChannelErrors]):
    """A no-load or load test with its readings corrected, and what the corrections did."""
    c = correct_readings(test.voltage, getattr(test, "voltage_mean", None), test.current, test.power, errors)
    update = {"voltage": c.voltage, "current": c.current, "power": c.power}
    if c.voltage_mean is not None:
        update["voltage_mean"] = c.voltage_mean
    return test.model_copy(update=update), correction_summary(test, c, errors)


def corrected_record(record, errors: dict[str, list[ChannelErrors]] | None = None):
    """The record with both tests corrected for its measurement chain; ``errors`` per test override
    the chain's known errors (the uncertainty evaluation perturbs them)."""
    chain = record.measurement_chain
    if chain is None:
        return record, None
    known = chain_errors(chain, record.transformer.phases)
    update, summary = {}, {}
    for name in ("no_load", "load"):
        test = getattr(record, name)
        if test is not None:
            update[name], summary[name] = corrected_test(test, (errors or {}).get(name, known))
    return record.model_copy(update=update), summary
