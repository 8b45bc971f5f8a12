"""Load-loss (short-circuit) test: loss and impedance voltage scaled to rated current, per-unit
impedance, and the correction to reference temperature by the I2R/additional split.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from harness.calc import temperature
from harness.calc.basis import Basis
from harness.calc.phases import mean, spread_pct
from harness.calc.standards import MIN_TEST_CURRENT_PU

# A test current within this of the other winding's rated current suggests a record or wiring
# mistake; the line currents of a three-phase load test should be balanced. Common practice, no source.
OTHER_WINDING_MATCH = 0.02
CURRENT_SPREAD_LIMIT_PCT = 5.0
HIGH_TEST_CURRENT_PU = 1.1


@dataclass(frozen=True)
class TemperatureCorrection:
    test_temperature_C: float
    i2r_loss_W: float
    additional_loss_W: float
    i2r_loss_ref_W: float
    additional_loss_ref_W: float

    @property
    def loss_ref_W(self) -> float:
        return self.i2r_loss_ref_W + self.additional_loss_ref_W


@dataclass(frozen=True)
class LoadResult:
    winding: str
    voltage_V: float
    current_A: float
    loss_measured_W: float
    test_current_pu: float
    loss_W: float
    impedance_voltage_V: float
    impedance_measured_pct: float
    impedance_pct: float
    resistance_pct: float
    reactance_pct: float
    reference_temperature_C: float
    test_temperature_C: float | None
    i2r_loss_W: float | None
    additional_loss_W: float | None
    i2r_loss_ref_W: float | None
    additional_loss_ref_W: float | None
    loss_ref_W: float | None
    resistance_ref_pct: float | None
    impedance_ref_pct: float | None
    voltage_spread_pct: float | None
    current_spread_pct: float | None

    @property
    def performance_loss_W(self) -> float:
        """The load loss efficiency and checks use: at reference temperature when known."""
        return self.loss_W if self.loss_ref_W is None else self.loss_ref_W

    @property
    def performance_resistance_pct(self) -> float:
        return self.resistance_pct if self.resistance_ref_pct is None else self.resistance_ref_pct

    @property
    def performance_impedance_pct(self) -> float:
        return self.impedance_pct if self.impedance_ref_pct is None else self.impedance_ref_pct


def scaled_to_rated(p_test: float, u_test: float, test_current_pu: float) -> tuple[float, float]:
    """Pk = Pt (Ir/It)^2, Uk = Ut (Ir/It)."""
    return p_test / test_current_pu**2, u_test / test_current_pu


def per_unit_impedance(u_k: float, p_k: float, basis: Basis, winding: str) -> tuple[float, float, float]:
    """z%, ur%, ux% at rated current; independent of the winding connection."""
    z = 100 * u_k / basis.rated_voltage_V[winding]
    ur = 100 * p_k / basis.rated_power_VA
    return z, ur, math.sqrt(max(z * z - ur * ur, 0.0))


def dc_resistances_at(resistances, t_test: float, c: float) -> tuple[float, float]:
    """Both windings' d.c. resistances converted from their measuring temperature to the test's."""
    return tuple(temperature.resistance_at(mean(w.resistance), w.temperature, t_test, c)  # type: ignore[return-value]
                 for w in (resistances.hv, resistances.lv))


def correction(p_k: float, t_test: float, resistances, basis: Basis) -> TemperatureCorrection:
    c = basis.material_constant
    currents = (basis.rated_current("hv"), basis.rated_current("lv"))
    pr = temperature.i2r_loss(currents, dc_resistances_at(resistances, t_test, c), basis.phases)
    at_test = temperature.split(p_k, pr)
    at_ref = temperature.correct_split(at_test, t_test, basis.reference_temperature_C, c)
    return TemperatureCorrection(t_test, at_test.i2r_W, at_test.additional_W, at_ref.i2r_W, at_ref.additional_W)


def evaluate_load(test, resistances, basis: Basis) -> tuple[LoadResult, list[str]]:
    u, i = mean(test.voltage), mean(test.current)
    n_t = i / basis.rated_current(test.winding)
    p_k, u_k = scaled_to_rated(test.power, u, n_t)
    z, ur, ux = per_unit_impedance(u_k, p_k, basis, test.winding)
    corr = None
    if test.temperature is not None and resistances is not None:
        corr = correction(p_k, test.temperature, resistances, basis)
    ur_ref = None if corr is None else 100 * corr.loss_ref_W / basis.rated_power_VA
    result = LoadResult(
        winding=test.winding, voltage_V=u, current_A=i, loss_measured_W=test.power, test_current_pu=n_t,
        loss_W=p_k, impedance_voltage_V=u_k, impedance_measured_pct=100 * u / basis.rated_voltage_V[test.winding],
        impedance_pct=z, resistance_pct=ur, reactance_pct=ux,
        reference_temperature_C=basis.reference_temperature_C, test_temperature_C=test.temperature,
        **_correction_fields(corr), resistance_ref_pct=ur_ref,
        impedance_ref_pct=None if ur_ref is None else math.hypot(ur_ref, ux),
        voltage_spread_pct=spread_pct(test.voltage), current_spread_pct=spread_pct(test.current),
    )
    return result, current_warnings(result, basis) + correction_warnings(result, test, resistances)


def _correction_fields(corr: TemperatureCorrection | None) -> dict[str, float | None]:
    names = ("i2r_loss_W", "additional_loss_W", "i2r_loss_ref_W", "additional_loss_ref_W", "loss_ref_W")
    return {name: None if corr is None else getattr(corr, name) for name in names}


def current_warnings(r: LoadResult, basis: Basis) -> list[str]:
    warnings = []
    pct = 100 * r.test_current_pu
    if r.test_current_pu < MIN_TEST_CURRENT_PU:
        warnings.append(f"The load-loss test ran at {pct:.0f} % of rated current, below the "
                        f"{100 * MIN_TEST_CURRENT_PU:.0f} % the test codes ask for: the loss scaled to rated "
                        "current is less certain.")
    elif r.test_current_pu > HIGH_TEST_CURRENT_PU:
        warnings.append(f"The load-loss test ran at {pct:.0f} % of rated current: the winding heats quickly.")
    other = basis.other(r.winding)
    if _matches(r.current_A, basis.rated_current(other)) and not _matches(
            basis.rated_current(r.winding), basis.rated_current(other)):
        warnings.append(f"The load-loss test current ({r.current_A:g} A) matches the rated current of the "
                        f"{other} winding, not of the energised {r.winding} winding: check the record's "
                        "winding and the current-transformer ratio.")
    if r.current_spread_pct is not None and r.current_spread_pct > CURRENT_SPREAD_LIMIT_PCT:
        warnings.append(f"The line currents of the load-loss test spread by {r.current_spread_pct:.1f} %: "
                        "check the short-circuit link and its connections.")
    return warnings


def _matches(a: float, b: float) -> bool:
    return abs(a / b - 1) <= OTHER_WINDING_MATCH


def correction_warnings(r: LoadResult, test, resistances) -> list[str]:
    if test.temperature is None or resistances is None:
        missing = "winding temperature" if test.temperature is None else "d.c. winding resistances"
        return [f"The record has no {missing} of the load-loss test: the load loss is not corrected to "
                f"{r.reference_temperature_C:g} degC, and efficiency and checks use the loss at test temperature."]
    if r.additional_loss_W is not None and r.additional_loss_W < 0:
        return [f"The I2R loss from the d.c. resistances ({r.i2r_loss_W:.4g} W) exceeds the measured load "
                f"loss ({r.loss_W:.4g} W at rated current): check the resistances, their temperature and the "
                "winding temperature."]
    return []
