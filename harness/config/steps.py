"""Step models of a sequence, one per YAML ``kind``; the runner registers an executor per kind."""

from __future__ import annotations

from typing import Annotated, Literal, Union

from pydantic import BaseModel, ConfigDict, Field, model_validator

from harness.common import bounds as b
from harness.common.units import Duration, Percent
from harness.config.station import Limits
from harness.config.targets import Target

Winding = Literal["hv", "lv"]


class Step(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")
    name: str | None = Field(None, description="shown in progress and in the report")
    limits: Limits = Field(Limits(), description="step limits: inside the sequence's and station's")

    def title(self) -> str:
        return self.name or self.kind  # type: ignore[attr-defined]


class OnQuantity(Step):
    """A step driven on exactly one of voltage or current (the fields are the subclass's)."""

    @model_validator(mode="after")
    def _exactly_one(self):
        if (self.voltage is None) == (self.current is None):
            raise ValueError("give exactly one of 'voltage' or 'current'")
        return self

    @property
    def quantity(self) -> str:
        return "voltage" if self.voltage is not None else "current"  # type: ignore[attr-defined]


class TargetStep(OnQuantity):
    """A step that drives the source to one target on a measured quantity."""
    voltage: Target | None = Field(None, description="'rated', '110 %' or '415 V' (no-load: mean-value voltage)")
    current: Target | None = Field(None, description="'rated', '100 %' or '7.5 A'")
    tolerance: Percent = Field(0.3, gt=0, le=5, description="how close the measured value must come")

    @property
    def target(self) -> Target:
        return self.voltage if self.voltage is not None else self.current  # type: ignore[return-value]


class Ramp(TargetStep):
    kind: Literal["ramp"]
    method: Literal["learned", "fixed-increment"] = Field(
        "learned", description="learned: closed loop on the unit's gain; fixed-increment: the baseline")


Test = Literal["no-load", "load-loss", "none"]


class Measure(Step):
    kind: Literal["measure"]
    test: Test = Field(description="what the readings are: no-load, load-loss or none")
    label: str | None = Field(None, description="e.g. 'no-load at rated voltage'")
    readings: int = Field(10, ge=2, le=b.MAX_READINGS)
    interval: Duration = Field(1.0, gt=0, le=b.MAX_INTERVAL_S)
    stability: Percent = Field(0.5, gt=0, le=100, description="largest relative standard deviation of U, I and P")
    max_readings: int = Field(60, ge=2, le=100000)

    @model_validator(mode="after")
    def _max_not_below(self):
        if self.max_readings < self.readings:
            raise ValueError("max_readings must not be below readings")
        return self


class Sweep(OnQuantity):
    kind: Literal["sweep"]
    voltage: list[Target] | None = Field(None, min_length=1, max_length=b.MAX_SWEEP_POINTS)
    current: list[Target] | None = Field(None, min_length=1, max_length=b.MAX_SWEEP_POINTS)
    tolerance: Percent = Field(0.5, gt=0, le=5)
    readings: int = Field(5, ge=2, le=b.MAX_READINGS)
    interval: Duration = Field(1.0, gt=0, le=b.MAX_INTERVAL_S)
    stability: Percent = Field(1.0, gt=0, le=100)
    test: Test = "no-load"

    @property
    def targets(self) -> list[Target]:
        return list(self.voltage if self.voltage is not None else self.current or [])


class Ratio(TargetStep):
    """Voltage ratio and phase displacement: the fed winding at a reduced voltage, both windings'
    voltages read on every tap listed (an off-circuit tap changer moved at operator prompts, an
    on-load one by the station's drive between readings)."""
    kind: Literal["ratio"]
    voltage: Target | None = Field(None, description="the reduced voltage: '3 %' of the fed winding's rated or '380 V'")
    tolerance: Percent = Field(1.0, gt=0, le=5, description="how close the measured voltage must come")
    taps: Literal["all"] | list[Annotated[int, Field(ge=-40, le=40)]] = Field(
        "all", description="'all' (lowest to highest) or a list of taps, e.g. [0, -2, 2]")
    readings: int = Field(5, ge=2, le=b.MAX_READINGS, description="readings averaged per tap")
    interval: Duration = Field(0.5, gt=0, le=b.MAX_INTERVAL_S)
    settle: Duration = Field(2.0, ge=0, le=b.MAX_INTERVAL_S, description=(
        "on-load tap changer: readings after each energised move are taken (and checked) this long "
        "but not averaged"))

    @model_validator(mode="after")
    def _voltage_only(self):
        if self.current is not None or self.voltage is None:
            raise ValueError("a ratio step takes 'voltage' (the reduced voltage on the fed winding), not 'current'")
        if isinstance(self.taps, list) and len(set(self.taps)) != len(self.taps):
            raise ValueError("taps: each tap once")
        return self


class Hold(Step):
    kind: Literal["hold"]
    duration: Duration = Field(gt=0, le=b.MAX_DURATION_S)
    interval: Duration = Field(1.0, gt=0, le=b.MAX_INTERVAL_S, description="reading interval while holding")


class Wait(Step):
    kind: Literal["wait"]
    duration: Duration = Field(gt=0, le=b.MAX_DURATION_S)


class Off(Step):
    kind: Literal["switch-off"]


class Wiring(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")
    fed: Winding = Field(description="the winding connected to the source")
    other: Literal["open", "short"] = Field(description="the other winding: open, or shorted by the link")


class Prompt(Step):
    kind: Literal["prompt"]
    text: str = Field(min_length=1, description="what the operator must do")
    wiring: Wiring | None = Field(None, description="the connection state after the operator's change")


class Resistance(Step):
    kind: Literal["resistance"]
    windings: list[Winding] = Field(["hv", "lv"], min_length=1)
    readings: int = Field(3, ge=1, le=100)


class Temperature(Step):
    kind: Literal["temperature"]


class Repeat(Step):
    kind: Literal["repeat"]
    times: int = Field(ge=1, le=1000)
    steps: list["AnyStep"] = Field(min_length=1)


AnyStep = Annotated[
    Union[Ramp, Measure, Sweep, Ratio, Hold, Wait, Off, Prompt, Resistance, Temperature, Repeat],
    Field(discriminator="kind"),
]
Repeat.model_rebuild()
