"""The results of an evaluation and their plain-dict form (the results **contract**)."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from harness.calc.compliance import ComplianceCheck
from harness.calc.load import LoadResult
from harness.calc.no_load import NoLoadResult
from harness.calc.ratio import RatioResult
from harness.calc.tolerances import Check
from harness.calc.uncertainty import Budget

CONTRACT_KEYS = ("rated_current_A", "no_load", "load", "equivalent_circuit", "efficiency", "max_efficiency",
                 "regulation", "checks", "warnings", "corrections", "uncertainty", "tolerance_source", "compliance",
                 "phases", "ratio")


@dataclass(frozen=True)
class EfficiencyRow:
    load_pu: float
    power_factor: float
    efficiency_pct: float
    output_W: float
    losses_W: float


@dataclass(frozen=True)
class MaxEfficiency:
    load_pu: float
    efficiency_pct: float
    power_factor: float = 1.0
    all_day_efficiency_pct: float | None = None
    all_day_energy_out_J: float | None = None
    all_day_energy_lost_J: float | None = None


@dataclass(frozen=True)
class RegulationRow:
    load_pu: float
    power_factor: float
    lagging: bool
    regulation_pct: float
    voltage_drop_pct: float


@dataclass(frozen=True)
class Branches:
    """One winding's view of the equivalent circuit, per phase (star-equivalent)."""
    Rc_ohm: float | None
    Xm_ohm: float | None
    Req_ohm: float | None
    Xeq_ohm: float | None
    Req_temperature_C: float | None


@dataclass(frozen=True)
class Results:
    rated_current_A: dict[str, float]
    no_load: NoLoadResult | None
    load: LoadResult | None
    equivalent_circuit: dict[str, Branches]
    efficiency: tuple[EfficiencyRow, ...]
    max_efficiency: MaxEfficiency | None
    regulation: tuple[RegulationRow, ...]
    checks: tuple[Check, ...]
    warnings: tuple[str, ...]
    corrections: dict[str, dict[str, float]] | None = None
    """What the measurement-chain corrections did, per test (None without a chain)."""
    uncertainty: dict[str, Budget] = dataclasses.field(default_factory=dict)
    """Per quantity key (no_load_loss_W, load_loss_ref_W, ...), empty without a chain."""
    tolerance_source: str = "IEC 60076-1 Table 1"
    """Where the default tolerances of the guarantee checks come from (the record's standard)."""
    compliance: tuple[ComplianceCheck, ...] = ()
    """Checks against the efficiency regulations the record asks for."""
    phases: dict[str, Any] | None = None
    """Three-phase records: the per-phase readings and their spread (see phase_table)."""
    ratio: RatioResult | None = None
    """The voltage ratio and phase displacement test, per tap and phase pair (None without one)."""

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready data with exactly the contract keys (non-finite numbers become None)."""
        data = {
            "rated_current_A": dict(self.rated_current_A),
            "no_load": _plain(self.no_load),
            "load": _plain(self.load),
            "equivalent_circuit": {w: _plain(b) for w, b in self.equivalent_circuit.items()},
            "efficiency": [_plain(row) for row in self.efficiency],
            "max_efficiency": _plain(self.max_efficiency),
            "regulation": [_plain(row) for row in self.regulation],
            "checks": [c.to_dict() for c in self.checks],
            "warnings": list(self.warnings),
            "corrections": self.corrections,
            "uncertainty": {q: b.to_dict() for q, b in self.uncertainty.items()},
            "tolerance_source": self.tolerance_source,
            "compliance": [c.to_dict() for c in self.compliance],
            "phases": self.phases,
            "ratio": ratio_dict(self.ratio),
        }
        return _finite(data)


def ratio_dict(result: RatioResult | None) -> dict[str, Any] | None:
    """The ratio section: per tap its declared ratio, limit and source, and per phase pair the
    measured ratio, deviation, verdict, displacement and clock number."""
    if result is None:
        return None
    data = dataclasses.asdict(result)
    for tap, obj in zip(data["taps"], result.taps):
        tap["passed"] = obj.passed
    data["passed"] = all(t.passed for t in result.taps)
    return data


def _plain(item: Any) -> Any:
    return None if item is None else dataclasses.asdict(item)


def _finite(value: Any) -> Any:
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    return value
