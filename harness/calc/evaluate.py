"""Evaluation of a test record: compose the small pure steps into the results.

Each part is skipped, with a warning, when the record lacks what it needs (a run that tripped
after the no-load test still gets its no-load results).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from harness.calc import circuit, compliance, performance, ratio, temperature, uncertainty
from harness.calc.phases import values_of
from harness.common.vector_group import parse_vector_group
from harness.calc.phase_table import phase_table
from harness.calc.basis import Basis, basis_of
from harness.calc.corrections import corrected_record
from harness.calc.load import LoadResult, evaluate_load
from harness.calc.no_load import NoLoadResult, evaluate_no_load, shunt, waveform_settings
from harness.calc.record import Record, Transformer
from harness.calc.results import Branches, EfficiencyRow, MaxEfficiency, RegulationRow, Results
from harness.calc.standards import IEEE_NO_LOAD_KT_PER_C
from harness.calc.tolerances import flag_uncertain, guarantee_checks, tolerance_source, untoleranced

DEFAULT_LOADS = (0.25, 0.5, 0.75, 1.0, 1.25)
DEFAULT_POWER_FACTORS = (1.0, 0.8)
DEFAULT_REGULATION_LOADS = (1.0,)
MAX_LOAD_PU = 3.0


def evaluate(record: Record, loads: Sequence[float] | None = None,
             power_factors: Sequence[float] | None = None) -> Results:
    """Evaluate ``record`` into the results.

    ``loads`` (pu) replace the loads of the efficiency table and of the regulation table (default
    0.25 ... 1.25 pu and 1.0 pu); ``power_factors`` replace the power factors of both (default 1.0
    and 0.8; every power factor below 1 gives a lagging and a leading regulation row). Raises
    ``ValueError`` with a sentence for an unusable load or power factor.

    A record with a ``measurement_chain`` is first corrected for it (ratio errors, phase
    displacement): every result, the "as measured" losses included, then rests on the corrected
    readings, and ``corrections`` says what was read and what the correction did. Its
    ``uncertainty`` is propagated through this same evaluation (``harness.calc.uncertainty``).
    """
    eff_loads = checked_loads(loads) if loads is not None else DEFAULT_LOADS
    reg_loads = eff_loads if loads is not None else DEFAULT_REGULATION_LOADS
    pfs = checked_power_factors(power_factors) if power_factors is not None else DEFAULT_POWER_FACTORS
    budgets, u_warnings = uncertainty.uncertainty(record)
    record, corrections = corrected_record(record)
    basis = basis_of(record)
    nl, ld, warnings = _tests(record, basis)
    p0 = nl.loss_W if nl is not None else None
    pk = ld.performance_loss_W if ld is not None else None
    z = ld.performance_impedance_pct if ld is not None else None
    i0 = nl.current_pct if nl is not None else None
    checks = flag_uncertain(guarantee_checks(p0, pk, z, i0, record.guarantees, record.tolerances, record.standard),
                            {q: b.expanded for q, b in budgets.items()})
    rules, rule_warnings = compliance_checks(record, basis, nl, ld)
    ratio_result, r_checks, r_warnings = ratio_section(record, ld)
    return Results(
        rated_current_A={w: basis.rated_current(w) for w in ("hv", "lv")},
        no_load=nl, load=ld, equivalent_circuit=equivalent_circuit(record, nl, ld, basis),
        efficiency=efficiency_table(eff_loads, pfs, basis, p0, pk),
        max_efficiency=max_efficiency(record, basis, p0, pk),
        regulation=regulation_table(reg_loads, pfs, ld),
        checks=tuple(checks + r_checks),
        warnings=tuple(warnings + u_warnings + skipped_guarantee_warnings(record) + untoleranced_warnings(record)
                       + uncertain_check_warnings(checks) + rule_warnings + r_warnings),
        corrections=corrections,
        uncertainty=budgets,
        tolerance_source=tolerance_source(record.standard),
        compliance=tuple(rules),
        phases=phase_table(record),
        ratio=ratio_result,
    )


def checked_loads(loads: Sequence[float]) -> tuple[float, ...]:
    values = tuple(float(n) for n in loads)
    if not values or not all(math.isfinite(n) and 0 < n <= MAX_LOAD_PU for n in values):
        raise ValueError(f"loads must be per-unit values above 0 and up to {MAX_LOAD_PU:g}, got {list(loads)}")
    return values


def checked_power_factors(pfs: Sequence[float]) -> tuple[float, ...]:
    values = tuple(float(pf) for pf in pfs)
    if not values or not all(math.isfinite(pf) and 0 < pf <= 1 for pf in values):
        raise ValueError(f"power factors must lie above 0 and up to 1, got {list(pfs)}")
    return values


def _tests(record: Record, basis: Basis) -> tuple[NoLoadResult | None, LoadResult | None, list[str]]:
    warnings: list[str] = []
    nl = ld = None
    if record.no_load is not None:
        nl, w = evaluate_no_load(record.no_load, basis, waveform_settings(record))
        warnings += w
    else:
        warnings.append("The record has no no-load test: no-load results, efficiency and loss totals are skipped.")
    if record.load is not None:
        ld, w = evaluate_load(record.load, record.winding_resistance, basis)
        warnings += w + _material_warning(record, ld)
    else:
        warnings.append("The record has no load-loss test: load results, efficiency and regulation are skipped.")
    return nl, ld, warnings


def _material_warning(record: Record, ld: LoadResult) -> list[str]:
    if ld.loss_ref_W is not None and record.transformer.winding_material is None:
        return ["The record does not give the winding material: copper assumed for the temperature correction."]
    return []


def equivalent_circuit(record: Record, nl: NoLoadResult | None, ld: LoadResult | None,
                       basis: Basis) -> dict[str, Branches]:
    rc = xm = None
    if nl is not None:
        rc, xm = shunt(record.no_load, nl.loss_waveform_corrected_W, basis)
    r_pu = x_pu = t_req = None
    if ld is not None:
        r_pu, x_pu = ld.performance_resistance_pct / 100, ld.reactance_pct / 100
        t_req = ld.reference_temperature_C if ld.resistance_ref_pct is not None else ld.test_temperature_C
    side = nl.winding if nl is not None else "hv"
    return {w: Branches(circuit.refer(rc, basis, side, w), circuit.refer(xm, basis, side, w),
                        circuit.from_per_unit(r_pu, basis, w), circuit.from_per_unit(x_pu, basis, w), t_req)
            for w in ("hv", "lv")}


def efficiency_table(loads, pfs, basis: Basis, p0: float | None, pk: float | None) -> tuple[EfficiencyRow, ...]:
    if p0 is None or pk is None:
        return ()
    return tuple(efficiency_row(n, pf, basis.rated_power_VA, p0, pk) for pf in pfs for n in loads)


def efficiency_row(n: float, pf: float, rated_power: float, p0: float, pk: float) -> EfficiencyRow:
    eta = performance.efficiency(n, pf, rated_power, p0, pk)
    return EfficiencyRow(n, pf, 100 * eta, n * rated_power * pf, p0 + n * n * pk)


def max_efficiency(record: Record, basis: Basis, p0: float | None, pk: float | None) -> MaxEfficiency | None:
    if p0 is None or pk is None:
        return None
    n = performance.max_efficiency_load(p0, pk)
    eta = performance.efficiency(n, 1.0, basis.rated_power_VA, p0, pk)
    if record.load_profile is None:
        return MaxEfficiency(n, 100 * eta)
    blocks = [(b.duration, b.load, b.power_factor) for b in record.load_profile]
    day, out, lost = performance.all_day_efficiency(blocks, basis.rated_power_VA, p0, pk)
    return MaxEfficiency(n, 100 * eta, 1.0, 100 * day, out, lost)


def regulation_table(loads, pfs, ld: LoadResult | None) -> tuple[RegulationRow, ...]:
    if ld is None:
        return ()
    ur, ux = ld.performance_resistance_pct, ld.reactance_pct
    return tuple(RegulationRow(n, pf, lag, performance.regulation(n, pf, lag, ur, ux),
                               performance.voltage_drop(n, pf, lag, ur, ux))
                 for n in loads for pf in pfs for lag in ((True,) if pf == 1.0 else (True, False)))


def skipped_guarantee_warnings(record: Record) -> list[str]:
    g = record.guarantees
    if g is None:
        return []
    needs = {"no_load_loss": record.no_load, "no_load_current": record.no_load, "load_loss": record.load,
             "impedance": record.load}
    skipped = [name for name, test in needs.items() if getattr(g, name) is not None and test is None]
    if g.total_loss is not None and (record.no_load is None or record.load is None):
        skipped.append("total_loss")
    return [f"The guaranteed {name.replace('_', ' ')} is not checked: the record lacks the test it needs."
            for name in skipped]


def uncertain_check_warnings(checks) -> list[str]:
    return [f"The {c.quantity.replace('_', ' ')} check is uncertain: {c.value:.5g} {c.unit} lies within its "
            f"expanded uncertainty (+/- {c.expanded_uncertainty:.3g} {c.unit}, k = 2) of the limit, so the verdict "
            f"{'PASS' if c.passed else 'FAIL'} could flip."
            for c in checks if c.uncertain]


def untoleranced_warnings(record: Record) -> list[str]:
    return [f"The guaranteed {name.replace('_', ' ')} is not checked: {tolerance_source(record.standard)} sets no "
            "tolerance for it; give one in the record's tolerances." for name in
            untoleranced(record.guarantees, record.tolerances, record.standard)]


def compliance_checks(record: Record, basis: Basis, nl: NoLoadResult | None,
                      ld: LoadResult | None) -> tuple[list[compliance.ComplianceCheck], list[str]]:
    """The efficiency regulations the record asks for, from the corrected test results."""
    checks: list[compliance.ComplianceCheck] = []
    warnings: list[str] = []
    for rule in record.compliance or ():
        if rule == compliance.EU_ECODESIGN_TIER2:
            found = compliance.eu_ecodesign_tier2(eu_inputs(record, basis, nl, ld))
        elif nl is None or ld is None:
            found = [], [f"{rule}: not evaluated: the record lacks the no-load or the load-loss test."]
        else:
            found = compliance.us_doe_2016(doe_inputs(record, basis, nl, ld))
        checks += found[0]
        warnings += found[1]
    return checks, warnings


def eu_inputs(record: Record, basis: Basis, nl: NoLoadResult | None, ld: LoadResult | None) -> compliance.EuInputs:
    """No-load loss as evaluated and load loss at rated current and the reference temperature."""
    t = record.transformer
    ref = ld.reference_temperature_C if ld is not None and ld.loss_ref_W is not None else None
    return compliance.EuInputs(basis.rated_power_VA, basis.phases, t.frequency, t.insulation, t.highest_voltage,
                               nl.loss_W if nl is not None else None,
                               ld.performance_loss_W if ld is not None else None, ref)


def doe_inputs(record: Record, basis: Basis, nl: NoLoadResult, ld: LoadResult) -> compliance.DoeInputs:
    """No-load loss at 20 degC and load loss at each reference temperature the procedure uses."""
    p0_20 = None
    if nl.temperature_C is not None:
        p0_20 = nl.loss_waveform_corrected_W * temperature.ieee_no_load_factor(
            nl.temperature_C, compliance.DOE_NO_LOAD_REFERENCE_C, IEEE_NO_LOAD_KT_PER_C)
    at: dict[float, float] = {}
    if ld.i2r_loss_W is not None and ld.additional_loss_W is not None and ld.test_temperature_C is not None:
        split = temperature.LossSplit(ld.i2r_loss_W, ld.additional_loss_W)
        at = {t: temperature.correct_split(split, ld.test_temperature_C, t, basis.material_constant).total_W
              for t in set(compliance.DOE_LOAD_REFERENCE_C.values())}
    t = record.transformer
    return compliance.DoeInputs(basis.rated_power_VA, basis.phases, t.frequency, t.insulation, t.voltage_class,
                                p0_20, nl.loss_waveform_corrected_W, at, ld.loss_W)


def ratio_section(record: Record, ld: LoadResult | None) -> tuple[ratio.RatioResult | None, list, list[str]]:
    """The ratio test of the record: its tolerance from the record's override, else from the
    impedance (measured by the same record's load-loss test, else the guaranteed one)."""
    test = record.ratio
    if test is None:
        return None, [], []
    t = record.transformer
    override = record.tolerances.ratio if record.tolerances is not None else None
    guaranteed = record.guarantees.impedance if record.guarantees is not None else None
    if override is not None:
        z, basis, limit = None, "record", override
    elif ld is not None:
        z, basis = ld.performance_impedance_pct, "measured"
        limit = ratio.ratio_limit_pct(z)
    else:
        z, basis = guaranteed, "declared" if guaranteed is not None else "none"
        limit = ratio.ratio_limit_pct(z)
    warnings = [] if basis != "none" else [
        "Ratio tolerance: neither a measured nor a guaranteed impedance is known, so only the 0.5 % bound of "
        "IEC 60076-1 Table 1 applies (its 1/10-of-impedance bound could be tighter)."]
    clock, clock_warnings = _declared_clock(t)
    taps = t.taps
    plate = ratio.Nameplate(t.hv.rated_voltage, t.lv.rated_voltage, taps.winding if taps else None,
                            taps.step if taps else None, clock, t.phases)
    readings = tuple(ratio.TapReading(r.tap, values_of(r.hv), values_of(r.lv),
                                      tuple(math.degrees(a) for a in values_of(r.displacement))
                                      if r.displacement is not None else None) for r in test.readings)
    result = ratio.evaluate_ratio(plate, test.winding, readings, limit, z, basis)
    return result, ratio.ratio_checks(result, override is not None), warnings + clock_warnings


def _declared_clock(t: Transformer) -> tuple[int, list[str]]:
    if t.phases == 1:
        return 0, []
    if t.vector_group is None:
        return 0, ["The nameplate gives no vector group: the phase displacement is checked against clock 0."]
    return parse_vector_group(t.vector_group).clock, []
