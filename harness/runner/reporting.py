"""Fill the report bundle from the store (a run) or from a record (``harness evaluate --html``)."""

from __future__ import annotations

import datetime as dt
import gc
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import yaml

from harness.report import ReportBundle, write_reports
from harness.report.decimate import TraceThinner

if TYPE_CHECKING:
    from harness.store.protocol import RunSource, RunStore

TRACE_KINDS = ("ramp", "sweep", "hold", "measure", "wait")
_TRACE_KEYS = ("u_rms", "i_rms", "p")


def write_run_reports(store: RunSource, run_id: str) -> Path:
    """Write report.html, results.json and samples.csv (and samples.parquet when pyarrow is
    installed) into the run's folder; the report's path.

    The raw samples are read once, a chunk at a time: each chunk goes to the CSV and Parquet
    files and to the figures' thinning, so memory stays bounded whatever the run's length.
    """
    from harness.store.export import SampleFiles, pyarrow_or_none

    folder = store.run_folder(run_id)
    row = store.run(run_id)  # the run with its steps, events, instruments and readings
    thinners: dict[tuple[int, int], TraceThinner] = {}
    parquet = folder / "samples.parquet" if pyarrow_or_none() is not None else None
    kinds = _kinds(row["steps"])
    with SampleFiles(csv_path=folder / "samples.csv", parquet_path=parquet) as files, _no_cycle_collection():
        for columns in store.sample_chunks(run_id):
            files.add(columns)
            _thin(thinners, columns, kinds)
    paths = write_reports(folder, run_bundle(store, run_id, row, thinners))
    return Path(paths["html"])


@contextmanager
def _no_cycle_collection() -> Iterator[None]:
    """Python's cycle collector paused while the samples are read.

    Each page of rows is thousands of tuples that live until the page is converted: enough to
    set off the collector's generations again and again, each time walking every object the
    libraries made at import (matplotlib's alone are hundreds of thousands). The read makes no
    reference cycles, so the pause leaves nothing behind; it cut a report of 10^6 samples by
    0.2-0.4 s (measured with the collector's own statistics, ``gc.get_stats``: three full
    collections fewer).
    """
    paused = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if paused:
            gc.enable()


def run_bundle(store: RunSource, run_id: str, row: dict[str, Any] | None = None,
               thinners: dict[tuple[int, int], TraceThinner] | None = None) -> ReportBundle:
    """The report's content; the traces from ``thinners`` already fed, or read from the store."""
    row = row or store.run(run_id)
    sequence = _yaml(row.get("sequence_text"))
    events, steps = row["events"], row["steps"]
    results = row.get("results") or {}
    labels = {st["step_index"]: f"{st['step_index'] + 1}: {st['name']}" for st in steps}
    if thinners is None:
        thinners = {}
        kinds = _kinds(steps)
        for columns in store.sample_chunks(run_id, ("step_index", "channel", "t", *_TRACE_KEYS)):
            _thin(thinners, columns, kinds)
    return ReportBundle(
        run=_run_meta(row, sequence),
        unit=unit_of(sequence),
        instruments=[_instrument(i) for i in row["instruments"]],
        results=results,
        readings=[_reading(r, labels) for r in row["readings"]],
        traces=_traces(thinners, steps, events, labels),
        sweep=list(results.get("sweep", [])),
        events=[_event(e) for e in events if e["kind"] not in ("step-start", "step-end")],
        warnings=list(results.get("warnings", [])) or [e["text"] for e in events if e["kind"] == "warning"],
        trip=_trip(row.get("trip"), steps, labels),
        certificate=certificate_of(store, row, sequence, labels),
    )


def certificate_of(store: Any, row: dict[str, Any], sequence: dict[str, Any], labels: dict[int, str]
                   ) -> dict[str, Any]:
    """The certificate parts of a stored run (see ``harness.runner.certificate``)."""
    from harness.runner import certificate as cert
    record = row.get("record") or {}
    transformer = record.get("transformer") or _si_transformer(sequence)
    standard = str(record.get("standard") or sequence.get("standard") or "iec")
    simulated: dict[str, Any] = row["simulated"] if isinstance(row.get("simulated"), dict) else {}
    approvals = store.approvals(row["run_id"])
    approval = {**cert.approval_block(approvals["rows"], sequence.get("operator"), row.get("finished")),
                "results_sha256": approvals["results_sha256"]}
    return {"resistances": cert.resistance_rows(row["events"], transformer, standard),
            "temperatures": cert.temperature_rows(row["events"], labels, record),
            "calibration": cert.calibration_rows(_yaml(row.get("station_text")), row["instruments"], row.get("started")),
            "approval": approval, "time_scale": simulated.get("time_scale")}


def _si_transformer(sequence: dict[str, Any]) -> dict[str, Any]:
    from harness.calc.record import Transformer
    try:
        return Transformer.model_validate(sequence.get("transformer", {})).model_dump()
    except ValueError:
        return {}


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
            "cooling": t.cooling, "insulation": t.insulation, "thermal_class": t.thermal_class,
            "year_of_manufacture": t.year_of_manufacture, "standard_edition": t.standard_edition,
            **{w: {"rated_voltage_V": getattr(t, w).rated_voltage, "connection": getattr(t, w).connection,
                   "neutral": getattr(t, w).neutral} for w in ("hv", "lv")}}
    return {**unit, **(sequence.get("unit") or {})}


def _instrument(row: dict[str, Any]) -> dict[str, Any]:
    return {"role": row["role"], "identity": {k: row.get(k) for k in ("maker", "model", "serial", "firmware")},
            "resource": row.get("resource"), "profile": row.get("profile"), "calibration_due": row.get("calibration_due")}


def _reading(row: dict[str, Any], labels: dict[int, str]) -> dict[str, Any]:
    quantities = ("u_rms", "u_mean", "i_rms", "p")
    return {"tag": row["tag"], "step": labels.get(row["step_index"], row["step_index"]), "channel": row.get("channel"),
            "count": row["count"], "mean": {q: row.get(f"{q}_mean") for q in quantities},
            "std": {q: row.get(f"{q}_std") for q in quantities}, "stable": bool(row["stable"])}


def _kinds(steps: list[dict[str, Any]]) -> dict[int, str]:
    """Each step's kind, by its index."""
    return {st["step_index"]: st["kind"] for st in steps}


def _thin(thinners: dict[tuple[int, int], TraceThinner], columns: dict[str, np.ndarray],
          kinds: dict[int, str]) -> None:
    """Feed one chunk of samples to the thinners of the steps and channels it holds: one
    thinner for each channel of each step that draws a trace (``kinds``: each step's kind),
    made at its first sample."""
    index = columns["step_index"]
    if not len(index):
        return
    # a step's samples are consecutive (its channels interleaved): cut the chunk where the step changes
    cuts = [0, *(np.flatnonzero(index[1:] != index[:-1]) + 1).tolist(), len(index)]
    for a, b in zip(cuts[:-1], cuts[1:]):
        step = int(index[a])
        if kinds.get(step) not in TRACE_KINDS:
            continue
        channel = columns["channel"][a:b]
        for number in np.unique(channel).tolist():
            thinner = thinners.get((step, int(number)))
            if thinner is None:
                thinner = thinners[step, int(number)] = TraceThinner(_TRACE_KEYS, "t")
            mine = channel == number
            thinner.add({k: columns[k][a:b][mine] for k in ("t", *_TRACE_KEYS)})


def _traces(thinners: dict[tuple[int, int], TraceThinner], steps: list[dict[str, Any]],
            events: list[dict[str, Any]], labels: dict[int, str]) -> list[dict[str, Any]]:
    """One trace per step; a three-phase step's trace has one line per channel (``phases``)."""
    limits = {e["data"]["step"]: e["data"]["limits"] for e in events
              if e["kind"] == "step-start" and isinstance(e.get("data"), dict)}
    kinds = _kinds(steps)
    by_step: dict[int, list[dict[str, Any]]] = {}
    for (n, _), thinner in sorted(thinners.items()):
        kept = thinner.result()
        by_step.setdefault(n, []).append({"t_s": kept["t"].tolist(), "u_V": kept["u_rms"].tolist(),
                                          "i_A": kept["i_rms"].tolist(), "p_W": kept["p"].tolist()})
    traces = []
    for n, lines in by_step.items():
        trace = {"step": labels[n], "tag": kinds[n], **lines[0], "limits": limits.get(n, {})}
        if len(lines) > 1:
            trace["phases"] = lines
        traces.append(trace)
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


def write_in_background(store: RunStore, run_id: str, pdf: bool = False) -> tuple[Path, Any]:
    """Start ``harness report RUN_ID`` as a process of its own, detached from the terminal; where
    its report will be, and the process.

    A run that stopped (a trip, Ctrl-C, de-energisation not confirmed) hands the operator the
    outcome and the prompt at once, since writing the report costs seconds (the plotting library
    alone takes over a second to load); the report is still always written, from the store,
    by this process, which a further Ctrl-C at the terminal does not reach. Its messages go to
    ``report.log`` in the run's folder.
    """
    import os
    import subprocess
    import sys

    folder = store.run_folder(run_id)
    with open(folder / "report.log", "w", encoding="utf-8") as log:
        command = [sys.executable, "-m", "harness.cli", "report", run_id, *(["--pdf"] if pdf else [])]
        process = subprocess.Popen(command, stdin=subprocess.DEVNULL,
                                   stdout=log, stderr=log, start_new_session=True,
                                   env={**os.environ, "HARNESS_DATA": str(store.folder), "HARNESS_STORE": store.url})
    return folder / "report.html", process
