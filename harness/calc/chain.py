"""The measurement chain: instrument transformers per analyser channel, the analyser's accuracy,
the resistance meter and the thermometer.

Shared by the station file (the lab's instruments) and the record (so ``harness evaluate`` can
correct hand-taken readings and state their uncertainty). Values with units are parsed once into
SI floats: percentages in %, angles in rad, temperature differences in K.

Conventions (IEC 61869-1/-2/-3, recalled from the standard, not re-read):

- ratio error ``epsilon = (K_n * X_s - X_p) / X_p * 100 %``, with ``K_n`` the rated (nominal)
  ratio. The readings of a record are already multiplied by ``K_n``; the ratio error corrects them.
- phase displacement ``delta``: the angle of the secondary phasor minus that of the primary phasor,
  **positive when the secondary leads the primary**.

Uncertainty statements are half-widths of rectangular distributions (bounds: a class limit, a
data-sheet accuracy) unless ``distribution: normal``, which reads them as expanded uncertainties
at k = 2 (a calibration certificate).
"""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, model_validator

from harness.common.units import Angle, Current, Percent, Resistance, TemperatureDifference, Voltage

Distribution = Literal["rectangular", "normal"]


def _not_negative(value: float) -> float:
    if value < 0:
        raise ValueError("an uncertainty or accuracy bound cannot be negative")
    return value


Bound = Annotated[Percent, AfterValidator(_not_negative)]
AngleBound = Annotated[Angle, AfterValidator(_not_negative)]


class _Model(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class InstrumentTransformer(_Model):
    """A voltage or current transformer between the bay and one analyser input."""
    ratio: float = Field(gt=0, description="rated primary/secondary ratio (already applied to the readings)")
    ratio_error: Percent = Field(0.0, description="known ratio error (IEC 61869), corrected")
    phase_displacement: Angle = Field(
        0.0, description="known phase displacement, positive when the secondary leads; e.g. '1.5 arcmin', '0.2 crad'")
    ratio_error_uncertainty: Bound = Field(0.0, description="bound of the ratio error (class limit) or its U at k=2")
    phase_displacement_uncertainty: AngleBound = Field(0.0, description="bound of the phase displacement or its U")
    burden: str | None = Field(None, description="accuracy class and burden as text, e.g. '0.2, 10 VA'")
    distribution: Distribution = "rectangular"

    @property
    def ratio_correction_factor(self) -> float:
        """True ratio / rated ratio: the factor that turns a rated-ratio reading into the primary value."""
        return ratio_correction_factor(self.ratio_error)


def ratio_correction_factor(ratio_error_pct: float) -> float:
    """RCF = X_p / (K_n X_s) = 1 / (1 + epsilon/100), from the IEC 61869 definition of epsilon."""
    return 1.0 / (1.0 + ratio_error_pct / 100.0)


class Channel(_Model):
    """One analyser channel: its voltage and current transformers (absent: direct connection)."""
    voltage_transformer: InstrumentTransformer | None = None
    current_transformer: InstrumentTransformer | None = None


class Accuracy(_Model):
    """An accuracy band as % of reading plus % of range (both bounds)."""
    reading: Bound = Field(0.0, description="% of reading")
    range: Bound = Field(0.0, description="% of range")

    def bound(self, reading: float, range_: float) -> float:
        return abs(reading) * self.reading / 100.0 + abs(range_) * self.range / 100.0


class Analyser(_Model):
    """The power analyser's accuracy; the power range is the product of the voltage and current ranges."""
    voltage: Accuracy = Accuracy()
    current: Accuracy = Accuracy()
    power: Accuracy = Accuracy()
    phase: AngleBound = Field(0.0, description="bound of the phase error between voltage and current inputs")
    voltage_ranges: list[Annotated[Voltage, AfterValidator(_not_negative)]] | None = Field(
        None, description="the voltage ranges, to find the one in use from the requested value")
    current_ranges: list[Annotated[Current, AfterValidator(_not_negative)]] | None = None
    voltage_range_accuracy: list[Accuracy] | None = Field(
        None, description="one per voltage range, in the same order: replaces 'voltage' on that range")
    current_range_accuracy: list[Accuracy] | None = Field(
        None, description="one per current range, in the same order: replaces 'current' on that range")
    distribution: Distribution = "rectangular"

    @model_validator(mode="after")
    def _one_accuracy_per_range(self) -> Analyser:
        for q in ("voltage", "current"):
            per_range, ranges = getattr(self, f"{q}_range_accuracy"), getattr(self, f"{q}_ranges")
            if per_range is not None and len(per_range) != len(ranges or []):
                raise ValueError(f"{q}_range_accuracy needs one entry per {q} range "
                                 f"({len(ranges or [])}), got {len(per_range)}")
        return self

    def range_in_use(self, quantity: str, requested: float) -> float:
        """The smallest range that holds ``requested`` (how range-selecting instruments round)."""
        ranges = self.voltage_ranges if quantity == "voltage" else self.current_ranges
        if not ranges:
            return requested
        return next((r for r in sorted(ranges) if requested <= r * (1 + 1e-9)), max(ranges))

    def accuracy_on(self, quantity: str, range_: float) -> Accuracy:
        """The accuracy of ``quantity`` on a range: its own entry when the chain gives one per range."""
        per_range = getattr(self, f"{quantity}_range_accuracy", None)
        ranges = getattr(self, f"{quantity}_ranges", None)
        if per_range is not None and ranges:
            for r, accuracy in zip(ranges, per_range):
                if abs(r - range_) <= 1e-9 * r:
                    return accuracy
        return getattr(self, quantity)


class ResistanceMeter(_Model):
    reading: Bound = Field(0.0, description="% of reading")
    offset: Annotated[Resistance, AfterValidator(_not_negative)] = Field(0.0, description="fixed part, ohm")
    distribution: Distribution = "rectangular"


class Thermometer(_Model):
    accuracy: Annotated[TemperatureDifference, AfterValidator(_not_negative)] = Field(0.0, description="bound, K")
    distribution: Distribution = "rectangular"


class MeasurementChain(_Model):
    """Everything between the unit under test and the numbers in the record."""
    channels: list[Channel] = Field(min_length=1, max_length=3,
                                    description="per analyser channel: one for single-phase, three for three-phase")
    analyser: Analyser = Analyser()
    resistance_meter: ResistanceMeter | None = None
    thermometer: Thermometer | None = None

    def channels_for(self, phases: int) -> list[Channel]:
        """The channels a test of ``phases`` phases uses (a single-phase test: the first)."""
        return self.channels[:phases]


def standard_uncertainty(bound: float, distribution: Distribution) -> float:
    """GUM 4.3.7 (rectangular: a/sqrt(3)); a certificate's U at k = 2 gives U/2 (GUM 4.3.3)."""
    return bound / 3**0.5 if distribution == "rectangular" else bound / 2.0
