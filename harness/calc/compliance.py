"""Regulators' efficiency rules for distribution transformers: the tables and their evaluation.

Opt-in per record (``compliance: [us-doe-2016]``). Each rule gives checks of the form (quantity,
value, limit, passed, margin, source); a rule whose table is not carried here, or that does not
cover the unit, gives a warning instead of a verdict.

Sources (copied from the regulation's text, never filled in):

* 10 CFR 431.196, Energy conservation standards and their effective dates, as published in the
  eCFR ("Title 10, Chapter II, Subchapter D, Part 431, Subpart K, § 431.196", eCFR markdown
  mirror, read in full). Tables (a)(2) and (b)(2): units manufactured on or after 1 January 2016
  and before 23 April 2029. Paragraphs (a)(2) and (b)(2) prescribe linear interpolation "of the
  kVA and efficiency values immediately above and below that kVA rating"; the notes to both
  tables put the efficiency at 35 % (low-voltage dry-type) and 50 % (liquid-immersed) of
  nameplate-rated load, determined per appendix A to subpart K.
* Not carried: the medium-voltage dry-type table of § 431.196(c) (it is set per BIL group, which
  the nameplate model does not hold) and the 2029 tables.

EU: Commission Regulation (EU) No 548/2014 as amended by Commission Regulation (EU) 2019/1783 (rule
``eu-ecodesign-tier2``). What is carried, with where it was read:

* Scope, Article 1(1) as replaced by 2019/1783 Article 1(1): power transformers "with a minimum
  power rating of 1 kVA used in 50 Hz electricity transmission and distribution networks or for
  industrial applications" (legislation.gov.uk/eur/2019/1783/body/data.html, read).
* Classes, Article 2(2) to (6) in the 2014 text (legislation.gov.uk/eur/2014/548/article/2/
  2014-05-21/data.html, read): small (highest voltage for equipment Um not above 1.1 kV), medium
  (Um above 1.1 kV and not above 36 kV, rated power from 5 kVA to below 40 MVA), large (Um above
  36 kV and rated power from 5 kVA, or rated power from 40 MVA whatever Um); liquid-immersed and
  dry-type. The amendments 2019/1783 made to Article 2 were not read.
* Which requirement applies (structure only, no values), from secondary pages: three-phase medium
  units up to 3150 kVA by maximum losses (Table I.1 liquid-immersed, I.2 dry-type), liquid-immersed
  pole-mounted units of 25 to 315 kVA by their own table (intercom.help/414 "Regulation
  548/2014"), larger units by a minimum PEI (Schneider Electric FAQ FA335966).
* The Peak Efficiency Index, PEI = 1 - 2 (P0 + Pc0) / (Sr sqrt((P0 + Pc0) / Pk)), the index at
  the load factor where the load loss equals P0 + Pc0. The Annex text defining it was not
  retrieved: the form is recalled, and tests check it against a direct maximisation of
  1 - (P0 + Pc0 + k^2 Pk) / (k Sr) over the load factor k.
* Not carried, for want of a copy of the Annex text (every search of the public text of Annex I
  came back without it): the Tier 2 maximum load and no-load losses of Annex I (Table I.1
  liquid-immersed, Table I.2 dry-type), the rule for ratings between rows, the corrections for
  other voltage combinations or dual voltage, the pole-mounted table and the minimum PEI tables.
  A record asking for ``eu-ecodesign-tier2`` gets the unit's class, its losses at the reference
  temperature and, where the index is the criterion, its PEI, in a warning: never a verdict
  from invented rows.

Appendix A test conditions (recalled from 10 CFR 431 subpart K appendix A, not re-read): no-load
loss corrected to 20 degC, load loss at 55 degC (liquid-immersed) or 75 degC (dry-type),
efficiency = P S / (P S + P0 + P^2 Pk) at unity power factor, P the per-unit load.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Sequence
from dataclasses import dataclass

US_DOE_2016 = "us-doe-2016"
EU_ECODESIGN_TIER2 = "eu-ecodesign-tier2"
RULES = (US_DOE_2016, EU_ECODESIGN_TIER2)

# (kVA, minimum efficiency %) rows, in the order printed.
# 10 CFR 431.196(a)(2), table: low-voltage dry-type, manufactured 2016-01-01 .. 2029-04-22.
DOE_2016_LOW_VOLTAGE_DRY = {
    1: ((15, 97.70), (25, 98.00), (37.5, 98.20), (50, 98.30), (75, 98.50), (100, 98.60), (167, 98.70),
        (250, 98.80), (333, 98.90)),
    3: ((15, 97.89), (30, 98.23), (45, 98.40), (75, 98.60), (112.5, 98.74), (150, 98.83), (225, 98.94),
        (300, 99.02), (500, 99.14), (750, 99.23), (1000, 99.28)),
}
# 10 CFR 431.196(b)(2), table: liquid-immersed (incl. submersible), manufactured 2016-01-01 .. 2029-04-22.
DOE_2016_LIQUID_IMMERSED = {
    1: ((10, 98.70), (15, 98.82), (25, 98.95), (37.5, 99.05), (50, 99.11), (75, 99.19), (100, 99.25),
        (167, 99.33), (250, 99.39), (333, 99.43), (500, 99.49), (667, 99.52), (833, 99.55)),
    3: ((15, 98.65), (30, 98.83), (45, 98.92), (75, 99.03), (112.5, 99.11), (150, 99.16), (225, 99.23),
        (300, 99.27), (500, 99.35), (750, 99.40), (1000, 99.43), (1500, 99.48), (2000, 99.51), (2500, 99.53)),
}

# Appendix A (recalled): reference conditions per class.
DOE_NO_LOAD_REFERENCE_C = 20.0
DOE_LOAD_REFERENCE_C = {"liquid-immersed": 55.0, "dry-type": 75.0}
DOE_PER_UNIT_LOAD = {"liquid-immersed": 0.50, "low-voltage dry-type": 0.35}
DOE_SOURCE = {"liquid-immersed": "10 CFR 431.196(b)(2) table, 50 % per-unit load (appendix A to subpart K)",
              "low-voltage dry-type": "10 CFR 431.196(a)(2) table, 35 % per-unit load (appendix A to subpart K)"}


@dataclass(frozen=True)
class ComplianceCheck:
    rule: str
    quantity: str
    unit: str
    value: float
    limit: float
    passed: bool
    margin: float
    """Distance to the limit on the passing side (negative when it fails)."""
    source: str
    note: str | None = None

    def to_dict(self) -> dict:
        return {"rule": self.rule, "quantity": self.quantity, "unit": self.unit, "value": self.value,
                "limit": self.limit, "passed": self.passed, "margin": self.margin, "source": self.source,
                "note": self.note}


def interpolated(rows: Sequence[tuple[float, float]], kva: float) -> float | None:
    """The table's value at ``kva``: a row's own, or linear between the rows immediately above and
    below (10 CFR 431.196(a)(2), (b)(2)); None outside the table (the rule does not set one)."""
    ratings = [r for r, _ in rows]
    if not ratings[0] <= kva <= ratings[-1]:
        return None
    i = bisect.bisect_left(ratings, kva)
    if ratings[i] == kva:
        return rows[i][1]
    (k0, e0), (k1, e1) = rows[i - 1], rows[i]
    return e0 + (e1 - e0) * (kva - k0) / (k1 - k0)


def efficiency_pct(per_unit_load: float, rated_power_VA: float, p0_W: float, pk_W: float) -> float:
    """100 P S / (P S + P0 + P^2 Pk) at unity power factor."""
    out = per_unit_load * rated_power_VA
    return 100.0 * out / (out + p0_W + per_unit_load**2 * pk_W)


def doe_class(insulation: str | None, voltage_class: str | None) -> str | None:
    """The 431.196 class of the unit, or None when the nameplate does not say enough."""
    if insulation == "liquid-immersed":
        return "liquid-immersed"
    if insulation == "dry-type" and voltage_class is not None:
        return f"{voltage_class} dry-type"
    return None


@dataclass(frozen=True)
class DoeInputs:
    """What the DOE evaluation needs from the corrected test results."""
    rated_power_VA: float
    phases: int
    frequency_Hz: float
    insulation: str | None
    voltage_class: str | None
    no_load_loss_20C_W: float | None
    """None when the core temperature of the no-load test is unknown (loss as measured is used)."""
    no_load_loss_measured_W: float
    load_loss_at: dict[float, float]
    """Load loss at rated current per reference temperature it could be corrected to."""
    load_loss_uncorrected_W: float


def us_doe_2016(d: DoeInputs) -> tuple[list[ComplianceCheck], list[str]]:
    cls = doe_class(d.insulation, d.voltage_class)
    if cls is None:
        need = "insulation" if d.insulation is None else "voltage_class (low-voltage or medium-voltage)"
        return [], [f"{US_DOE_2016}: not evaluated: the nameplate lacks its {need}."]
    table = {"liquid-immersed": DOE_2016_LIQUID_IMMERSED, "low-voltage dry-type": DOE_2016_LOW_VOLTAGE_DRY}.get(cls)
    if table is None:
        return [], [f"{US_DOE_2016}: not evaluated: the {cls} table of 10 CFR 431.196(c) is set per BIL "
                    "group and is not carried by the harness."]
    kva = d.rated_power_VA / 1000.0
    limit = interpolated(table[d.phases], kva)
    if limit is None:
        rows = table[d.phases]
        return [], [f"{US_DOE_2016}: not evaluated: {kva:g} kVA lies outside the {cls} {d.phases}-phase table "
                    f"({rows[0][0]:g} .. {rows[-1][0]:g} kVA); the rule sets no minimum there."]
    t_ref = DOE_LOAD_REFERENCE_C["liquid-immersed" if cls == "liquid-immersed" else "dry-type"]
    notes = []
    p0 = d.no_load_loss_20C_W
    if p0 is None:
        p0 = d.no_load_loss_measured_W
        notes.append("no-load loss as measured: the record has no core temperature to correct it to 20 degC")
    pk = d.load_loss_at.get(t_ref)
    if pk is None:
        pk = d.load_loss_uncorrected_W
        notes.append(f"load loss at test temperature: the record cannot correct it to {t_ref:g} degC")
    if d.frequency_Hz != 60.0:
        notes.append(f"the rule covers 60 Hz units; this one is rated {d.frequency_Hz:g} Hz")
    n = DOE_PER_UNIT_LOAD[cls]
    eta = efficiency_pct(n, d.rated_power_VA, p0, pk)
    check = ComplianceCheck(US_DOE_2016, f"efficiency at {100 * n:g} % load", "%", eta, limit, eta >= limit,
                            eta - limit, DOE_SOURCE[cls], "; ".join(notes) or None)
    return [check], []




# Regulation (EU) No 548/2014, Article 1(1) as replaced by 2019/1783: 50 Hz networks, from 1 kVA.
EU_FREQUENCY_HZ = 50.0
EU_MIN_RATED_POWER_VA = 1e3
# Article 2(2) to (4), 2014 text: the class boundaries.
EU_SMALL_MAX_UM_V = 1.1e3
EU_MEDIUM_MAX_UM_V = 36e3
EU_MEDIUM_MIN_POWER_VA = 5e3
EU_LARGE_POWER_VA = 40e6
EU_DEFINITIONS = "Regulation (EU) No 548/2014 Article 2"
# The rated power above which a medium power transformer is held to a minimum PEI rather than to
# maximum losses (Schneider Electric FAQ FA335966, "EcoDesign regulation EU 548-2014": "Level of
# Peak Efficiency ... for transformers > 3150 kVA"; "Table 2: Requirements for medium power
# transformers with rated power > 3 150 kVA", intercom.help/414 "Regulation 548/2014").
EU_MEDIUM_LOSS_TABLE_MAX_VA = 3150e3
# "The levels of load and no-load losses indicated in Table 1 are not applicable to liquid immersed
# pole-mounted transformers with power ratings between 25 kVA and 315 kVA" (intercom.help/414
# "Regulation 548/2014"); Article 2(7) (2014 text) defines the pole-mounted unit "up to 315 kVA".
EU_POLE_MOUNTED_KVA = (25.0, 315.0)


def eu_power_class(rated_power_VA: float, highest_voltage_V: float | None) -> str | None:
    """'small', 'medium' or 'large' power transformer by Article 2(2) to (4) (2014 text); None when
    the nameplate does not settle it (no Um below 40 MVA) or the unit falls in no class (Um above
    1.1 kV and under 5 kVA)."""
    if rated_power_VA >= EU_LARGE_POWER_VA:
        return "large"  # Art. 2(4): "regardless of the highest voltage for equipment"
    if highest_voltage_V is None:
        return None
    if highest_voltage_V <= EU_SMALL_MAX_UM_V:
        return "small"  # Art. 2(2)
    if rated_power_VA < EU_MEDIUM_MIN_POWER_VA:
        return None
    return "medium" if highest_voltage_V <= EU_MEDIUM_MAX_UM_V else "large"  # Art. 2(3), 2(4)


def peak_efficiency_index(p0_W: float, pk_W: float, rated_power_VA: float, pc0_W: float = 0.0) -> float:
    """PEI = 1 - 2 (P0 + Pc0) / (Sr sqrt((P0 + Pc0) / Pk)), as a fraction (form recalled, see the
    module notes). P0 no-load loss, Pc0 the power the cooling draws at no load, Pk the load loss at
    rated current and reference temperature, Sr the rated power."""
    if p0_W + pc0_W <= 0 or pk_W <= 0 or rated_power_VA <= 0:
        raise ValueError("the PEI needs positive losses and rated power")
    k_pei = math.sqrt((p0_W + pc0_W) / pk_W)
    return 1.0 - 2.0 * (p0_W + pc0_W) / (rated_power_VA * k_pei)


@dataclass(frozen=True)
class EuInputs:
    """What the EU evaluation needs from the nameplate and the corrected test results."""
    rated_power_VA: float
    phases: int
    frequency_Hz: float
    insulation: str | None
    highest_voltage_V: float | None
    """Highest Um of the windings; None when the nameplate gives none."""
    no_load_loss_W: float | None
    load_loss_W: float | None
    """Load loss at rated current and reference temperature."""
    load_loss_reference_C: float | None


def eu_ecodesign_tier2(d: EuInputs) -> tuple[list[ComplianceCheck], list[str]]:
    """The Tier 2 rule: warnings only, as no Annex I table is carried (see the module notes)."""
    rule = EU_ECODESIGN_TIER2
    if d.frequency_Hz != EU_FREQUENCY_HZ or d.rated_power_VA < EU_MIN_RATED_POWER_VA:
        return [], [f"{rule}: not evaluated: the regulation covers power transformers from 1 kVA for 50 Hz "
                    f"networks (Article 1(1)); this one is rated {d.rated_power_VA / 1e3:g} kVA, "
                    f"{d.frequency_Hz:g} Hz."]
    cls = eu_power_class(d.rated_power_VA, d.highest_voltage_V)
    if cls is None:
        why = ("the nameplate gives no highest voltage for equipment (Um) to class it by"
               if d.highest_voltage_V is None else "it is neither a medium nor a large power transformer")
        return [], [f"{rule}: not evaluated: {why} ({EU_DEFINITIONS})."]
    kind = f"{d.insulation} " if d.insulation else ""
    unit = f"{rule}: a {kind}{cls} power transformer ({EU_DEFINITIONS})"
    if cls == "small":
        return [], [f"{unit}; the Tier 2 requirements for small power transformers are not carried by the "
                    "harness: no verdict."]
    if d.no_load_loss_W is None or d.load_loss_W is None:
        return [], [f"{unit}; not evaluated: the record lacks the no-load or the load-loss test."]
    at = f" at {d.load_loss_reference_C:g} degC" if d.load_loss_reference_C is not None else " at test temperature"
    losses = f"P0 = {d.no_load_loss_W:.4g} W, Pk{at} = {d.load_loss_W:.4g} W"
    if cls == "medium" and d.rated_power_VA <= EU_MEDIUM_LOSS_TABLE_MAX_VA:
        return [], [f"{unit}, {losses}; {_medium_table(d)} not carried by the harness (no copy of the Annex "
                    "text could be sourced): no verdict."]
    pei = peak_efficiency_index(d.no_load_loss_W, d.load_loss_W, d.rated_power_VA)
    return [], [f"{unit}, {losses}; PEI = {100 * pei:.3f} % (Pc0 taken as 0: the record gives no cooling "
                "power); the Tier 2 minimum PEI of Annex I is not carried by the harness (no copy of the Annex "
                "text could be sourced): no verdict."]


def _medium_table(d: EuInputs) -> str:
    """Which Annex I requirement a medium power transformer up to 3150 kVA answers to."""
    if d.phases != 3:
        return "the Tier 2 requirements of Annex I for single-phase medium power transformers are"
    table = {"liquid-immersed": "Table I.1 (liquid-immersed)", "dry-type": "Table I.2 (dry-type)"}.get(
        d.insulation or "", "Table I.1 or I.2 (the nameplate lacks its insulation)")
    low, high = EU_POLE_MOUNTED_KVA
    pole = (" (or, pole-mounted, the pole-mounted table)"
            if d.insulation == "liquid-immersed" and low <= d.rated_power_VA / 1e3 <= high else "")
    return f"the Tier 2 maximum losses of Annex I {table}{pole} are"
