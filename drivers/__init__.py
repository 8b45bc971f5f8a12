"""Instrument drivers over a small SCPI base, driven by command profiles.

    from drivers import open_instrument
    source = open_instrument("ac_source", "TCPIP0::127.0.0.1::5025::SOCKET", "generic", "source")

Every failure is an :class:`InstrumentError` naming the instrument and the command.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from drivers.ac_source import AcSource
from drivers.bay_control import BayControl
from drivers.errors import (ConnectionLost, InstrumentError, InstrumentReportedError, InstrumentTimeout,
                            NotReached, NotSupported, OverRange, ProtocolError)
from drivers.power_analyser import ChannelReading, PowerAnalyser, Snapshot
from drivers.profile import KINDS, Profile, load_profile
from drivers.resistance_meter import ResistanceMeter
from drivers.scpi import Identity, ScpiInstrument
from drivers.tap_changer import TapChanger
from drivers.thermometer import Thermometer
from drivers.transport import FakeTransport, PyvisaTransport, Transport

INSTRUMENT_CLASSES: dict[str, type[ScpiInstrument]] = {
    cls.KIND: cls for cls in (AcSource, PowerAnalyser, ResistanceMeter, Thermometer, BayControl, TapChanger)
}


def open_instrument(kind: str, resource: str, profile: Profile | str | Path, name: str,
                    rm: Any | None = None, *, timeout_s: float = 2.0, **options: Any) -> ScpiInstrument:
    """Open ``resource`` over pyvisa as an instrument of ``kind`` speaking ``profile``.

    ``rm`` is a pyvisa ResourceManager (e.g. ``ResourceManager("defs.yaml@sim")``); without one,
    pyvisa-py is used. ``options`` go to the class (``channels=(1, 2, 3)`` for an analyser).
    The profile is loaded before the link is opened, so a bad profile touches no instrument.
    """
    if kind not in INSTRUMENT_CLASSES:
        raise ValueError(f"unknown instrument kind '{kind}' (kinds: {', '.join(KINDS)})")
    cls = INSTRUMENT_CLASSES[kind]
    loaded = profile if isinstance(profile, Profile) else load_profile(profile, kind)
    transport = PyvisaTransport(resource, rm=rm, timeout_s=timeout_s, name=name)
    try:
        return cls(transport, name, loaded, **options)
    except BaseException:
        transport.close()
        raise


__all__ = sorted([
    "AcSource", "BayControl", "ChannelReading", "ConnectionLost", "FakeTransport", "INSTRUMENT_CLASSES",
    "Identity", "InstrumentError", "InstrumentReportedError", "InstrumentTimeout", "KINDS", "NotReached", "NotSupported",
    "OverRange", "PowerAnalyser", "Profile", "ProtocolError", "PyvisaTransport", "ResistanceMeter",
    "ScpiInstrument", "Snapshot", "TapChanger", "Thermometer", "Transport", "load_profile", "open_instrument",
])
