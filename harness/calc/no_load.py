"""No-load (open-circuit) test: loss with waveform and (IEEE) temperature correction, current,
power factor and the shunt branch on the star-equivalent basis.
"""

from __future__ import annotations

from dataclasses import dataclass

from harness.calc import circuit, waveform
from harness.calc.basis import Basis
from harness.calc.phases import apparent_power, mean, phase_voltage, spread_pct
from harness.calc.standards import (CONSTANTS, IEEE_NO_LOAD_KT_PER_C, IEEE_NO_LOAD_REFERENCE_C,
                                    WAVEFORM_LIMIT_PCT)
from harness.calc.temperature import ieee_no_load_factor

# Beyond this the loss is not the rated-voltage loss; reported as measured. Common practice, no source.
RATED_VOLTAGE_DEVIATION_PCT = 1.0
# The three line voltages of a no-load test should be balanced. Common practice, no source.
VOLTAGE_SPREAD_LIMIT_PCT = 3.0


@dataclass(frozen=True)
class WaveformSettings:
    form: str
    p1: float = 0.5
    p2: float = 0.5


@dataclass(frozen=True)
class NoLoadResult:
    winding: str
    voltage_V: float
    voltage_mean_V: float | None
    loss_measured_W: float
    waveform_form: str | None
    waveform_deviation_pct: float | None
    waveform_correction_factor: float
    loss_waveform_corrected_W: float
    temperature_C: float | None
    temperature_correction_factor: float | None
    loss_ref_W: float | None
    loss_W: float
    current_A: float
    current_pct: float
    power_factor: float
    loss_current_A: float
    magnetising_current_A: float
    voltage_spread_pct: float | None
    current_spread_pct: float | None


def waveform_settings(record) -> WaveformSettings:
    w = record.waveform
    form = (w.form if w is not None else None) or CONSTANTS[record.standard].waveform_form
    return WaveformSettings(form, w.p1, w.p2) if w is not None else WaveformSettings(form)


def corrected_loss(p_measured: float, u_rms: float, u_mean: float | None, settings: WaveformSettings) -> float:
    """The loss at a sinusoidal voltage of the same peak flux."""
    if u_mean is None:
        return p_measured
    return p_measured * waveform.factor(settings.form, u_mean, u_rms, settings.p1, settings.p2)


def loss_at_20C(loss: float, standard: str, core_temperature: float | None) -> float | None:
    """IEEE corrects the no-load loss to 20 degC; IEC reports it as measured."""
    if standard != "ieee" or core_temperature is None:
        return None
    return loss * ieee_no_load_factor(core_temperature, IEEE_NO_LOAD_REFERENCE_C, IEEE_NO_LOAD_KT_PER_C)


def flux_voltage(test) -> float:
    """The voltage that sets the peak flux: the mean-value reading when there is one."""
    return mean(test.voltage_mean) if test.voltage_mean is not None else mean(test.voltage)


def shunt(test, loss_W: float, basis: Basis) -> tuple[float, float | None]:
    """Rc, Xm per phase referred to the energised winding."""
    u_ph = phase_voltage(flux_voltage(test), basis.phases)
    return circuit.shunt_branch(u_ph, loss_W / basis.phases, mean(test.current))


def evaluate_no_load(test, basis: Basis, settings: WaveformSettings) -> tuple[NoLoadResult, list[str]]:
    u, i = mean(test.voltage), mean(test.current)
    u_mean = mean(test.voltage_mean) if test.voltage_mean is not None else None
    p_wave = corrected_loss(test.power, u, u_mean, settings)
    p_ref = loss_at_20C(p_wave, basis.standard, test.temperature)
    u_ph, p_ph = phase_voltage(flux_voltage(test), basis.phases), p_wave / basis.phases
    result = NoLoadResult(
        winding=test.winding, voltage_V=u, voltage_mean_V=u_mean, loss_measured_W=test.power,
        waveform_form=settings.form if u_mean is not None else None,
        waveform_deviation_pct=100 * waveform.deviation(u_mean, u) if u_mean is not None else None,
        waveform_correction_factor=p_wave / test.power, loss_waveform_corrected_W=p_wave,
        temperature_C=test.temperature,
        temperature_correction_factor=None if p_ref is None else p_ref / p_wave,
        loss_ref_W=p_ref, loss_W=p_wave if p_ref is None else p_ref,
        current_A=i, current_pct=100 * i / basis.rated_current(test.winding),
        power_factor=test.power / apparent_power(u, i, basis.phases),
        loss_current_A=p_ph / u_ph, magnetising_current_A=circuit.magnetising_current(u_ph, p_ph, i),
        voltage_spread_pct=spread_pct(test.voltage), current_spread_pct=spread_pct(test.current),
    )
    return result, no_load_warnings(result, basis)


def no_load_warnings(r: NoLoadResult, basis: Basis) -> list[str]:
    warnings = []
    if r.waveform_deviation_pct is not None and abs(r.waveform_deviation_pct) > WAVEFORM_LIMIT_PCT:
        warnings.append(f"The mean-value and rms voltages of the no-load test differ by "
                        f"{abs(r.waveform_deviation_pct):.1f} %, beyond the {WAVEFORM_LIMIT_PCT:g} % waveform "
                        "limit: the corrected no-load loss is questionable.")
    u_set = r.voltage_mean_V if r.voltage_mean_V is not None else r.voltage_V
    off = 100 * (u_set / basis.rated_voltage_V[r.winding] - 1)
    if abs(off) > RATED_VOLTAGE_DEVIATION_PCT:
        warnings.append(f"The no-load test ran at {100 + off:.1f} % of rated voltage: its loss and current "
                        "are reported as measured, not at rated voltage.")
    if r.magnetising_current_A == 0.0:
        warnings.append("The no-load current has no magnetising part (I <= P/U): Xm cannot be determined.")
    if r.voltage_spread_pct is not None and r.voltage_spread_pct > VOLTAGE_SPREAD_LIMIT_PCT:
        warnings.append(f"The line voltages of the no-load test spread by {r.voltage_spread_pct:.1f} %: "
                        "the supply is unbalanced.")
    return warnings
