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
  the nameplate model does not hold) and the 2029 tables; Regulation (EU) No 548/2014 as amended
  by 2019/1783, Annex I Tier 2 tables (no copy of the Annex text could be retrieved: a record
  asking for ``eu-ecodesign-tier2`` gets a warning, never a verdict from invented rows).

Appendix A test conditions (recalled from 10 CFR 431 subpart K appendix A, not re-read): no-load
loss corrected to 20 degC, load loss at 55 degC (liquid-immersed) or 75 degC (dry-type),
efficiency = P S / (P S + P0 + P^2 Pk) at unity power factor, P the per-unit load.
"""

from __future__ import annotations

import bisect
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


def eu_ecodesign_tier2() -> tuple[list[ComplianceCheck], list[str]]:
    return [], [f"{EU_ECODESIGN_TIER2}: not evaluated: the Tier 2 tables of Regulation (EU) No 548/2014 Annex I "
                "(as amended by 2019/1783) are not carried by the harness (no copy of the Annex could be sourced)."]
