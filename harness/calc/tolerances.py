"""Checks against guarantees with the IEC 60076-1 Table 1 tolerances (overridable per record).

Table 1 (recalled from the standard, not re-read): total losses +10 %; each component loss +15 %,
provided the total-loss tolerance is not exceeded; short-circuit impedance on the principal tap
+/-7.5 % when the guaranteed value is 10 % or more, +/-10 % below; no-load current +30 %.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass

TOTAL_LOSS_PCT = 10.0
COMPONENT_LOSS_PCT = 15.0
IMPEDANCE_HIGH_PCT = 7.5
IMPEDANCE_LOW_PCT = 10.0
IMPEDANCE_THRESHOLD_PCT = 10.0
NO_LOAD_CURRENT_PCT = 30.0


@dataclass(frozen=True)
class Check:
    quantity: str
    unit: str
    value: float
    guaranteed: float
    tolerance_pct: float
    limit: float | tuple[float, float]
    passed: bool
    note: str | None = None
    expanded_uncertainty: float | None = None
    """U (k = 2) of the value, when the record has a measurement chain."""
    uncertain: bool | None = None
    """True when a limit lies within the expanded uncertainty of the value: the verdict could flip."""

    def to_dict(self) -> dict:
        limit = list(self.limit) if isinstance(self.limit, tuple) else self.limit
        return {"quantity": self.quantity, "value": self.value, "guaranteed": self.guaranteed, "limit": limit,
                "passed": self.passed, "unit": self.unit, "tolerance_pct": self.tolerance_pct, "note": self.note,
                "expanded_uncertainty": self.expanded_uncertainty, "uncertain": self.uncertain}

    def margin(self) -> float:
        """Distance from the value to the nearest limit (a band has two)."""
        limits = self.limit if isinstance(self.limit, tuple) else (self.limit,)
        return min(abs(self.value - limit) for limit in limits)


def tolerance(overrides, name: str, default: float) -> float:
    given = getattr(overrides, name, None) if overrides is not None else None
    return default if given is None else given


def impedance_tolerance(guaranteed_pct: float, overrides) -> float:
    default = IMPEDANCE_HIGH_PCT if guaranteed_pct >= IMPEDANCE_THRESHOLD_PCT else IMPEDANCE_LOW_PCT
    return tolerance(overrides, "impedance", default)


def upper_check(quantity: str, unit: str, value: float, guaranteed: float, tol_pct: float) -> Check:
    limit = guaranteed * (1 + tol_pct / 100)
    return Check(quantity, unit, value, guaranteed, tol_pct, limit, value <= limit)


def band_check(quantity: str, unit: str, value: float, guaranteed: float, tol_pct: float) -> Check:
    low, high = guaranteed * (1 - tol_pct / 100), guaranteed * (1 + tol_pct / 100)
    return Check(quantity, unit, value, guaranteed, tol_pct, (low, high), low <= value <= high)


def total_guarantee(guarantees) -> float | None:
    """The guaranteed total, or the sum of the component guarantees when no total is given."""
    if guarantees.total_loss is not None:
        return guarantees.total_loss
    if guarantees.no_load_loss is not None and guarantees.load_loss is not None:
        return guarantees.no_load_loss + guarantees.load_loss
    return None


def with_total_proviso(check: Check, total: Check | None) -> Check:
    """A component loss within +15 % still fails when the total is beyond its tolerance."""
    if total is None or total.passed or not check.passed:
        return check
    return Check(check.quantity, check.unit, check.value, check.guaranteed, check.tolerance_pct, check.limit,
                 False, "within its own tolerance, but the total losses exceed theirs")


def loss_checks(p0: float | None, pk: float | None, guarantees, overrides) -> list[Check]:
    total = None
    g_total = total_guarantee(guarantees)
    if g_total is not None and p0 is not None and pk is not None:
        total = upper_check("total_loss", "W", p0 + pk, g_total, tolerance(overrides, "total_loss", TOTAL_LOSS_PCT))
    components = []
    for name, value in (("no_load_loss", p0), ("load_loss", pk)):
        g = getattr(guarantees, name)
        if g is not None and value is not None:
            tol = tolerance(overrides, name, COMPONENT_LOSS_PCT)
            components.append(with_total_proviso(upper_check(name, "W", value, g, tol), total))
    return components + ([total] if total is not None else [])


def other_checks(impedance_pct: float | None, current_pct: float | None, guarantees, overrides) -> list[Check]:
    checks = []
    if guarantees.impedance is not None and impedance_pct is not None:
        tol = impedance_tolerance(guarantees.impedance, overrides)
        checks.append(band_check("impedance", "%", impedance_pct, guarantees.impedance, tol))
    if guarantees.no_load_current is not None and current_pct is not None:
        tol = tolerance(overrides, "no_load_current", NO_LOAD_CURRENT_PCT)
        checks.append(upper_check("no_load_current", "%", current_pct, guarantees.no_load_current, tol))
    return checks


def guarantee_checks(p0, pk, impedance_pct, current_pct, guarantees, overrides) -> list[Check]:
    if guarantees is None:
        return []
    return loss_checks(p0, pk, guarantees, overrides) + other_checks(impedance_pct, current_pct, guarantees, overrides)


# The uncertainty keys of each checked quantity (at reference temperature first).
UNCERTAINTY_KEYS = {"no_load_loss": ("no_load_loss_W",), "load_loss": ("load_loss_ref_W", "load_loss_W"),
                    "total_loss": ("total_loss_W",), "impedance": ("impedance_ref_pct", "impedance_pct"),
                    "no_load_current": ("no_load_current_pct",)}


def flag_uncertain(checks: list[Check], expanded: Mapping[str, float]) -> list[Check]:
    """Mark each check whose limit lies within the expanded uncertainty of its value.

    The total-loss proviso is not re-judged: a component is flagged on its own limit only.
    """
    flagged = []
    for c in checks:
        u = next((expanded[k] for k in UNCERTAINTY_KEYS.get(c.quantity, ()) if k in expanded), None)
        flagged.append(c if u is None else _with_uncertainty(c, u))
    return flagged


def _with_uncertainty(c: Check, expanded: float) -> Check:
    uncertain = c.margin() < expanded
    note = c.note
    if uncertain:
        flip = "a limit lies within the expanded uncertainty of the value: the verdict could flip"
        note = f"{note}; {flip}" if note else flip
    return dataclasses.replace(c, expanded_uncertainty=expanded, uncertain=uncertain, note=note)
