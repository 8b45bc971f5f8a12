"""Cross-field checks of a record: readings that no real test of this unit can give.

Each check returns (location, reason, value) triples; the record model raises them as pydantic
errors on those locations, so a YAML file reports ``FILE:LINE:COLUMN: reason``.
"""

from __future__ import annotations

from typing import Any

from harness.calc.phases import apparent_power, mean, rated_current
from harness.common.vector_group import mismatches, parse_vector_group

Problem = tuple[tuple[Any, ...], str, Any]

SUPPORTED_SPECS = (1,)
# Above these the reading cannot be the test it claims to be (wrong winding, wrong unit prefix);
# mild deviations are warnings of the evaluation instead. Common practice, no source.
NO_LOAD_VOLTAGE_MAX_PU = 1.5
NO_LOAD_CURRENT_MAX_PU = 1.0
LOAD_CURRENT_MAX_PU = 2.0
MEAN_TO_RMS_LIMITS = (0.7, 1.3)


def transformer_problems(t: Any) -> list[Problem]:
    return _connection_problems(t) + _ratio_problems(t) + _highest_voltage_problems(t)


def _connection_problems(t: Any) -> list[Problem]:
    problems: list[Problem] = []
    for name in ("hv", "lv"):
        winding = getattr(t, name)
        if t.phases == 3 and winding.connection is None:
            problems.append(((name, "connection"), "a three-phase winding needs its connection: star, delta or zigzag", None))
        elif t.phases == 1 and winding.connection is not None:
            problems.append(((name, "connection"), "connection applies to three-phase units only", winding.connection))
        if winding.neutral and winding.connection not in ("star", "zigzag"):
            problems.append(((name, "neutral"), "only a star or zigzag winding has a neutral to bring out", True))
    return problems + _vector_group_problems(t)


def _vector_group_problems(t: Any) -> list[Problem]:
    if t.vector_group is None:
        return []
    if t.phases != 3:
        return [(("vector_group",), "a vector group applies to three-phase units only", t.vector_group)]
    try:
        group = parse_vector_group(t.vector_group)
    except ValueError as exc:
        return [(("vector_group",), str(exc), t.vector_group)]
    return [(("vector_group",), f"{t.vector_group}: {reason}", t.vector_group)
            for _, reason in mismatches(group, t.hv.connection, t.lv.connection, t.hv.neutral, t.lv.neutral)]


def _ratio_problems(t: Any) -> list[Problem]:
    if t.lv.rated_voltage > t.hv.rated_voltage:
        return [(("lv", "rated_voltage"), f"the lv rated voltage ({t.lv.rated_voltage:g} V) is above the hv "
                 f"rated voltage ({t.hv.rated_voltage:g} V): hv and lv swapped?", t.lv.rated_voltage)]
    return []


def _highest_voltage_problems(t: Any) -> list[Problem]:
    # Um is the highest system voltage the hv insulation is designed for, so never below the rated
    # voltage (IEC 60076-1 definition of Um, recalled, not re-read).
    if t.highest_voltage is not None and t.highest_voltage < t.hv.rated_voltage:
        return [(("highest_voltage",), f"the highest voltage for equipment ({t.highest_voltage:g} V) is below the "
                 f"hv rated voltage ({t.hv.rated_voltage:g} V)", t.highest_voltage)]
    return []


def record_problems(r: Any) -> list[Problem]:
    problems = _spec_problems(r)
    problems += _phase_count_problems(r)
    if r.no_load is not None:
        problems += _no_load_problems(r)
    if r.load is not None:
        problems += _load_problems(r)
    if r.load_profile is not None:
        problems += _profile_problems(r.load_profile)
    return problems


def _spec_problems(r: Any) -> list[Problem]:
    if r.spec not in SUPPORTED_SPECS:
        return [(("spec",), f"record format version {r.spec} is not supported (this version reads "
                 f"{', '.join(map(str, SUPPORTED_SPECS))})", r.spec)]
    return []


def _phase_count_problems(r: Any) -> list[Problem]:
    """A list of three belongs to a three-phase unit only."""
    if r.transformer.phases == 3:
        return []
    fields: list[tuple[tuple[str, ...], Any]] = [
        (("no_load", f), getattr(r.no_load, f)) for f in ("voltage", "voltage_mean", "current") if r.no_load is not None]
    fields += [(("load", f), getattr(r.load, f)) for f in ("voltage", "current") if r.load is not None]
    if r.winding_resistance is not None:
        fields += [(("winding_resistance", w, "resistance"), getattr(r.winding_resistance, w).resistance)
                   for w in ("hv", "lv")]
    return [(loc, "a single-phase unit has one value here, not a list of three", list(value))
            for loc, value in fields if isinstance(value, tuple)]


def _power_problem(section: str, test: Any, phases: int) -> list[Problem]:
    s = apparent_power(mean(test.voltage), mean(test.current), phases)
    if test.power > s * (1 + 1e-9):
        form = "sqrt(3)*U*I" if phases == 3 else "U*I"
        return [((section, "power"), f"{test.power:g} W is above {form} = {s:g} VA of the same test: "
                 "check the units, the instrument-transformer ratios and the wiring", test.power)]
    return []


def _rated(r: Any, winding: str) -> tuple[float, float]:
    t = r.transformer
    u = getattr(t, winding).rated_voltage
    return u, rated_current(t.rated_power, u, t.phases)


def _no_load_problems(r: Any) -> list[Problem]:
    nl, phases = r.no_load, r.transformer.phases
    u_r, i_r = _rated(r, nl.winding)
    problems = _power_problem("no_load", nl, phases)
    if mean(nl.voltage) > NO_LOAD_VOLTAGE_MAX_PU * u_r:
        problems.append((("no_load", "voltage"), f"{mean(nl.voltage):g} V is far above the rated voltage of the "
                         f"{nl.winding} winding ({u_r:g} V): wrong winding or unit?", mean(nl.voltage)))
    if mean(nl.current) >= NO_LOAD_CURRENT_MAX_PU * i_r:
        problems.append((("no_load", "current"), f"{mean(nl.current):g} A is not a no-load current: the rated "
                         f"current of the {nl.winding} winding is {i_r:g} A", mean(nl.current)))
    return problems + _mean_voltage_problems(nl)


def _mean_voltage_problems(nl: Any) -> list[Problem]:
    if nl.voltage_mean is None:
        return []
    ratio = mean(nl.voltage_mean) / mean(nl.voltage)
    low, high = MEAN_TO_RMS_LIMITS
    if not low <= ratio <= high:
        return [(("no_load", "voltage_mean"), f"the mean-value reading is {ratio:.2f} times the rms reading: "
                 "not the same voltage (the mean-value voltmeter must be scaled to rms)", mean(nl.voltage_mean))]
    return []


def _load_problems(r: Any) -> list[Problem]:
    ld, phases = r.load, r.transformer.phases
    u_r, i_r = _rated(r, ld.winding)
    problems = _power_problem("load", ld, phases)
    if mean(ld.voltage) > u_r:
        problems.append((("load", "voltage"), f"{mean(ld.voltage):g} V is above the rated voltage of the "
                         f"energised {ld.winding} winding ({u_r:g} V): a load-loss test runs at a few % of it",
                         mean(ld.voltage)))
    if mean(ld.current) > LOAD_CURRENT_MAX_PU * i_r:
        problems.append((("load", "current"), f"{mean(ld.current):g} A is {mean(ld.current) / i_r:.1f} times the "
                         f"rated current of the {ld.winding} winding ({i_r:g} A): wrong winding?", mean(ld.current)))
    return problems


def _profile_problems(blocks: list[Any]) -> list[Problem]:
    hours = sum(b.duration for b in blocks) / 3600.0
    if abs(hours - 24.0) > 1e-6:
        return [(("load_profile",), f"the load profile covers {hours:g} h; it must cover 24 h", hours)]
    return []
