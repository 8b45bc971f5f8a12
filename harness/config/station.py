"""The station file: the lab's instruments, wiring ratios and the bay's HARD limits.

Owned by the lab. A sequence can never raise these limits; the runner enforces the tighter of
station, sequence and step on every setpoint and every reading.
"""

from __future__ import annotations

import datetime as dt
import re
from typing import Annotated, Any, Literal, Union

from pydantic import (BaseModel, BeforeValidator, ConfigDict, Discriminator, Field, Tag, field_validator,
                      model_validator)

from harness.calc.chain import MeasurementChain
from harness.common import bounds as b
from harness.common.units import (Current, Duration, Power, Temperature, Voltage, VoltageRate)

STATION_SPEC = 1
_ISO_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")


def _whole_number(value: Any) -> Any:
    """A format version is written as a whole number: not ``true``, ``1.0`` or ``'1'``."""
    if type(value) is not int:
        raise ValueError(f"the format version is a whole number such as 1, not {value!r}")
    return value


def _iso_date(value: Any) -> Any:
    """A date written as ``YYYY-MM-DD`` (ISO 8601). A bare number is refused: pydantic would read
    it as seconds since 1970."""
    if isinstance(value, dt.date) and not isinstance(value, dt.datetime):
        return value
    if isinstance(value, str) and _ISO_DATE.fullmatch(value.strip()):
        return value.strip()
    raise ValueError(f"write the date as YYYY-MM-DD (ISO 8601), e.g. 2027-03-01, not {value!r}")


FormatVersion = Annotated[Literal[1], BeforeValidator(_whole_number)]
CalibrationDate = Annotated[dt.date, BeforeValidator(_iso_date)]
Channel = Annotated[int, Field(strict=True, ge=1, le=b.MAX_CHANNEL)]
# One channel, or (a three-phase winding's resistance) a list of them: told apart by the YAML's
# shape, so a wrong value gets the one error of the shape it has, not one per alternative.
Channels = Annotated[Union[Annotated[Channel, Tag("one")], Annotated[list[Channel], Tag("list")]],
                     Discriminator(lambda v: "list" if isinstance(v, list) else "one")]


class Frozen(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class Instrument(Frozen):
    resource: str = Field(min_length=1, description="VISA resource string, e.g. TCPIP0::10.0.0.5::5025::SOCKET")
    profile: str = Field(min_length=1, description="command profile: a name in drivers/profiles or a path")
    timeout: Duration = Field(2.0, gt=0, le=b.MAX_REPLY_TIMEOUT_S, description="reply timeout (real seconds)")
    calibration_due: CalibrationDate | None = Field(None, description="YYYY-MM-DD; past it, a run stops before energising")
    calibration_certificate: str | None = Field(None, min_length=1, description="the calibration certificate's id")
    serial: str | None = Field(None, min_length=1, description="serial number; compared with the one *IDN? gives")
    allow_expired_calibration: str | None = Field(None, min_length=8, description=(
        "the lab's reason to run this instrument past its calibration_due (shown on the report)"))
    channels: dict[str, Channels] = Field(default_factory=dict, description=(
        "named channels (thermometer, resistance meter); a three-phase unit's resistance meter takes "
        "three per winding, the line-to-line pairs 1-2, 2-3, 3-1"))


class TapChangerInstrument(Instrument):
    move_timeout: Duration = Field(30.0, gt=0, le=b.MAX_INTERVAL_S, description=(
        "bay seconds a move may take per tap step before the drive counts as stuck"))


class Instruments(Frozen):
    source: Instrument
    analyser: Instrument
    resistance_meter: Instrument | None = None
    thermometer: Instrument | None = None
    bay_control: Instrument | None = Field(None, description="simulated bay only: applies wiring changes")
    tap_changer: TapChangerInstrument | None = Field(None, description=(
        "an on-load tap changer's drive: moves the taps of a unit whose nameplate says changer: on-load"))


class MeasurementWiring(Frozen):
    """Instrument-transformer ratios between the bay and the analyser inputs."""
    vt_ratio: float = Field(1.0, gt=0, le=b.MAX_TRANSFORMER_RATIO, description="primary/secondary voltage ratio")
    ct_ratio: float = Field(1.0, gt=0, le=b.MAX_TRANSFORMER_RATIO, description="primary/secondary current ratio")


class Limits(Frozen):
    """Upper bounds on primary quantities; None means 'no further limit at this level'."""
    voltage: Voltage | None = Field(None, gt=0, le=b.MAX_VOLTAGE_V)
    current: Current | None = Field(None, gt=0, le=b.MAX_CURRENT_A)
    power: Power | None = Field(None, gt=0, le=b.MAX_POWER_W)
    energised_time: Duration | None = Field(None, gt=0, le=b.MAX_DURATION_S)
    winding_temperature: Temperature | None = Field(None, gt=0, le=b.MAX_WINDING_TEMPERATURE_C)


class StationLimits(Limits):
    """The bay's hard limits: every one must be given."""
    voltage: Voltage = Field(gt=0, le=b.MAX_VOLTAGE_V)
    current: Current = Field(gt=0, le=b.MAX_CURRENT_A)
    power: Power = Field(gt=0, le=b.MAX_POWER_W)
    energised_time: Duration = Field(gt=0, le=b.MAX_DURATION_S)
    winding_temperature: Temperature = Field(120.0, gt=0, le=b.MAX_WINDING_TEMPERATURE_C)
    slew: VoltageRate = Field(ge=b.MIN_SLEW_V_PER_S, le=b.MAX_SLEW_V_PER_S,
                              description="fastest allowed change of the source voltage")


class SafeState(Frozen):
    source_watchdog: Duration | None = Field(30.0, gt=0, le=b.MAX_INTERVAL_S, description=(
        "arm the source's communication watchdog (if its profile has one): with no command this long "
        "while on, the source itself drops to zero and off; null leaves it disarmed"))
    deenergised_voltage: Voltage = Field(5.0, gt=0, description="below this the bay counts as off")
    deenergised_current: Current = Field(0.05, gt=0)
    confirm_timeout: Duration = Field(5.0, gt=0, le=b.MAX_INTERVAL_S, description="bay seconds to confirm de-energisation")


class ReadingChecks(Frozen):
    late_after: Duration = Field(1.0, gt=0, le=b.MAX_INTERVAL_S, description="a snapshot slower than this is a fault (bay s)")
    stale_after: Duration = Field(5.0, gt=0, le=b.MAX_INTERVAL_S, description="identical snapshots this long while energised are a fault")
    temperature_interval: Duration = Field(2.0, gt=0, le=b.MAX_INTERVAL_S, description="winding temperature read this often while energised")
    source_check_interval: Duration = Field(2.0, gt=0, le=b.MAX_INTERVAL_S, description=(
        "the source's output state is read back this often while energised (and feeds its watchdog)"))


class Station(Frozen):
    spec: FormatVersion = Field(description="format version of the station file")
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
