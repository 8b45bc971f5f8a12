"""Fill the report bundle from the store (a run) or from a record (``harness evaluate --html``)."""

from __future__ import annotations

import datetime as dt
import importlib.util
from pathlib import Path
from typing import Any

import yaml

from harness.report import ReportBundle, write_reports

TRACE_KINDS = ("ramp", "sweep", "hold", "measure", "wait")


def write_run_reports(store: Any, run_id: str) -> Path:
    """Write report.html, results.json and samples.csv into the run's folder; the report's path."""
    folder = store.run_folder(run_id)
    bundle = run_bundle(store, run_id)
    paths = write_reports(folder, bundle)
    store.export_csv(run_id, folder / "samples.csv")
    if importlib.util.find_spec("pyarrow") is not None:
        store.export_parquet(run_id, folder / "samples.parquet")
    return Path(paths["html"])


def run_bundle(store: Any, run_id: str) -> ReportBundle:
    row = store.run(run_id)  # the run with its steps, events, instruments and readings
    sequence = _yaml(row.get("sequence_text"))
    events, steps = row["events"], row["steps"]
    results = row.get("results") or {}
    labels = {st["step_index"]: f"{st['step_index'] + 1}: {st['name']}" for st in steps}
    return ReportBundle(
        run=_run_meta(row, sequence),
        unit=unit_of(sequence),
        instruments=[_instrument(i) for i in row["instruments"]],
        results=results,
        readings=[_reading(r, labels) for r in row["readings"]],
        traces=_traces(store.samples(run_id), steps, events, labels),
        sweep=list(results.get("sweep", [])),
        events=[_event(e) for e in events if e["kind"] not in ("step-start", "step-end")],
        warnings=list(results.get("warnings", [])) or [e["text"] for e in events if e["kind"] == "warning"],
        trip=_trip(row.get("trip"), steps, labels),
    )


def _trip(trip: dict[str, Any] | None, steps: list[dict[str, Any]], labels: dict[int, str]) -> dict[str, Any] | None:
    """The trip with its step named as the traces name it, and its bay time on their axis."""
    if not trip:
        return trip
    named = [st["step_index"] for st in steps if st["name"] == trip.get("step")]
    return {**trip, "step": labels[named[-1]] if named else trip.get("step")}


def _yaml(text: str | None) -> dict[str, Any]:
    try:
        data = yaml.safe_load(text or "") or {}
    except yaml.YAMLError:
        return {}
    return data if isinstance(data, dict) else {}


def _run_meta(row: dict[str, Any], sequence: dict[str, Any]) -> dict[str, Any]:
    station = _yaml(row.get("station_text"))
    return {"run_id": row["run_id"], "status": row["status"], "exit_code": row.get("exit_code"),
            "started": row.get("started"), "finished": row.get("finished"), "lab": row.get("lab"),
            "station": row.get("station_name"), "operator": sequence.get("operator"),
            "software_version": row.get("software_version"), "sequence_name": sequence.get("name"),
            "sequence_hash": row.get("sequence_sha256"), "station_hash": row.get("station_sha256"),
            "standard": sequence.get("standard", "iec"), "simulated": row.get("simulated"),
            "station_simulated": bool(station.get("simulated"))}


def unit_of(sequence: dict[str, Any]) -> dict[str, Any]:
    """The nameplate in SI numbers, from the sequence's (or record's) transformer section."""
    from harness.calc.record import Transformer
    try:
        t = Transformer.model_validate(sequence.get("transformer", {}))
    except ValueError:
        return dict(sequence.get("unit") or {})
    unit = {"rated_power_VA": t.rated_power, "phases": t.phases, "frequency_Hz": t.frequency,
            "winding_material": t.winding_material, "vector_group": t.vector_group,
            **{w: {"rated_voltage_V": getattr(t, w).rated_voltage, "connection": getattr(t, w).connection,
                   "neutral": getattr(t, w).neutral} for w in ("hv", "lv")}}
    return {**unit, **(sequence.get("unit") or {})}


def _instrument(row: dict[str, Any]) -> dict[str, Any]:
    return {"role": row["role"], "identity": {k: row.get(k) for k in ("maker", "model", "serial", "firmware")},
            "resource": row.get("resource"), "profile": row.get("profile"), "calibration_due": row.get("calibration_due")}


def _reading(row: dict[str, Any], labels: dict[int, str]) -> dict[str, Any]:
    quantities = ("u_rms", "u_mean", "i_rms", "p")
    return {"tag": row["tag"], "step": labels.get(row["step_index"], row["step_index"]), "count": row["count"],
            "mean": {q: row.get(f"{q}_mean") for q in quantities},
            "std": {q: row.get(f"{q}_std") for q in quantities}, "stable": bool(row["stable"])}


def _traces(samples: dict[str, Any], steps: list[dict[str, Any]], events: list[dict[str, Any]],
            labels: dict[int, str]) -> list[dict[str, Any]]:
    limits = {e["data"]["step"]: e["data"]["limits"] for e in events
              if e["kind"] == "step-start" and isinstance(e.get("data"), dict)}
    traces = []
    index = samples.get("step_index")
    if index is None or len(index) == 0:
        return traces
    for step in steps:
        n = step["step_index"]
        if step["kind"] not in TRACE_KINDS:
            continue
        mask = index == n
        if not mask.any():
            continue
        traces.append({"step": labels[n], "tag": step["kind"],
                       "t_s": samples["t"][mask].tolist(), "u_V": samples["u_rms"][mask].tolist(),
                       "i_A": samples["i_rms"][mask].tolist(), "p_W": samples["p"][mask].tolist(),
                       "limits": limits.get(n, {})})
    return traces


def _event(row: dict[str, Any]) -> dict[str, Any]:
    wall = row.get("wall")
    iso = dt.datetime.fromtimestamp(wall, dt.timezone.utc).isoformat(timespec="seconds") if wall else None
    return {"t_s": row.get("t"), "time": iso, "kind": row["kind"], "text": row["text"]}


def write_evaluation_report(path: Path, record: Any, results: Any, html: Path) -> Path:
    """The same report for a hand-entered record (no instruments, no raw samples)."""
    from harness import __version__
    data = record.model_dump(mode="json")
    bundle = ReportBundle(
        run={"run_id": Path(path).stem, "status": "evaluated", "exit_code": None,
             "started": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"), "lab": None,
             "station": None, "operator": None, "software_version": __version__, "sequence_name": str(path),
             "standard": data.get("standard", "iec")},
        unit=unit_of(data), results=results.to_dict(), warnings=list(results.to_dict().get("warnings", [])))
    html = Path(html)
    paths = write_reports(html.parent, bundle)
    if Path(paths["html"]) != html:
        Path(paths["html"]).replace(html)
    return html
