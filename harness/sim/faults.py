"""Faults of the simulated bay: what each one does, when it starts, and its state during a run.

A fault is chosen by name (``--fault NAME``, with the default trigger below) or in a scenario
with its own trigger. A trigger is one condition: bay seconds energised, the output voltage
passing a value, or a number of analyser queries answered while energised; none means active
from the start.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from harness.common import bounds as b
from harness.common.units import Duration, Voltage

# Analyser queries answered while energised: an hour of fast ramp readings is under 100 000.
MAX_QUERIES = 1_000_000

FAULTS: dict[str, str] = {
    "shorted-turn": "a shorted turn in the core window: the energised winding draws about ten times "
                    "its normal no-load current at rated voltage, rising linearly with voltage; on a "
                    "three-phase unit it sits on one limb (by default limb 1, phase U, an outer "
                    "limb), so that phase's current rises",
    "missing-link": "the short-circuit link is not fitted: with the other winding set to 'short' "
                    "it is in fact open, so a ramp to rated current drives the voltage up",
    "analyser-silent": "the power analyser stops answering queries (commands are swallowed) "
                       "once triggered, by default after 5 bay seconds energised",
    "overrange": "the analyser's current input overloads: current and power read 9.9E37 while "
                 "the output is energised, once triggered (default after 2 bay seconds energised)",
    "stuck-output": "the source's output contactor is stuck: voltage 0, OUTPut OFF, the watchdog "
                    "and the current protection are ignored, the output stays live",
    "garbage-reply": "one query reply of the instrument is garbled (default the analyser, "
                     "after 3 bay seconds energised)",
    "dropped-connection": "the instrument closes its socket on the next query (default the "
                          "analyser, after 3 bay seconds energised); new connections are accepted",
    "open-link-phase": "three-phase: one phase of the short-circuit link is missing (by default "
                       "phase 1, U): with the other winding set to 'short' only two of its terminals "
                       "are joined, so the currents are unbalanced and one line current is far low",
    "dead-source-phase": "three-phase: one phase of the source gives nothing (by default phase 1, "
                         "U): its emf stays at zero while the other two follow the setpoint",
    "wrong-tap": "one tap position is wired to the next tap's lead (by default tap +1 gives the turns of "
                 "tap +2): that tap's ratio is off by one step, the others are right",
    "tap-changer-stuck": "the on-load tap changer's drive sticks once triggered (default after 1 bay "
                         "second energised, so the first energised move): a move runs its time, then "
                         "the changer reports the tap it was on, which stays in circuit",
    "wrong-vector-group": "the other winding is connected for another clock number (three-phase: a delta "
                          "closed on the other terminals or a zigzag the other way round, e.g. Dyn11 "
                          "as Dyn1; single-phase: reversed polarity)",
}

FaultName = Literal["shorted-turn", "missing-link", "analyser-silent", "overrange",
                    "stuck-output", "garbage-reply", "dropped-connection", "open-link-phase",
                    "dead-source-phase", "wrong-tap", "wrong-vector-group", "tap-changer-stuck"]
Role = Literal["source", "analyser", "resistance_meter", "thermometer", "bay_control", "tap_changer"]

# Faults that act on one instrument's link rather than on the physics.
LINK_FAULTS = ("analyser-silent", "garbage-reply", "dropped-connection")
# Faults that act on one phase (limb) of a three-phase unit.
PHASE_FAULTS = ("shorted-turn", "open-link-phase", "dead-source-phase")
THREE_PHASE_ONLY = ("open-link-phase", "dead-source-phase")


class FaultTrigger(BaseModel):
    """At most one condition; none = active from the start."""

    model_config = ConfigDict(frozen=True, extra="forbid")

    after_energised: Duration | None = Field(None, ge=0, le=b.MAX_DURATION_S, description="bay seconds with the output on")
    voltage_above: Voltage | None = Field(None, gt=0, le=b.MAX_VOLTAGE_V, description="source output voltage (rms)")
    after_queries: int | None = Field(None, ge=0, le=MAX_QUERIES, description="analyser queries answered while energised")

    @model_validator(mode="after")
    def _one_condition(self) -> "FaultTrigger":
        given = [v for v in (self.after_energised, self.voltage_above, self.after_queries) if v is not None]
        if len(given) > 1:
            raise ValueError("give at most one of after_energised, voltage_above, after_queries")
        return self


class FaultSpec(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")

    name: FaultName
    trigger: FaultTrigger = FaultTrigger()
    instrument: Role = "analyser"
    repeat: int = Field(1, ge=1, le=b.MAX_READINGS, description="garbled replies or dropped connections to cause")
    phase: int = Field(1, ge=1, le=3, description="three-phase: the phase (limb) it acts on, 1=U 2=V 3=W")
    tap: int = Field(1, ge=-40, le=40, description="wrong-tap: the tap wired to the next tap's lead")

    @model_validator(mode="after")
    def _instrument_only_for_link_faults(self) -> "FaultSpec":
        if self.tap != 1 and self.name != "wrong-tap":
            raise ValueError(f"'{self.name}' does not act on one tap: drop 'tap'")
        if self.phase != 1 and self.name not in PHASE_FAULTS:
            raise ValueError(f"'{self.name}' does not act on one phase: drop 'phase'")
        if self.name not in LINK_FAULTS and self.instrument != "analyser":
            raise ValueError(f"'{self.name}' acts on the bay, not on one instrument: drop 'instrument'")
        if self.name == "analyser-silent" and self.instrument != "analyser":
            raise ValueError("'analyser-silent' acts on the analyser only")
        return self


DEFAULT_TRIGGERS: dict[str, FaultTrigger] = {
    "shorted-turn": FaultTrigger(),
    "missing-link": FaultTrigger(),
    "analyser-silent": FaultTrigger(after_energised=5.0),
    "overrange": FaultTrigger(after_energised=2.0),
    "stuck-output": FaultTrigger(),
    "garbage-reply": FaultTrigger(after_energised=3.0),
    "dropped-connection": FaultTrigger(after_energised=3.0),
    "open-link-phase": FaultTrigger(),
    "dead-source-phase": FaultTrigger(),
    "wrong-tap": FaultTrigger(),
    "wrong-vector-group": FaultTrigger(),
    "tap-changer-stuck": FaultTrigger(after_energised=1.0),
}


def fault_spec(fault: str | FaultSpec) -> FaultSpec:
    """A fault given by name gets its default trigger; an unknown name is a clear error."""
    if isinstance(fault, FaultSpec):
        return fault
    if fault not in FAULTS:
        raise ValueError(f"unknown fault '{fault}'; known: {', '.join(FAULTS)}")
    return FaultSpec(name=fault, trigger=DEFAULT_TRIGGERS[fault])


class FaultState:
    """One fault during a run: armed until its trigger holds, then active (latched)."""

    def __init__(self, spec: FaultSpec):
        self.spec = spec
        self.active = False
        self.activated_at: float | None = None
        self.remaining = spec.repeat

    def update(self, now: float, energised_s: float, voltage: float, queries: int) -> None:
        if self.active:
            return
        t = self.spec.trigger
        if ((t.after_energised is not None and energised_s < t.after_energised)
                or (t.voltage_above is not None and voltage <= t.voltage_above)
                or (t.after_queries is not None and queries < t.after_queries)):
            return
        self.active = True
        self.activated_at = now

    def consume(self) -> bool:
        """For one-shot link faults: True (and one fewer left) while any remain."""
        if not self.active or self.remaining <= 0:
            return False
        self.remaining -= 1
        return True
