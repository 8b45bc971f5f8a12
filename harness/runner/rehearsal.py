"""Which simulated unit a sequence is rehearsed on, and whether its nameplate fits that unit.

Without ``--station`` a sequence runs on a simulated bay: the scenario named by ``--sim``, else
by the sequence's own ``rehearse: {scenario: ...}``, else the built-in default. ``nameplate``
builds the unit and bay from the sequence itself (``harness.sim.nameplate``). A sequence whose
nameplate differs from the simulated unit's (rating, voltages, frequency, phases) is refused:
its results would be judged against guarantees of another unit.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from harness.common.errors import InputError, UsageError
from harness.common.yamlio import LoadedYaml
from harness.config.sequence import Sequence
from harness.sim import nameplate as np_unit
from harness.sim.scenario import Scenario, load_scenario, scenario_names

DEFAULT_SCENARIO = "default"
MATCH_REL = 1e-3  # nameplate values that agree to 0.1 % are the same unit


def nameplate_of(sequence: Sequence) -> np_unit.Nameplate:
    t, g = sequence.transformer, sequence.guarantees
    return np_unit.Nameplate(
        name=sequence.unit.serial, rated_power=t.rated_power, phases=t.phases, frequency=t.frequency,
        hv=np_unit.Winding(t.hv.rated_voltage, t.hv.connection, t.hv.neutral),
        lv=np_unit.Winding(t.lv.rated_voltage, t.lv.connection, t.lv.neutral),
        winding_material=t.winding_material, reference_temperature=t.reference_temperature,
        vector_group=t.vector_group,
        taps=(None if t.taps is None else
              {"winding": t.taps.winding, "steps": list(t.taps.steps), "step": t.taps.step}),
        no_load_loss=g.no_load_loss if g else None, load_loss=g.load_loss if g else None,
        impedance=g.impedance if g else None, no_load_current=g.no_load_current if g else None)


def bay_needs(sequence: Sequence) -> np_unit.BayNeeds:
    limits = sequence.limits
    return np_unit.BayNeeds(limits.voltage, limits.current, limits.power)


def nameplate_scenario(sequence: Sequence, loaded: LoadedYaml) -> np_unit.Built:
    """The unit and bay of the sequence's nameplate; guarantees no unit can have are refused at
    the sequence's guarantees."""
    try:
        return np_unit.build(nameplate_of(sequence), bay_needs(sequence))
    except np_unit.Unbuildable as exc:
        given = loaded.data.get("guarantees") if isinstance(loaded.data, dict) else None
        place = (("guarantees", exc.field) if isinstance(given, dict) and exc.field in given
                 else ("guarantees",) if given else ("transformer",))
        raise loaded.error(place, f"no simulated unit can be built from this nameplate: {exc}") from exc


def scenario_choice(sequence: Sequence, sequence_path: Path, asked: str | None) -> str:
    """``--sim`` if given, else the sequence's ``rehearse.scenario`` (a file relative to the sequence)."""
    if asked is not None:
        return asked
    if sequence.rehearse is None:
        return DEFAULT_SCENARIO
    named = sequence.rehearse.scenario
    if Path(named).suffix in (".yaml", ".yml") and not Path(named).is_absolute():
        return str(sequence_path.parent / named)
    return named


def load_for(sequence: Sequence, loaded: LoadedYaml, choice: str) -> tuple[Scenario, str | None]:
    """(scenario, its text when built from the nameplate)."""
    if choice == np_unit.NAME:
        built = nameplate_scenario(sequence, loaded)
        return built.scenario, built.text
    try:
        return load_scenario(choice), None
    except InputError as exc:
        if exc.line or Path(choice).suffix in (".yaml", ".yml"):
            raise  # a scenario file's own error, at its place in the file
        raise UsageError(f"--sim: {exc.message}") from exc


def differences(sequence: Sequence, scenario: Scenario) -> list[str]:
    """What of the nameplate differs from the simulated unit's: rating, voltages, frequency, phases."""
    t, u = sequence.transformer, scenario.transformer
    found = []
    if t.phases != u.phases:
        found.append(f"phases {t.phases} against {u.phases}")
    for label, mine, theirs, unit in (("rating", t.rated_power / 1e3, u.rated_power / 1e3, "kVA"),
                                      ("hv voltage", t.hv.rated_voltage, u.hv.rated_voltage, "V"),
                                      ("lv voltage", t.lv.rated_voltage, u.lv.rated_voltage, "V"),
                                      ("frequency", t.frequency, u.frequency, "Hz")):
        if not math.isclose(mine, theirs, rel_tol=MATCH_REL):
            found.append(f"{label} {mine:g} {unit} against {theirs:g} {unit}")
    return found


def fitting_scenarios(sequence: Sequence) -> list[str]:
    """The built-in scenarios whose unit has this nameplate."""
    fits = []
    for name in scenario_names():
        try:
            if not differences(sequence, load_scenario(name)):
                fits.append(name)
        except InputError:
            continue
    return fits


def refuse_mismatch(sequence: Sequence, loaded: LoadedYaml, scenario: Scenario, choice: str) -> None:
    found = differences(sequence, scenario)
    if not found:
        return
    fits = [f"--sim {name}" for name in fitting_scenarios(sequence)]
    ways = " or ".join(fits + [f"--sim {np_unit.NAME} (a unit built from this nameplate and its guarantees)"])
    message = (f"the nameplate differs from the simulated unit of scenario '{choice}' "
               f"({scenario.transformer.name}): {'; '.join(found)}; its results would be judged against "
               f"another unit. Run it with {ways}; --allow-mismatch runs it on '{choice}' anyway")
    raise loaded.error(("transformer",), message)


def describe(scenario: Any) -> str:
    t = scenario.transformer
    return (f"{t.name}: {t.rated_power / 1e3:g} kVA {t.hv.rated_voltage:g}/{t.lv.rated_voltage:g} V "
            f"{t.frequency:g} Hz, {'three' if t.phases == 3 else 'single'}-phase")
