"""Everything a report shows, as plain data, so a report can be rebuilt from the store at any time.

The bundle is filled by whoever holds the data (the runner at the end of a run, the store when a
report is rebuilt, ``harness evaluate`` for a hand-entered record). The report package only reads
it: every part may be missing or partial, because a run that tripped or was killed still needs a
report.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from harness.common.errors import HarnessError

STATUSES = ("passed", "failed", "tripped", "aborted", "unsafe", "evaluated", "incomplete")

# Statuses whose report opens with a banner: the run did not end the way it was planned.
BANNER_STATUSES = ("tripped", "aborted", "unsafe", "incomplete")

DEFAULT_CAUTIONS: tuple[str, ...] = (
    "High voltage. The energised winding, the test leads and the source terminals carry dangerous "
    "voltage whenever the source output is on; keep barriers closed and stay outside the bay.",
    "In a no-load test the open winding carries its full rated voltage, and for a step-up "
    "connection that is the higher voltage: guard its terminals like the energised ones.",
    "Stored energy. Windings, cables and capacitors can hold charge after the source is off: "
    "verify absence of voltage, discharge and fit temporary earths before touching any connection.",
    "The short-circuit link of a load-loss test must be rated for the test current and tightly "
    "fitted; a loose or undersized link overheats and can open under load.",
    "Never open-circuit the secondary of a current transformer that carries current.",
    "This software is not a protective device. Hardware interlocks, gate switches and emergency "
    "stops must act on the supply independently of it.",
    "These results and cautions do not replace local codes, the lab's safety rules or licensed "
    "practice; where they differ, local codes and licensed practice prevail.",
)


class ReportError(HarnessError):
    """A bundle that cannot be reported, said in words a user can act on."""


@dataclass(frozen=True)
class ReportBundle:
    """The data behind one report (``results.json`` and ``report.html``).

    All fields are plain data (dicts, lists, strings, numbers, None); the field docs give the keys
    the report reads. Unknown keys are kept and ignored.
    """

    run: dict[str, Any]
    """run_id, status, exit_code, started, finished, lab, station, operator, software_version,
    sequence_name, sequence_hash, station_hash, standard."""
    unit: dict[str, Any] = field(default_factory=dict)
    """Nameplate: rated_power_VA, phases, frequency_Hz, hv/lv {rated_voltage_V, connection},
    winding_material, serial, maker, description."""
    instruments: list[dict[str, Any]] = field(default_factory=list)
    """role, identity {maker, model, serial, firmware}, resource, profile, calibration_due."""
    results: dict[str, Any] = field(default_factory=dict)
    """The results contract, possibly partial; may carry ``uncertainty``."""
    readings: list[dict[str, Any]] = field(default_factory=list)
    """tag, step, count, mean {u_rms, u_mean, i_rms, p}, std {...}, stable."""
    traces: list[dict[str, Any]] = field(default_factory=list)
    """step, tag, t_s, u_V, i_A, p_W, limits {voltage_V, current_A, power_W}."""
    sweep: list[dict[str, Any]] = field(default_factory=list)
    """Excitation curve points: u_V, i_A, p_W, u_pct."""
    events: list[dict[str, Any]] = field(default_factory=list)
    """t_s, time (ISO 8601), kind, text."""
    warnings: list[str] = field(default_factory=list)
    trip: dict[str, Any] | None = None
    """cause, quantity, value, limit, step, time (and t_s when known)."""
    cautions: list[str] = field(default_factory=lambda: list(DEFAULT_CAUTIONS))
    certificate: dict[str, Any] = field(default_factory=dict)
    """What a signed certificate adds: resistances [{winding, terminals, ohm, temperature_C, ohm_ref,
    reference_C, constant, material}], temperatures [{when, ambient, oil, winding}], calibration
    [{role, due, certificate, serial, idn_serial, expired, allowed}], approval {tested_by, tested,
    rows [{approved, name, role, note, results_sha256, results_match}], approved, changed_after,
    results_sha256}, time_scale (simulated bay)."""

    def __post_init__(self) -> None:
        _require_mapping("run", self.run)
        _require_status(self.run.get("status"))
        for name in ("unit", "results", "certificate"):
            _require_mapping(name, getattr(self, name))
        for name in ("instruments", "readings", "traces", "sweep", "events"):
            _require_records(name, getattr(self, name))
        _require_texts("warnings", self.warnings)
        _require_texts("cautions", self.cautions)
        if self.trip is not None:
            _require_mapping("trip", self.trip)

    @property
    def status(self) -> str:
        return str(self.run["status"])

    @property
    def needs_banner(self) -> bool:
        return self.status in BANNER_STATUSES

    def all_warnings(self) -> list[str]:
        """The run's warnings and the evaluation's, each once, in order of first appearance."""
        merged = list(self.warnings) + [str(w) for w in self.results.get("warnings", []) or []]
        return list(dict.fromkeys(merged))


def _require_status(status: object) -> None:
    if status not in STATUSES:
        raise ReportError(f"run status {status!r} is not one of: {', '.join(STATUSES)}")


def _require_mapping(name: str, value: object) -> None:
    if not isinstance(value, Mapping):
        raise ReportError(f"report bundle: '{name}' must be a mapping, got {type(value).__name__}")


def _require_records(name: str, value: object) -> None:
    if isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        raise ReportError(f"report bundle: '{name}' must be a list, got {type(value).__name__}")
    for index, item in enumerate(value):
        if not isinstance(item, Mapping):
            raise ReportError(f"report bundle: '{name}[{index}]' must be a mapping, got {type(item).__name__}")


def _require_texts(name: str, value: object) -> None:
    if isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        raise ReportError(f"report bundle: '{name}' must be a list of text, got {type(value).__name__}")
