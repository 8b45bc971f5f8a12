"""Instrument drivers over a small SCPI base, driven by command profiles.

    from drivers import open_instrument
    source = open_instrument("ac_source", "TCPIP0::127.0.0.1::5025::SOCKET", "generic", "source")

Every failure is an :class:`InstrumentError` naming the instrument and the command.
"""

from __future__ import annotations

from importlib import import_module
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from drivers.profile import Profile
    from drivers.scpi import ScpiInstrument

# The package's names, each imported from its module when first used: importing one driver module
# (``drivers.profile`` to check a station's profiles, say) then costs that module alone, not every
# driver and pyvisa (module ``__getattr__``, PEP 562; written here, not harness.common.lazy: the
# drivers depend on nothing of the harness).
_HOMES = {
    "AcSource": "ac_source", "BayControl": "bay_control", "ChannelReading": "power_analyser",
    "ConnectionLost": "errors", "FakeTransport": "transport", "Identity": "scpi", "InstrumentError": "errors",
    "InstrumentReportedError": "errors", "InstrumentTimeout": "errors", "KINDS": "profile",
    "NotReached": "errors", "NotSupported": "errors", "OverRange": "errors", "PowerAnalyser": "power_analyser",
    "Profile": "profile", "ProtocolError": "errors", "PyvisaTransport": "transport",
    "ResistanceMeter": "resistance_meter", "ScpiInstrument": "scpi", "Snapshot": "power_analyser",
    "TapChanger": "tap_changer", "Thermometer": "thermometer", "Transport": "transport",
    "load_profile": "profile",
}
_CLASSES = ("AcSource", "PowerAnalyser", "ResistanceMeter", "Thermometer", "BayControl", "TapChanger")


def __getattr__(name: str) -> Any:
    if name == "INSTRUMENT_CLASSES":
        return instrument_classes()
    if name in _HOMES:
        value = getattr(import_module(f"drivers.{_HOMES[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'drivers' has no attribute '{name}'")


def instrument_classes() -> dict[str, type[ScpiInstrument]]:
    """Each instrument kind's driver class, by its ``KIND``."""
    classes: list[type[ScpiInstrument]] = [__getattr__(name) for name in _CLASSES]
    return {cls.KIND: cls for cls in classes}


def open_instrument(kind: str, resource: str, profile: Profile | str | Path, name: str,
                    rm: Any | None = None, *, timeout_s: float = 2.0, **options: Any) -> ScpiInstrument:
    """Open ``resource`` over pyvisa as an instrument of ``kind`` speaking ``profile``.

    ``rm`` is a pyvisa ResourceManager (e.g. ``ResourceManager("defs.yaml@sim")``); without one,
    pyvisa-py is used. ``options`` go to the class (``channels=(1, 2, 3)`` for an analyser).
    The profile is loaded before the link is opened, so a bad profile touches no instrument.
    """
    from drivers.profile import KINDS, Profile, load_profile
    from drivers.transport import PyvisaTransport

    classes = instrument_classes()
    if kind not in classes:
        raise ValueError(f"unknown instrument kind '{kind}' (kinds: {', '.join(KINDS)})")
    cls = classes[kind]
    loaded = profile if isinstance(profile, Profile) else load_profile(profile, kind)
    transport = PyvisaTransport(resource, rm=rm, timeout_s=timeout_s, name=name)
    try:
        return cls(transport, name, loaded, **options)
    except BaseException:
        transport.close()
        raise


__all__ = sorted([*_HOMES, "INSTRUMENT_CLASSES", "instrument_classes", "open_instrument"])  # noqa: PLE0605
