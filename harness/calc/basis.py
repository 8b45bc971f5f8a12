"""The rated basis of a unit: powers, voltages, currents and base impedances of both windings.

Three-phase units are evaluated on the star-equivalent basis: phase voltage U_LL/sqrt(3), phase
power S/3, so the base impedance U_LL^2 / S is the same expression as for single-phase units.
"""

from __future__ import annotations

from dataclasses import dataclass

from harness.calc.phases import rated_current
from harness.calc.standards import material_constant, reference_temperature


@dataclass(frozen=True)
class Basis:
    rated_power_VA: float
    phases: int
    rated_voltage_V: dict[str, float]
    standard: str
    material: str
    reference_temperature_C: float

    def rated_current(self, winding: str) -> float:
        return rated_current(self.rated_power_VA, self.rated_voltage_V[winding], self.phases)

    def base_impedance(self, winding: str) -> float:
        return self.rated_voltage_V[winding] ** 2 / self.rated_power_VA

    def other(self, winding: str) -> str:
        return "lv" if winding == "hv" else "hv"

    @property
    def material_constant(self) -> float:
        return material_constant(self.standard, self.material)


def basis_of(record) -> Basis:
    t = record.transformer
    return Basis(
        rated_power_VA=t.rated_power,
        phases=t.phases,
        rated_voltage_V={"hv": t.hv.rated_voltage, "lv": t.lv.rated_voltage},
        standard=record.standard,
        material=t.winding_material or "copper",
        reference_temperature_C=reference_temperature(record.standard, t.reference_temperature),
    )
