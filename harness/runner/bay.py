"""Opening the bay's instruments from a station, and the built-in simulated bay behind pyvisa."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from drivers import open_instrument
from drivers.errors import InstrumentError

if TYPE_CHECKING:  # the classes come with the opened instruments: checking a sequence needs none of them
    from drivers.ac_source import AcSource
    from drivers.bay_control import BayControl
    from drivers.power_analyser import PowerAnalyser
    from drivers.resistance_meter import ResistanceMeter
    from drivers.tap_changer import TapChanger
    from drivers.thermometer import Thermometer
from harness.common.clock import Clock
from harness.config.station import Instrument, Station, TapChangerInstrument
from harness.config.station_checks import ROLE_KINDS, serial_mismatches


@dataclass
class Bay:
    """The opened instruments of a station; the runner talks to the bay only through these."""
    source: AcSource
    analyser: PowerAnalyser
    resistance_meter: ResistanceMeter | None = None
    thermometer: Thermometer | None = None
    bay_control: BayControl | None = None
    tap_changer: TapChanger | None = None
    identities: list[dict[str, Any]] = field(default_factory=list)

    def instruments(self) -> list[tuple[str, Any]]:
        return [(role, getattr(self, role)) for role in ROLE_KINDS if getattr(self, role) is not None]

    def close(self) -> None:
        for _, instrument in self.instruments():
            try:
                instrument.close()
            except Exception:  # noqa: BLE001 - closing is best effort; the bay is already safe
                pass


def open_bay(station: Station, rm: Any = None, phases: int = 1, clock: Clock | None = None,
             taps: tuple[int, int] | None = None) -> Bay:
    """Open every instrument the station names and ask each who it is; the analyser reads
    channel 1, or channels 1 to 3 for a three-phase unit (one per line). A tap changer's drive
    waits for its moves on ``clock`` and must reach every tap of the unit (``taps``, lowest and
    highest, from the nameplate).

    Nothing is energised here; the caller then puts the source at zero with its output off.
    """
    opened: dict[str, Any] = {}
    identities: list[dict[str, Any]] = []
    try:
        for role, kind in ROLE_KINDS.items():
            spec: Instrument | None = getattr(station.instruments, role)
            if spec is None:
                continue
            instrument = open_instrument(kind, spec.resource, spec.profile, role, rm=rm, timeout_s=spec.timeout,
                                         **_options(role, spec, phases, clock, taps))
            opened[role] = instrument
            identities.append(_identity(role, spec, instrument.identify()))
        mismatches = serial_mismatches(station, identities)
        if mismatches:
            raise InstrumentError("; ".join(mismatches), "station", "*IDN?")
        if "tap_changer" in opened:
            opened["tap_changer"].check_range()
    except BaseException:
        for instrument in opened.values():
            try:
                instrument.close()
            except Exception:  # noqa: BLE001
                pass
        raise
    return Bay(identities=identities, **opened)


def _options(role: str, spec: Instrument, phases: int, clock: Clock | None,
             taps: tuple[int, int] | None) -> dict[str, Any]:
    if role == "analyser":
        return {"channels": tuple(range(1, phases + 1))}
    if isinstance(spec, TapChangerInstrument):
        return {"clock": clock, "move_timeout_s": spec.move_timeout, "taps": taps}
    return {}


def _identity(role: str, spec: Instrument, idn: Any) -> dict[str, Any]:
    return {"role": role, "maker": idn.maker, "model": idn.model, "serial": idn.serial,
            "firmware": idn.firmware, "resource": spec.resource, "profile": spec.profile,
            "calibration_due": spec.calibration_due.isoformat() if spec.calibration_due else None}
