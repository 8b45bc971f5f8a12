"""The test record (**contract**): nameplate, no-load and load-loss readings, resistances, guarantees.

Input of ``harness evaluate`` and output of a run. Values with units are parsed once (pint) into
SI floats; temperatures in degC, percentages in %. Unknown keys are errors. Readings that cannot
come from a real test (power above U*I, a load-loss voltage above the rated voltage, ...) are
rejected here, on the field they concern, so the user sees ``FILE:LINE:COLUMN: reason``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, model_validator
from pydantic_core import InitErrorDetails, PydanticCustomError, ValidationError

from harness.calc import nameplate, plausibility
from harness.calc.nameplate import ThermalClass
from harness.calc.chain import MeasurementChain
from harness.calc.phases import PhaseAngle, PhaseCurrent, PhaseResistance, PhaseValue, PhaseVoltage, values_of
from harness.common import yamlio
from harness.common.units import (ApparentPower, Current, Duration, Frequency, Percent, Power, Temperature,
                                  Voltage)

RECORD_SPEC = 1

WindingName = Literal["hv", "lv"]
ComplianceRule = Literal["us-doe-2016", "eu-ecodesign-tier2"]


def _positive(value: PhaseValue) -> PhaseValue:
    if any(v <= 0 for v in values_of(value)):
        raise ValueError("must be positive (a zero or negative reading cannot come from this test)")
    return value


def _plausible_temperature(value: float) -> float:
    # Wider than any test bay sees; outside it the value is a typo or a unit mistake.
    if not -60.0 <= value <= 250.0:
        raise ValueError(f"{value:g} degC is not a plausible winding, oil or core temperature")
    return value


PositiveVoltage = Annotated[Voltage, AfterValidator(_positive)]
PositivePower = Annotated[Power, AfterValidator(_positive)]
PositivePercent = Annotated[Percent, AfterValidator(_positive)]
Readings = Annotated[PhaseVoltage, AfterValidator(_positive)]
LineCurrents = Annotated[PhaseCurrent, AfterValidator(_positive)]
Resistances = Annotated[PhaseResistance, AfterValidator(_positive)]
TestTemperature = Annotated[Temperature, AfterValidator(_plausible_temperature)]


class _Model(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class Winding(_Model):
    rated_voltage: PositiveVoltage = Field(description="rated voltage; three-phase: line-to-line")
    connection: Literal["star", "delta", "zigzag"] | None = Field(None, description="three-phase only")
    neutral: bool = Field(False, description="three-phase star or zigzag: the neutral is brought out")


class Taps(_Model):
    """A tap range on one winding: tap k gives that winding 1 + k x step/100 of its rated voltage;
    tap 0 is the principal tap (the rated voltages)."""
    winding: WindingName = Field(description="the tapped winding")
    steps: tuple[int, int] = Field(description="lowest and highest tap, e.g. [-2, 2]; 0 (principal) inside")
    step: Annotated[Percent, AfterValidator(_positive)] = Field(le=10.0, description="voltage step per tap, e.g. 2.5 %")
    changer: Literal["off-circuit", "on-load"] = Field("off-circuit", description=(
        "off-circuit: moved by hand with the unit de-energised (operator prompts); on-load: moved "
        "energised, by the station's tap_changer between readings"))

    @model_validator(mode="after")
    def _principal_inside(self) -> Taps:
        lo, hi = self.steps
        if not -40 <= lo <= 0 <= hi <= 40:
            raise ValueError(f"steps [{lo}, {hi}]: give [lowest, highest] with the principal tap 0 between "
                             "them (at most 40 each way)")
        if abs(lo) * self.step >= 100.0:
            raise ValueError(f"tap {lo} at {self.step:g} % per step leaves no voltage on the winding")
        return self

    def positions(self) -> tuple[int, ...]:
        return tuple(range(self.steps[0], self.steps[1] + 1))


class Transformer(_Model):
    rated_power: Annotated[ApparentPower, AfterValidator(_positive)]
    phases: Literal[1, 3]
    frequency: Annotated[Frequency, AfterValidator(_positive)]
    hv: Winding
    lv: Winding
    winding_material: Literal["copper", "aluminium"] | None = Field(
        None, description="sets the resistance temperature constant; copper assumed (with a warning) if absent")
    reference_temperature: TestTemperature | None = Field(
        None, description="temperature the load loss is corrected to; default from the standard")
    vector_group: str | None = Field(
        None, description="three-phase: e.g. Dyn11, YNd1, Yzn5; checked against the connections")
    insulation: Literal["liquid-immersed", "dry-type"] | None = Field(
        None, description="what efficiency regulations class the unit by (compliance checks)")
    voltage_class: Literal["low-voltage", "medium-voltage"] | None = Field(
        None, description="dry-type units: the regulations' low- or medium-voltage class (compliance checks)")
    highest_voltage: PositiveVoltage | None = Field(
        None, description="highest voltage for equipment Um of the hv winding (rms, line-to-line); classes the "
                          "unit for the EU ecodesign rule (Regulation 548/2014 Article 2)")
    # Rating-plate fields the certificate states (harness.calc.nameplate checks them).
    cooling: str | None = Field(None, description="cooling code, e.g. ONAN, ONAF (IEC 60076-2); AN, AF dry-type")
    thermal_class: ThermalClass | None = Field(None, description="insulation thermal class, degC (IEC 60085)")
    year_of_manufacture: int | None = Field(None, strict=True, description="year the unit was made")
    standard_edition: str | None = Field(None, description="standard and edition, e.g. IEC 60076-1:2011")
    taps: Taps | None = Field(None, description="the tap range (voltage ratio test on every tap)")

    @model_validator(mode="after")
    def _consistent(self) -> Transformer:
        _raise(plausibility.transformer_problems(self) + nameplate.cooling_problems(self.cooling, self.insulation)
               + nameplate.year_problems(self.year_of_manufacture))
        return self


def _not_negative(value: PhaseValue) -> PhaseValue:
    if any(v < 0 for v in values_of(value)):
        raise ValueError("a standard deviation cannot be negative")
    return value


class Samples(_Model):
    """Statistics of the raw samples behind an averaged reading: the type A evaluation (GUM 4.2).

    ``*_sd`` are experimental standard deviations of the single samples (not of their mean), in
    the units of the reading; the standard uncertainty of the mean is ``sd / sqrt(count)``.
    """
    count: int = Field(ge=2, description="number of raw samples averaged")
    voltage_sd: Annotated[PhaseVoltage, AfterValidator(_not_negative)] | None = None
    voltage_mean_sd: Annotated[PhaseVoltage, AfterValidator(_not_negative)] | None = None
    current_sd: Annotated[PhaseCurrent, AfterValidator(_not_negative)] | None = None
    power_sd: Annotated[Power, AfterValidator(_not_negative)] | None = None


class AnalyserRanges(_Model):
    """The analyser input ranges in use (secondary side), for the % of range part of its accuracy."""
    voltage: Annotated[Voltage, AfterValidator(_positive)]
    current: Annotated[Current, AfterValidator(_positive)]


class NoLoadTest(_Model):
    """Open-circuit test: one winding energised at rated voltage, the other open."""
    winding: WindingName = Field(description="the energised winding")
    voltage: Readings = Field(description="rms; three-phase: line-to-line, mean or list of three")
    voltage_mean: Readings | None = Field(None, description="mean-value voltmeter reading scaled to rms")
    current: LineCurrents = Field(description="three-phase: line currents, mean or list of three")
    power: PositivePower = Field(description="three-phase: total")
    temperature: TestTemperature | None = Field(None, description="core/oil temperature (IEEE corrects to 20 degC)")
    samples: Samples | None = Field(None, description="raw-sample statistics (type A uncertainty)")
    analyser_ranges: AnalyserRanges | None = None


class LoadTest(_Model):
    """Load-loss (short-circuit) test: one winding fed, the other short-circuited."""
    winding: WindingName = Field(description="the energised winding")
    voltage: Readings
    current: LineCurrents
    power: PositivePower
    temperature: TestTemperature | None = Field(None, description="mean winding temperature during the test")
    samples: Samples | None = Field(None, description="raw-sample statistics (type A uncertainty)")
    analyser_ranges: AnalyserRanges | None = None


class RatioReading(_Model):
    """One tap's readings: both windings' voltages (three-phase: line-to-line U-V, V-W, W-U) and
    the LV voltages' lag behind the HV ones (e.g. '330 deg'; a plain number is radians)."""
    tap: int = Field(0, description="the tap read (0: principal)")
    hv: Readings
    lv: Readings
    displacement: PhaseAngle | None = Field(None, description="LV lag behind HV, per phase pair")


class RatioTest(_Model):
    """Voltage ratio and phase displacement: one winding fed at a reduced voltage, the other open."""
    winding: WindingName = Field(description="the fed winding")
    readings: list[RatioReading] = Field(min_length=1)


class Resistance(_Model):
    resistance: Resistances = Field(description="d.c.; three-phase: line-to-line, mean or list of three")
    temperature: TestTemperature


class WindingResistances(_Model):
    hv: Resistance
    lv: Resistance


class Guarantees(_Model):
    no_load_loss: PositivePower | None = None
    load_loss: PositivePower | None = Field(None, description="at reference temperature")
    total_loss: PositivePower | None = None
    impedance: PositivePercent | None = Field(None, description="short-circuit impedance at reference temperature")
    no_load_current: PositivePercent | None = Field(None, description="% of rated current")


class Tolerances(_Model):
    """Overrides of the standard's tolerances (IEC 60076-1 Table 1 or IEEE C57.12.00 clause 9), in % of the
    guaranteed value."""
    no_load_loss: PositivePercent | None = None
    load_loss: PositivePercent | None = None
    total_loss: PositivePercent | None = None
    impedance: PositivePercent | None = None
    no_load_current: PositivePercent | None = None
    ratio: PositivePercent | None = Field(None, description="voltage ratio, +/- % of the declared ratio, every tap")


class LoadBlock(_Model):
    """A part of the day at a steady load."""
    duration: Annotated[Duration, AfterValidator(_positive)] = Field(description="e.g. '6 h'")
    load: float = Field(ge=0.0, le=3.0, description="per unit of rated power")
    power_factor: float = Field(1.0, gt=0.0, le=1.0)


class Waveform(_Model):
    """Hysteresis and eddy-current fractions of the no-load loss (IEEE waveform correction)."""
    p1: float = Field(0.5, ge=0.0, le=1.0, description="hysteresis fraction")
    p2: float = Field(0.5, ge=0.0, le=1.0, description="eddy-current fraction")
    form: Literal["iec", "ieee"] | None = Field(None, description="correction form; default from the standard")

    @model_validator(mode="after")
    def _sum_to_one(self) -> Waveform:
        if abs(self.p1 + self.p2 - 1.0) > 1e-6:
            _raise([(("p2",), f"p1 + p2 must be 1 (they are fractions of one loss), got {self.p1 + self.p2:g}",
                     self.p2)])
        return self


class Record(_Model):
    model_config = ConfigDict(frozen=True, extra="forbid", populate_by_name=True)
    schema_: str | None = Field(None, alias="$schema", description="JSON Schema for editors")
    spec: int = Field(RECORD_SPEC, strict=True, description="format version of the record")
    standard: Literal["iec", "ieee"] = "iec"
    transformer: Transformer
    no_load: NoLoadTest | None = None
    load: LoadTest | None = None
    ratio: RatioTest | None = None
    winding_resistance: WindingResistances | None = None
    guarantees: Guarantees | None = None
    tolerances: Tolerances | None = None
    load_profile: list[LoadBlock] | None = Field(None, min_length=1, description="24 hours of load")
    waveform: Waveform | None = None
    compliance: list[ComplianceRule] | None = Field(
        None, min_length=1, description="efficiency regulations to check the unit against")
    measurement_chain: MeasurementChain | None = Field(
        None, description="instrument transformers, analyser, resistance meter and thermometer: corrections and "
                          "uncertainty")

    @model_validator(mode="after")
    def _plausible(self) -> Record:
        _raise(plausibility.record_problems(self) + _chain_problems(self) + _ratio_problems(self)
               + nameplate.edition_problems(self.transformer.standard_edition, self.standard))
        return self


def _chain_problems(r: Record) -> list[tuple[tuple[Any, ...], str, Any]]:
    chain = r.measurement_chain
    if chain is None or len(chain.channels) >= r.transformer.phases:
        return []
    return [(("measurement_chain", "channels"), f"a three-phase unit is measured on three analyser channels; "
             f"the chain gives {len(chain.channels)}", len(chain.channels))]


def raise_problems(problems: list[tuple[tuple[Any, ...], str, Any]]) -> None:
    """Raise the (location, reason, value) triples as one located validation error."""
    _raise(problems)
def _ratio_problems(r: Record) -> list[tuple[tuple[Any, ...], str, Any]]:
    """Every tap read must lie in the nameplate's range, each once."""
    if r.ratio is None:
        return []
    taps = r.transformer.taps.positions() if r.transformer.taps is not None else (0,)
    problems, seen = [], set()
    for k, reading in enumerate(r.ratio.readings):
        if reading.tap not in taps:
            problems.append((("ratio", "readings", k, "tap"), f"tap {reading.tap} is not on the nameplate "
                             f"(taps {taps[0]} to {taps[-1]})" if r.transformer.taps else
                             "the nameplate has no taps: give transformer.taps or read tap 0", reading.tap))
        elif reading.tap in seen:
            problems.append((("ratio", "readings", k, "tap"), f"tap {reading.tap} is read twice", reading.tap))
        seen.add(reading.tap)
    return problems


def _raise(problems: list[tuple[tuple[Any, ...], str, Any]]) -> None:
    """Turn (location, reason, value) triples into one pydantic error located at each field."""
    if problems:
        raise ValidationError.from_exception_data("Record", [
            InitErrorDetails(type=PydanticCustomError("implausible", "{reason}", {"reason": reason}), loc=loc, input=value)
            for loc, reason, value in problems])


def load_record(path: str | Path) -> Record:
    """Load and validate a record file; errors are ``InputError``s located in the file."""
    return yamlio.load_model(Record, path)


def record_from_text(text: str, file: str = "<input>") -> Record:
    return yamlio.validate(Record, yamlio.load_text(text, file))
