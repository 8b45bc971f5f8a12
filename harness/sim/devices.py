"""The SCPI face of each simulated instrument: its command tree bound to the bay.

One ``Device`` per role. A program message is answered from one analyser snapshot, so the
five quantities of a compound query always belong to the same update.
"""

from __future__ import annotations

import math
from typing import Callable

from harness.sim.bay import Bay, BayConflict
from harness.sim.scpi_tree import (
    OVERLOAD, CommandTree, ScpiError, format_number, no_params, one_param, parse_bool, parse_channels,
    parse_choice, parse_number,
)

MAKER = "Harness Sim"
FIRMWARE = "1.0"


class Device:
    """A command tree plus the role it plays; ``handle(message) -> reply or None``."""

    def __init__(self, role: str, tree: CommandTree, before: Callable[[], None] = lambda: None):
        self.role = role
        self.tree = tree
        self._before = before

    def handle(self, message: str) -> str | None:
        self._before()
        return self.tree.execute(message)


def _identity(bay: Bay, model: str, n: int) -> str:
    return f"{MAKER},{model},SIM{bay.scenario.seed:04d}-{n},{FIRMWARE}"


def _system(tree: CommandTree) -> None:
    tree.add("SYSTem:ERRor[:NEXT]", getter=lambda p: no_params(p) or tree.status.pop())
    tree.add("SYSTem:ERRor:COUNt", getter=lambda p: no_params(p) or str(len(tree.status.errors)))
    tree.add("SYSTem:VERSion", getter=lambda p: no_params(p) or "1999.0")


def _flag(value: bool) -> str:
    return "1" if value else "0"


def _conflict(fn: Callable[[], object]) -> object:
    try:
        return fn()
    except BayConflict as exc:
        raise ScpiError(-221, str(exc)) from exc


# ---------------------------------------------------------------------------- AC source

def source_device(bay: Bay) -> Device:
    src = bay.source
    spec = src.spec
    tree = CommandTree(_identity(bay, "SIM-AC1", 1), reset=lambda: bay.source_command("reset"))
    _system(tree)

    def bounded(p: list[str], unit: str, lo: float, hi: float, default: float) -> float:
        value = parse_number(one_param(p), unit, {"MINIMUM": lo, "MAXIMUM": hi, "DEFAULT": default})
        if not lo <= value <= hi:
            raise ScpiError(-222, f"{value:g} {unit} outside {lo:g}..{hi:g} {unit}")
        return value

    tree.add("[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]",
             lambda p: bay.source_command("voltage", bounded(p, "V", 0.0, spec.max_voltage, 0.0)),
             lambda p: no_params(p) or format_number(src.state.setpoint))
    tree.add("[SOURce:]VOLTage:SLEW",
             lambda p: bay.source_command("slew", bounded(p, "V/S", 1e-3, spec.max_slew, spec.max_slew)),
             lambda p: no_params(p) or format_number(src.slew))
    tree.add("[SOURce:]FREQuency[:CW]",
             lambda p: bay.source_command("frequency", bounded(p, "HZ", spec.min_frequency, spec.max_frequency,
                                                               src.rated_frequency)),
             lambda p: no_params(p) or format_number(src.frequency))
    tree.add("OUTPut[:STATe]", lambda p: bay.source_command("output", parse_bool(one_param(p))),
             lambda p: no_params(p) or _flag(src.output_on))
    tree.add("[SOURce:]CURRent:PROTection[:LEVel]",
             lambda p: bay.configure_source(protection_level=bounded(p, "A", 1e-3, spec.max_current, spec.max_current)),
             lambda p: no_params(p) or format_number(src.protection_level))
    tree.add("[SOURce:]CURRent:PROTection:STATe",
             lambda p: bay.configure_source(protection_on=parse_bool(one_param(p))),
             lambda p: no_params(p) or _flag(src.protection_on))
    tree.add("[SOURce:]CURRent:PROTection:TRIPped", getter=lambda p: no_params(p) or _tripped(bay))
    tree.add("[SOURce:]CURRent:PROTection:CLEar", lambda p: no_params(p) or bay.configure_source(tripped=False))
    tree.add("OUTPut:PROTection:CLEar", lambda p: no_params(p) or bay.configure_source(tripped=False))
    tree.add("MEASure[:SCALar]:VOLTage[:AC]", getter=lambda p: _readback(bay, p, 0))
    tree.add("MEASure[:SCALar]:CURRent[:AC]", getter=lambda p: _readback(bay, p, 1))
    tree.add("SYSTem:WATChdog:TIMeout",
             lambda p: bay.configure_source(watchdog_timeout=bounded(p, "S", 0.1, 3600.0, 10.0)),
             lambda p: no_params(p) or format_number(src.watchdog_timeout))
    tree.add("SYSTem:WATChdog[:STATe]", lambda p: bay.configure_source(watchdog_on=parse_bool(one_param(p))),
             lambda p: no_params(p) or _flag(src.watchdog_on))
    return Device("source", tree, before=lambda: bay.source_command("touch"))


def _readback(bay: Bay, params: list[str], which: int) -> str:
    """No parameter: the single value (on a three-phase source the largest phase). A channel
    list ``(@1:3)``: the phases named, line-to-neutral volts or line amps (SCPI-1999 channel list)."""
    if not params:
        return format_number(bay.source_readback()[which])
    per_phase = bay.source_phase_readback()[which]
    phases = parse_channels(one_param(params), range(1, len(per_phase) + 1))
    return ",".join(format_number(per_phase[k - 1]) for k in phases)


def _tripped(bay: Bay) -> str:
    bay.advance()
    return _flag(bay.source.tripped)


# ---------------------------------------------------------------------------- power analyser

class _AnalyserFace:
    """Analyser commands; one snapshot per program message."""

    FIELDS = {"u_rms": "VOLTage[:AC]", "u_mean": "VOLTage:MEAN", "i_rms": "CURRent[:AC]",
              "p": "POWer[:AC]", "freq": "FREQuency"}
    ARRAY_FIELDS = ("p", "u_rms", "u_mean", "i_rms", "freq")

    def __init__(self, bay: Bay):
        self.bay = bay
        self.memo = None
        self.tree = CommandTree(_identity(bay, "SIM-PA3", 2), reset=self._reset)
        _system(self.tree)
        for name, node in self.FIELDS.items():
            for verb in ("MEASure[:SCALar]", "FETCh[:SCALar]", "READ[:SCALar]"):
                self.tree.add(f"{verb}:{node}", getter=lambda p, n=name: self._values(n, p))
        # The compact dialect (drivers/profiles/compact-power-analyser.yaml): one array query,
        # channel after channel, each p,u,umean,i,f and a status word (0: no overload).
        self.tree.add("FETCh:ARRay", getter=self._array)
        an = bay.analyser
        # The phase angle between two channels' voltages (our own query): (@reference,channel)
        # answers the degrees by which the channel's fundamental leads the reference's.
        self.tree.add("MEASure[:SCALar]:VOLTage:PHASe", getter=self._phase)
        for root in ("SENSe", "INPut"):
            self.tree.add(f"{root}:VOLTage[:AC]:RANGe[:UPPer]", self._set_voltage_range,
                          lambda p: no_params(p) or format_number(an.voltage_range))
            self.tree.add(f"{root}:CURRent[:AC]:RANGe[:UPPer]", lambda p: self._set(an.set_current_range, p, "A"),
                          lambda p: no_params(p) or format_number(an.current_range))
        self.tree.add("SENSe:AVERage:TIME", lambda p: self._set(an.set_update_interval, p, "S"),
                      lambda p: no_params(p) or format_number(an.update_interval))

    def _reset(self) -> None:
        with self.bay.lock:
            self.bay.analyser.reset()

    def _set(self, setter: Callable[[float], None], params: list[str], unit: str) -> None:
        with self.bay.lock:
            self.bay.advance()
            setter(parse_number(one_param(params), unit))

    def _set_voltage_range(self, params: list[str]) -> None:
        """``RANGe <volts>`` for every channel, ``RANGe <volts>,(@4:6)`` for the channels listed."""
        if len(params) == 2:
            channels = parse_channels(params[1], range(1, self.bay.analyser.spec.channels + 1))
            with self.bay.lock:
                self.bay.advance()
                self.bay.analyser.set_voltage_range(parse_number(params[0], "V"), channels)
            return
        self._set(self.bay.analyser.set_voltage_range, params, "V")

    def _phase(self, params: list[str]) -> str:
        pair = parse_channels(one_param(params), range(1, self.bay.analyser.spec.channels + 1))
        if len(pair) != 2:
            raise ScpiError(-109, "give (@reference,channel)")
        return format_number(self.bay.analyser_phase(pair[0], pair[1]))

    def _values(self, name: str, params: list[str]) -> str:
        channels = self._channels(params)
        if self.memo is None:
            self.memo = self.bay.analyser_snapshot()
        return ",".join(format_number(getattr(self.memo[ch - 1], name)) for ch in channels)

    def _array(self, params: list[str]) -> str:
        channels = self._channels(params)
        if self.memo is None:
            self.memo = self.bay.analyser_snapshot()
        return ";".join(",".join(format_number(getattr(self.memo[ch - 1], name))
                                 for name in self.ARRAY_FIELDS) + "," + _status(self.memo[ch - 1])
                        for ch in channels)

    def _channels(self, params: list[str]) -> list[int]:
        if not params:
            return [1]
        return parse_channels(one_param(params), range(1, self.bay.analyser.spec.channels + 1))

    def begin_message(self) -> None:
        self.memo = None


def _status(values: object) -> str:
    over = any(abs(getattr(values, name)) >= OVERLOAD for name in _AnalyserFace.ARRAY_FIELDS)
    return "1" if over else "0"


def analyser_device(bay: Bay) -> Device:
    face = _AnalyserFace(bay)
    return Device("analyser", face.tree, before=face.begin_message)


# ---------------------------------------------------------------------------- resistance meter

def resistance_meter_device(bay: Bay) -> Device:
    meter = bay.resistance_meter
    tree = CommandTree(_identity(bay, "SIM-RM2", 3))
    _system(tree)

    def measure(p: list[str]) -> str:
        channels = parse_channels(one_param(p), range(1, 100)) if p else [meter.default_channel("hv")]
        terminals = [meter.terminals(ch) for ch in channels]
        if any(side is None for side, _ in terminals):
            raise ScpiError(-222, "no winding on that channel")
        return ",".join(_resistance(tree, bay, side, pair) for side, pair in terminals)

    tree.add("MEASure[:SCALar]:FRESistance", getter=measure)
    tree.add("SENSe:FRESistance:CURRent", getter=lambda p: no_params(p) or format_number(meter.test_current()))
    return Device("resistance_meter", tree)


def _resistance(tree: CommandTree, bay: Bay, side: str, pair: int | None) -> str:
    """A live winding cannot be measured: the meter answers not-a-number and queues -221."""
    try:
        return format_number(bay.winding_resistance(side, pair))
    except BayConflict as exc:
        tree.status.push(ScpiError(-221, str(exc)))
        return format_number(math.nan)


# ---------------------------------------------------------------------------- thermometer

def thermometer_device(bay: Bay) -> Device:
    thermo = bay.thermometer
    tree = CommandTree(_identity(bay, "SIM-TH4", 4))
    _system(tree)

    def measure(p: list[str]) -> str:
        channels = parse_channels(one_param(p), range(1, 100)) if p else [thermo.spec.channels["winding"]]
        points = [thermo.point(ch) for ch in channels]
        if None in points:
            raise ScpiError(-222, "no sensor on that channel")
        return ",".join(format_number(bay.temperature(pt)) for pt in points)

    tree.add("MEASure[:SCALar]:TEMPerature", getter=measure)
    return Device("thermometer", tree)


# ---------------------------------------------------------------------------- bay control

def bay_control_device(bay: Bay) -> Device:
    tree = CommandTree(_identity(bay, "SIM-BAY", 5))
    _system(tree)
    tree.add("WIRing:FED", lambda p: _conflict(lambda: bay.set_wiring(fed=parse_choice(one_param(p), ("HV", "LV")).lower())),
             lambda p: no_params(p) or bay.wiring.fed.upper())
    tree.add("WIRing:OTHer", lambda p: _conflict(lambda: bay.set_wiring(other=_other(one_param(p)))),
             lambda p: no_params(p) or ("SHOR" if bay.wiring.other == "short" else "OPEN"))
    tree.add("TAP[:POSition]", lambda p: _conflict(lambda: _set_tap(bay, one_param(p))),
             lambda p: no_params(p) or str(bay.tap))
    tree.add("BAY:TIME", getter=lambda p: no_params(p) or format_number(bay.bay_time()))
    return Device("bay_control", tree)


def _set_tap(bay: Bay, text: str, move: Callable[[int], None] | None = None) -> None:
    value = parse_number(text)
    if value != int(value):
        raise ScpiError(-224, f"a tap is a whole number, not {text}")
    try:
        (move or bay.set_tap)(int(value))
    except ValueError as exc:
        raise ScpiError(-222, str(exc)) from exc


# ---------------------------------------------------------------------------- on-load tap changer

def tap_changer_device(bay: Bay) -> Device:
    """The on-load tap changer's drive (drivers/profiles/generic-tap-changer.yaml): a move is an
    overlapped command; MOVing? answers 1 until it has ended."""
    tree = CommandTree(_identity(bay, "SIM-TC6", 6))
    _system(tree)
    tree.add("TAPChanger:POSition", lambda p: _conflict(lambda: _set_tap(bay, one_param(p), bay.drive_tap)),
             lambda p: _tap_query(bay, p))
    tree.add("TAPChanger:MOVing", getter=lambda p: no_params(p) or _flag(bay.tap_moving()))
    return Device("tap_changer", tree)


def _tap_query(bay: Bay, params: list[str]) -> str:
    """No parameter: the tap the drive is on; MINimum / MAXimum: the ends of its range."""
    if not params:
        return str(bay.tap_position())
    try:
        lowest, highest = bay.tap_range()
    except ValueError as exc:
        raise ScpiError(-241, str(exc)) from exc
    word = parse_choice(one_param(params), ("MINimum", "MAXimum"))
    return str(lowest if word == "MINIMUM" else highest)


def _other(text: str) -> str:
    return "short" if parse_choice(text, ("OPEN", "SHORt")) == "SHORT" else "open"


DEVICE_FACTORIES: dict[str, Callable[[Bay], Device]] = {
    "source": source_device,
    "analyser": analyser_device,
    "resistance_meter": resistance_meter_device,
    "thermometer": thermometer_device,
    "bay_control": bay_control_device,
    "tap_changer": tap_changer_device,
}
