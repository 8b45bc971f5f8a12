"""Scenarios of the simulated bay: the unit under test, the bay's source and instruments, faults.

A scenario is a versioned YAML file in ``sim_configs/`` (``spec: 1``), validated with line
numbers. Values take units ("6.6 kV", "4.85 ohm", "30 min"); plain numbers are SI.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from harness.common import bounds as b
from harness.common.errors import InputError
from harness.common.units import (
    Angle, ApparentPower, Current, Duration, Frequency, Percent, Power, Resistance, Temperature,
    Voltage, VoltageRate, quantity,
)
from harness.common.yamlio import load_model, read_input
from harness.sim import connections
from harness.sim.faults import THREE_PHASE_ONLY, FaultSpec

SPEC_VERSION = 1
SIM_CONFIGS = Path(__file__).resolve().parents[2] / "sim_configs"
HeatCapacity = quantity("J/K")

# IEC 60076-1 material constants for resistance against temperature [S: reference notes].
MATERIAL_CONSTANT = {"copper": 235.0, "aluminium": 225.0}


class _Frozen(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class WindingSpec(_Frozen):
    """Single-phase: the winding. Three-phase: ``rated_voltage`` line-to-line, ``resistance`` and
    ``leakage_reactance`` of one winding phase as connected (a zigzag phase: both halves)."""

    rated_voltage: Voltage = Field(gt=0)
    resistance: Resistance = Field(gt=0, description="d.c., at resistance_temperature")
    leakage_reactance: Resistance = Field(gt=0, description="its own side, at rated frequency")
    connection: Literal["star", "delta", "zigzag"] | None = Field(None, description="three-phase only")
    neutral: bool = Field(False, description="star or zigzag: the neutral is brought out")
    phase_spread: tuple[Percent, Percent, Percent] = Field(
        (0.0, 0.0, 0.0), description="three-phase: deviation of each phase's R and X from the stated value")

    @model_validator(mode="after")
    def _neutral_needs_a_star_point(self) -> "WindingSpec":
        if self.neutral and self.connection == "delta":
            raise ValueError("a delta winding has no neutral")
        if any(abs(d) > 10.0 for d in self.phase_spread):
            raise ValueError("phase_spread values must lie within +-10 %")
        return self

    def phase_factor(self, phase: int) -> float:
        return 1.0 + self.phase_spread[phase] / 100.0


class CoreSpec(_Frozen):
    loss: Power = Field(gt=0, description="at rated voltage and frequency, sinusoidal")
    hysteresis_fraction: float = Field(0.5, ge=0, le=1, description="share of the loss at rated flux")
    steinmetz_exponent: float = Field(1.8, ge=1, le=3, description="hysteresis loss ~ peak flux ** this")
    magnetising_current: Percent = Field(gt=0, lt=50, description="quadrature current at rated voltage, % of rated")
    knee_share: float = Field(0.3, ge=0, lt=1, description="share of the peak magnetising current from the saturating term at rated flux")
    knee_exponent: int = Field(15, ge=3, le=41, description="odd power of flux of the saturating term")
    # Three-limb core: the middle limb's magnetic path (no yoke run to an outer limb) is shorter,
    # so its magnetising current is lower than the outer limbs'; 0.6..0.8 of an outer limb's is a
    # usual figure (common practice, recalled; no source). Its loss is slightly lower too.
    middle_limb_magnetising: float = Field(0.7, gt=0, le=1.5, description="middle limb / outer limb, magnetising current")
    middle_limb_loss: float = Field(0.9, gt=0, le=1.5, description="middle limb / outer limb, core loss")

    def limb_weights(self, middle: float) -> tuple[float, float, float]:
        """Each limb's share, mean 1 over the three limbs, the middle one ``middle`` x an outer."""
        scale = 3.0 / (2.0 + middle)
        return scale, middle * scale, scale

    @property
    def magnetising_weights(self) -> tuple[float, float, float]:
        return self.limb_weights(self.middle_limb_magnetising)

    @property
    def loss_weights(self) -> tuple[float, float, float]:
        return self.limb_weights(self.middle_limb_loss)

    @model_validator(mode="after")
    def _odd_exponent(self) -> "CoreSpec":
        if self.knee_exponent % 2 == 0:
            raise ValueError("knee_exponent must be odd (the current keeps the sign of the flux)")
        return self


class ThermalSpec(_Frozen):
    heat_capacity: HeatCapacity = Field(gt=0)
    time_constant: Duration = Field(gt=0, le=b.MAX_DURATION_S)


class TapSpec(_Frozen):
    """The tap range: tap k gives the tapped winding 1 + k x step/100 of its rated turns (tap 0
    the principal tap)."""
    winding: Literal["hv", "lv"]
    steps: tuple[int, int] = Field(description="lowest and highest tap, 0 between them")
    step: Percent = Field(gt=0, le=10)

    @model_validator(mode="after")
    def _principal_inside(self) -> "TapSpec":
        if not -40 <= self.steps[0] <= 0 <= self.steps[1] <= 40 or abs(self.steps[0]) * self.step >= 100:
            raise ValueError("steps: [lowest, highest] with 0 between them, every tap above zero turns")
        return self

    def factor(self, tap: int) -> float:
        return 1.0 + tap * self.step / 100.0


class TransformerSpec(_Frozen):
    name: str = Field(min_length=1)
    phases: Literal[1, 3] = 1
    rated_power: ApparentPower = Field(gt=0, description="three-phase: the total")
    vector_group: str | None = Field(None, description="three-phase: e.g. Dyn11 (or give clock)")
    clock: int | None = Field(None, ge=0, le=11, description="three-phase: the clock number")
    frequency: Frequency = Field(gt=0)
    winding_material: Literal["copper", "aluminium"]
    hv: WindingSpec
    lv: WindingSpec
    resistance_temperature: Temperature = 20.0
    reference_temperature: Temperature = 75.0
    additional_loss: Power = Field(ge=0, description="stray/eddy load loss at rated current and reference temperature")
    core: CoreSpec
    winding_thermal: ThermalSpec
    oil_thermal: ThermalSpec
    link_resistance: Resistance = Field(gt=0, description="the short-circuit link")
    taps: TapSpec | None = Field(None, description="the tap changer's range (turns change per tap)")

    @model_validator(mode="after")
    def _hv_above_lv(self) -> "TransformerSpec":
        if self.hv.rated_voltage <= self.lv.rated_voltage:
            raise ValueError("hv.rated_voltage must be above lv.rated_voltage")
        return self

    @model_validator(mode="after")
    def _connections(self) -> "TransformerSpec":
        given = [w.connection is not None for w in (self.hv, self.lv)]
        if self.phases == 1:
            if any(given) or self.vector_group or self.clock is not None or self.hv.neutral or self.lv.neutral:
                raise ValueError("connection, neutral, vector_group and clock are for three-phase units "
                                 "(phases: 3)")
            return self
        if self.vector_group is None and self.clock is None:
            raise ValueError("a three-phase unit needs vector_group (e.g. Dyn11) or clock")
        if self.vector_group is not None:
            group = connections.parse_vector_group(self.vector_group)
            stated = (self.hv.connection or group.hv, self.hv.neutral or group.hv_neutral,
                      self.lv.connection or group.lv, self.lv.neutral or group.lv_neutral)
            if stated != (group.hv, group.hv_neutral, group.lv, group.lv_neutral):
                raise ValueError(f"vector_group {self.vector_group} does not match the windings "
                                 f"({connections.vector_group_name(*stated, group.clock)})")
            if self.clock is not None and self.clock != group.clock:
                raise ValueError(f"clock {self.clock} does not match vector_group {self.vector_group}")
        elif not all(given):
            raise ValueError("give hv.connection and lv.connection, or a vector_group")
        connections.arrangements(self.connection("hv"), self.connection("lv"), self.clock_number)
        return self

    @property
    def material_constant(self) -> float:
        return MATERIAL_CONSTANT[self.winding_material]

    def rated_current(self, side: str) -> float:
        """The rated line current (single-phase: the winding current)."""
        if self.phases == 3:
            return self.rated_power / (math.sqrt(3.0) * self.winding(side).rated_voltage)
        return self.rated_power / self.winding(side).rated_voltage

    def rated_phase_current(self, side: str) -> float:
        """The rated current of one winding phase (a delta phase: line current over root 3)."""
        if self.phases == 3:
            return connections.phase_current(self.connection(side), self.rated_power,
                                             self.winding(side).rated_voltage)
        return self.rated_current(side)

    def connection(self, side: str) -> str:
        """Star, delta or zigzag, from the winding or else the vector group."""
        stated = self.winding(side).connection
        if stated is not None or self.vector_group is None:
            return stated or "star"
        group = connections.parse_vector_group(self.vector_group)
        return group.hv if side == "hv" else group.lv

    def has_neutral(self, side: str) -> bool:
        if self.winding(side).neutral or self.vector_group is None:
            return self.winding(side).neutral
        group = connections.parse_vector_group(self.vector_group)
        return group.hv_neutral if side == "hv" else group.lv_neutral

    @property
    def clock_number(self) -> int:
        if self.clock is not None:
            return self.clock
        return connections.parse_vector_group(self.vector_group).clock if self.vector_group else 0

    @property
    def vector_group_name(self) -> str:
        return connections.vector_group_name(self.connection("hv"), self.has_neutral("hv"),
                                             self.connection("lv"), self.has_neutral("lv"), self.clock_number)

    def winding(self, side: str) -> WindingSpec:
        return self.hv if side == "hv" else self.lv


class HarmonicSpec(_Frozen):
    order: int = Field(ge=2, le=25)
    amplitude: Percent = Field(ge=0, le=30, description="% of the fundamental")
    phase: Angle = 0.0


class SourceSpec(_Frozen):
    max_voltage: Voltage = Field(gt=0, le=b.MAX_VOLTAGE_V)
    max_current: Current = Field(gt=0, le=b.MAX_CURRENT_A)
    max_slew: VoltageRate = Field(ge=b.MIN_SLEW_V_PER_S, le=b.MAX_SLEW_V_PER_S)
    settling_time_constant: Duration = Field(ge=0, le=b.MAX_INTERVAL_S)
    min_frequency: Frequency = Field(45.0, gt=0)
    max_frequency: Frequency = Field(65.0, gt=0)
    output_resistance: Resistance = Field(0.0, ge=0)
    output_reactance: Resistance = Field(0.0, ge=0, description="at the rated frequency of the unit")
    harmonics: tuple[HarmonicSpec, ...] = ()
    readback_noise: Percent = Field(0.05, ge=0, description="1 sigma, % of reading")

    @model_validator(mode="after")
    def _distinct_orders(self) -> "SourceSpec":
        orders = [h.order for h in self.harmonics]
        if len(orders) != len(set(orders)):
            raise ValueError("harmonic orders must be distinct")
        if self.min_frequency >= self.max_frequency:
            raise ValueError("min_frequency must be below max_frequency")
        return self


class ErrorSpec(_Frozen):
    """An error band as % of reading plus % of range (accuracy: a bound; noise: 1 sigma)."""

    reading: Percent = Field(0.0, ge=0)
    range: Percent = Field(0.0, ge=0)


class QuantitySpecs(_Frozen):
    voltage: ErrorSpec = ErrorSpec()
    current: ErrorSpec = ErrorSpec()
    power: ErrorSpec = ErrorSpec()


class AnalyserSpec(_Frozen):
    channels: int = Field(3, ge=1, le=8)
    voltage_ranges: tuple[Voltage, ...] = Field(min_length=1)
    current_ranges: tuple[Current, ...] = Field(min_length=1)
    accuracy: QuantitySpecs = QuantitySpecs()
    noise: QuantitySpecs = QuantitySpecs()
    update_interval: Duration = Field(0.2, gt=0, le=b.MAX_INTERVAL_S)
    overload_factor: float = Field(1.2, ge=1.0, le=2.0)
    vt_ratio: float = Field(1.0, gt=0, description="voltage transformer ahead of the analyser: primary/secondary")
    ct_ratio: float = Field(1.0, gt=0, description="current transformer ahead of the analyser: primary/secondary")
    connection: Literal["three-wattmeter", "two-wattmeter"] = Field(
        "three-wattmeter", description="three-phase units: how the measuring elements are connected")
    open_winding: tuple[int, ...] = Field((), description=(
        "channels wired to the other winding's voltage (ratio test): one, or three line-to-line U-V, V-W, W-U"))

    @model_validator(mode="after")
    def _ranges_ascending(self) -> "AnalyserSpec":
        for name in ("voltage_ranges", "current_ranges"):
            values = getattr(self, name)
            if any(v <= 0 for v in values) or list(values) != sorted(set(values)):
                raise ValueError(f"{name} must be positive and ascending")
        return self


class ResistanceMeterSpec(_Frozen):
    """Single-phase: one channel per winding. Three-phase: three per winding, the line-to-line
    terminal pairs (U-V, V-W, W-U) in that order, e.g. ``{hv: [1, 2, 3], lv: [4, 5, 6]}``."""

    channels: dict[Literal["hv", "lv"], int | tuple[int, int, int]] = {"hv": 1, "lv": 2}
    test_current: dict[Literal["hv", "lv"], Current] = {"hv": 1.0, "lv": 10.0}
    accuracy: Percent = Field(0.02, ge=0, description="bound, % of reading")
    noise: Percent = Field(0.005, ge=0, description="1 sigma, % of reading")

    @model_validator(mode="after")
    def _both_windings(self) -> "ResistanceMeterSpec":
        _check_channels(self.channels, {"hv", "lv"})
        if set(self.test_current) != {"hv", "lv"}:
            raise ValueError("test_current needs hv and lv")
        return self


class ThermometerSpec(_Frozen):
    channels: dict[Literal["ambient", "oil", "winding"], int] = {"ambient": 1, "oil": 2, "winding": 3}
    accuracy: float = Field(0.1, ge=0, description="bound, K")
    noise: float = Field(0.02, ge=0, description="1 sigma, K")

    @model_validator(mode="after")
    def _all_points(self) -> "ThermometerSpec":
        _check_channels(self.channels, {"ambient", "oil", "winding"})
        return self


def _check_channels(channels: dict[str, int | tuple[int, ...]], needed: set[str]) -> None:
    if set(channels) != needed:
        raise ValueError(f"channels needs exactly {', '.join(sorted(needed))}")
    numbers = [n for v in channels.values() for n in ((v,) if isinstance(v, int) else v)]
    if len(set(numbers)) != len(numbers) or min(numbers) < 1:
        raise ValueError("channel numbers must be distinct and at least 1")


class WiringSpec(_Frozen):
    fed: Literal["hv", "lv"] = "lv"
    other: Literal["open", "short"] = "open"


class BaySpec(_Frozen):
    ambient_temperature: Temperature = 20.0
    initial_winding_rise: float = Field(0.0, ge=0, description="K above ambient at the start")
    initial_oil_rise: float = Field(0.0, ge=0, description="K above ambient at the start")
    tap: int = Field(0, ge=-40, le=40, description="the tap changer's position at the start")
    # An on-load tap changer's drive takes a few seconds per step (common practice, no source).
    tap_change_time: Duration = Field(3.0, gt=0, le=60, description=(
        "bay seconds the tap changer's drive takes per tap step (TAPChanger:MOVing? answers 1 meanwhile)"))
    wiring: WiringSpec = WiringSpec()


class Scenario(_Frozen):
    spec: int = Field(strict=True)
    kind: Literal["scenario"] = "scenario"
    name: str = Field(min_length=1)
    description: str = ""
    seed: int = 1
    transformer: TransformerSpec
    source: SourceSpec
    analyser: AnalyserSpec
    resistance_meter: ResistanceMeterSpec = ResistanceMeterSpec()
    thermometer: ThermometerSpec = ThermometerSpec()
    bay: BaySpec = BaySpec()
    faults: tuple[FaultSpec, ...] = ()

    @model_validator(mode="after")
    def _known_version(self) -> "Scenario":
        if self.spec != SPEC_VERSION:
            raise ValueError(f"spec {self.spec} is not supported; this version reads spec {SPEC_VERSION}")
        return self

    @model_validator(mode="after")
    def _channels_fit_the_phases(self) -> "Scenario":
        triples = {side: isinstance(ch, tuple) for side, ch in self.resistance_meter.channels.items()}
        if self.transformer.phases == 3 and not all(triples.values()):
            raise ValueError("resistance_meter.channels: a three-phase unit needs three channels per "
                             "winding, e.g. {hv: [1, 2, 3], lv: [4, 5, 6]}")
        if self.transformer.phases == 1 and any(triples.values()):
            raise ValueError("resistance_meter.channels: a single-phase unit has one channel per winding")
        if self.transformer.phases == 3 and self.analyser.channels < 3:
            raise ValueError("analyser.channels: a three-phase unit needs three channels")
        open_ = self.analyser.open_winding
        if open_ and (len(open_) != self.transformer.phases or min(open_) <= self.transformer.phases
                      or max(open_) > self.analyser.channels or len(set(open_)) != len(open_)):
            raise ValueError(f"analyser.open_winding: {self.transformer.phases} distinct channel(s) after the fed "
                             f"winding's, at most channel {self.analyser.channels}")
        taps = self.transformer.taps
        if self.bay.tap != 0 and (taps is None or not taps.steps[0] <= self.bay.tap <= taps.steps[1]):
            raise ValueError(f"bay.tap {self.bay.tap} is not a tap of the unit")
        if self.transformer.phases == 1:
            for fault in self.faults:
                if fault.name in THREE_PHASE_ONLY or fault.phase != 1:
                    raise ValueError(f"faults: '{fault.name}' on one phase needs a three-phase unit")
        return self

    def with_faults(self, faults: tuple[FaultSpec, ...]) -> "Scenario":
        return self.model_copy(update={"faults": self.faults + faults})


def scenario_names() -> list[str]:
    return sorted(p.stem for p in SIM_CONFIGS.glob("*.yaml") if _is_scenario(p))


def _is_scenario(path: Path) -> bool:
    try:
        head = read_input(path)[:400]
    except InputError:
        return False
    return "kind: scenario" in head


def load_scenario(name_or_path: str | Path) -> Scenario:
    """A scenario by name (file stem in ``sim_configs/``) or by path; errors as ``InputError``."""
    path = Path(name_or_path)
    if path.suffix not in (".yaml", ".yml"):
        path = SIM_CONFIGS / f"{name_or_path}.yaml"
        if not path.is_file() or not _is_scenario(path):
            known = ", ".join(scenario_names()) or "none"
            raise InputError(f"no scenario named '{name_or_path}' (known: {known})", str(name_or_path), 0, 0)
    return load_model(Scenario, path)
