"""Temperature corrections: winding resistance, load loss by its I2R/additional split, IEEE no-load.

Pure functions on floats (temperatures in degC, C the material constant of the standard).
"""

from __future__ import annotations

from dataclasses import dataclass


def resistance_at(r1: float, t1: float, t2: float, c: float) -> float:
    """R2 = R1 (C + t2) / (C + t1)."""
    return r1 * (c + t2) / (c + t1)


@dataclass(frozen=True)
class LossSplit:
    """Load loss at one temperature, split into the I2R part and the additional (stray) part."""
    i2r_W: float
    additional_W: float

    @property
    def total_W(self) -> float:
        return self.i2r_W + self.additional_W


def split(total_W: float, i2r_W: float) -> LossSplit:
    return LossSplit(i2r_W, total_W - i2r_W)


def correct_split(loss: LossSplit, t_test: float, t_ref: float, c: float) -> LossSplit:
    """I2R rises with resistance; the additional loss falls inversely (IEC 60076-1 Annex E form).

    Correcting the whole loss by the resistance factor would overstate it: the stray part does
    not follow the d.c. resistance.
    """
    k = (c + t_ref) / (c + t_test)
    return LossSplit(loss.i2r_W * k, loss.additional_W / k)


def i2r_loss(currents_A: tuple[float, float], resistances_ohm: tuple[float, float], phases: int) -> float:
    """Sum of I2R of both windings: single-phase I^2 R; three-phase 1.5 I_L^2 R_LL (star or delta)."""
    k = 1.5 if phases == 3 else 1.0
    return sum(k * i * i * r for i, r in zip(currents_A, resistances_ohm))


def ieee_no_load_factor(t_measured: float, t_ref: float = 20.0, kt: float = 0.00065) -> float:
    """P(t_ref) / P(t_measured) = 1 + (t_measured - t_ref) KT (IEEE C57.12.90)."""
    return 1.0 + (t_measured - t_ref) * kt
