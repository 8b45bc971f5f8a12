"""The station file: the lab's instruments, wiring ratios and the bay's HARD limits.

Owned by the lab. A sequence can never raise these limits; the runner enforces the tighter of
station, sequence and step on every setpoint and every reading.
"""

from __future__ import annotations

import datetime as dt
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from harness.calc.chain import MeasurementChain
from harness.common.units import (Current, Duration, Power, Temperature, Voltage, VoltageRate)

STATION_SPEC = 1


class Frozen(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class Instrument(Frozen):
    resource: str = Field(description="VISA resource string, e.g. TCPIP0::10.0.0.5::5025::SOCKET")
    profile: str = Field(description="command profile: a name in drivers/profiles or a path")
    timeout: Duration = Field(2.0, description="reply timeout (real seconds)")
    calibration_due: dt.date | None = None
    channels: dict[str, int | list[int]] = Field(default_factory=dict, description=(
        "named channels (thermometer, resistance meter); a three-phase unit's resistance meter takes "
        "three per winding, the line-to-line pairs 1-2, 2-3, 3-1"))


class Instruments(Frozen):
    source: Instrument
    analyser: Instrument
    resistance_meter: Instrument | None = None
    thermometer: Instrument | None = None
    bay_control: Instrument | None = Field(None, description="simulated bay only: applies wiring changes")


class MeasurementWiring(Frozen):
    """Instrument-transformer ratios between the bay and the analyser inputs."""
    vt_ratio: float = Field(1.0, gt=0, description="primary/secondary voltage ratio")
    ct_ratio: float = Field(1.0, gt=0, description="primary/secondary current ratio")


class Limits(Frozen):
    """Upper bounds on primary quantities; None means 'no further limit at this level'."""
    voltage: Voltage | None = Field(None, gt=0)
    current: Current | None = Field(None, gt=0)
    power: Power | None = Field(None, gt=0)
    energised_time: Duration | None = Field(None, gt=0)
    winding_temperature: Temperature | None = None


class StationLimits(Limits):
    """The bay's hard limits: every one must be given."""
    voltage: Voltage = Field(gt=0)
    current: Current = Field(gt=0)
    power: Power = Field(gt=0)
    energised_time: Duration = Field(gt=0)
    winding_temperature: Temperature = 120.0
    slew: VoltageRate = Field(gt=0, description="fastest allowed change of the source voltage")


class SafeState(Frozen):
    source_watchdog: Duration | None = Field(30.0, gt=0, description=(
        "arm the source's communication watchdog (if its profile has one): with no command this long "
        "while on, the source itself drops to zero and off; null leaves it disarmed"))
    deenergised_voltage: Voltage = Field(5.0, gt=0, description="below this the bay counts as off")
    deenergised_current: Current = Field(0.05, gt=0)
    confirm_timeout: Duration = Field(5.0, gt=0, description="bay seconds to confirm de-energisation")


class ReadingChecks(Frozen):
    late_after: Duration = Field(1.0, gt=0, description="a snapshot slower than this is a fault (bay s)")
    stale_after: Duration = Field(5.0, gt=0, description="identical snapshots this long while energised are a fault")
    temperature_interval: Duration = Field(2.0, gt=0, description="winding temperature read this often while energised")
    source_check_interval: Duration = Field(2.0, gt=0, description=(
        "the source's output state is read back this often while energised (and feeds its watchdog)"))


class Station(Frozen):
    spec: Literal[1] = Field(description="format version of the station file")
    name: str
    lab: str
    simulated: bool = False
    instruments: Instruments
    measurement: MeasurementWiring = MeasurementWiring()
    measurement_chain: MeasurementChain | None = Field(
        None, description="instrument-transformer errors and instrument accuracy: corrections and uncertainty")
    limits: StationLimits
    safe_state: SafeState = SafeState()
    readings: ReadingChecks = ReadingChecks()

    @field_validator("name", "lab")
    @classmethod
    def _not_blank(cls, v: str) -> str:
        if not v.strip():
            raise ValueError("must not be blank")
        return v

    @model_validator(mode="after")
    def _chain_matches_wiring(self) -> "Station":
        """The chain's rated ratios are the ones the runner applies: two different values is a typo."""
        if self.measurement_chain is None:
            return self
        m = self.measurement
        for k, channel in enumerate(self.measurement_chain.channels, start=1):
            for it, ratio, name in ((channel.voltage_transformer, m.vt_ratio, "vt_ratio"),
                                    (channel.current_transformer, m.ct_ratio, "ct_ratio")):
                given = it.ratio if it is not None else 1.0
                if abs(given / ratio - 1) > 1e-9:
                    raise ValueError(f"measurement_chain channel {k}: ratio {given:g} differs from "
                                     f"measurement.{name} {ratio:g}, which the readings are scaled by")
        return self

    @model_validator(mode="after")
    def _bay_control_only_simulated(self) -> "Station":
        if self.instruments.bay_control is not None and not self.simulated:
            raise ValueError("bay_control is for the simulated bay only; set simulated: true")
        return self
