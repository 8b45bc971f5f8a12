"""Moving whole runs between stores, and replaying a journal into the store it was kept for.

Both are idempotent, so a sync cut short is simply run again:

- :func:`copy_run` puts a run of one store into another (a station's SQLite store into the
  lab's PostgreSQL database, say) in one transaction of the target: whatever the target held
  of that run is replaced, so a run is there exactly once, whole, or as it was before.
- :func:`apply_journal` writes what a run's journal holds (the samples and writes the store
  could not take when it failed) into the store, in one transaction: samples by their ids
  (those already there are skipped), events and readings unless the same one is there.

They work on the :class:`~harness.store.connection.Connection` of a store's transaction
(``Store._transaction``), and are reached through ``Store.copy_run_to`` and
``Store.replay_journal``.
"""

from __future__ import annotations

from typing import Any, Iterable

from sqlalchemy import and_, delete, select, update

from harness.store import rows, schema
from harness.store.connection import Connection

SAME_RUN = ("status", "finished", "samples", "exit_code", "pid")  # equal in both stores: nothing to copy
_CHILDREN = (schema.samples, schema.readings, schema.events, schema.instruments, schema.steps)
_SAMPLE_NAMES = tuple(c.name for c in schema.samples.columns)
assert _SAMPLE_NAMES == ("run_id", *rows.SAMPLE_COLUMNS)


def run_rows(conn: Connection, run_id: str) -> dict[str, list[dict[str, Any]]]:
    """The run's row and the rows of its steps, instruments, events and readings (not samples)."""
    found = {"runs": conn.dicts(select(schema.runs).where(schema.runs.c.run_id == run_id))}
    for table in (schema.steps, schema.instruments, schema.events, schema.readings):
        query = select(table).where(table.c.run_id == run_id)
        found[table.name] = conn.dicts(query.order_by(*(c for c in table.primary_key.columns)))
    approvals = schema.approvals
    found["approvals"] = conn.dicts(select(approvals).where(approvals.c.run_id == run_id).order_by(approvals.c.id))
    return found


def add_approvals(target: Connection, run_id: str, approvals: list[dict[str, Any]]) -> int:
    """Append the approvals the target lacks (the same person, role and time is the same row);
    approvals are append-only on every store, so none is ever replaced or removed."""
    table, added = schema.approvals, 0
    for row in approvals:
        same = and_(table.c.run_id == run_id, table.c.approved == row["approved"], table.c.name == row["name"],
                    table.c.role == row["role"])
        if not target.execute(select(1).where(same)).fetchone():
            target.execute(table.insert().values(**{k: v for k, v in row.items() if k != "id"}))
            added += 1
    return added


def copy_run(target: Connection, found: dict[str, list[dict[str, Any]]],
             sample_pages: Iterable[list[tuple[Any, ...]]], insert_sample: str) -> int:
    """Replace the run in ``target`` by ``found`` and its samples; how many samples went in."""
    run_id, run = found["runs"][0]["run_id"], found["runs"][0]
    for table in _CHILDREN:
        target.execute(delete(table).where(table.c.run_id == run_id))
    runs = schema.runs  # updated in place, never removed: the target's approvals refer to it
    if target.execute(select(1).where(runs.c.run_id == run_id)).fetchone():
        target.execute(update(runs).where(runs.c.run_id == run_id).values(**{k: v for k, v in run.items()
                                                                              if k != "run_id"}))
    else:
        target.execute(runs.insert().values(**run))
    for table in (schema.steps, schema.instruments, schema.events, schema.readings):
        for row in found[table.name]:
            values = {k: v for k, v in row.items() if not (k == "id" and table.name in ("events", "readings"))}
            target.execute(table.insert().values(**values))
    added = 0
    for page in sample_pages:  # rows of rows.SAMPLE_COLUMNS: the table's columns after run_id
        added += target.insert_rows(schema.samples, insert_sample, [(run_id, *row) for row in page])
    add_approvals(target, run_id, found.get("approvals", []))
    return added


def apply_journal(conn: Connection, run_id: str, entries: list[dict[str, Any]], insert_sample: str) -> int:
    """Write the journal's entries of ``run_id`` into the store; how many samples went in."""
    samples = [tuple(e.get(name) for name in _SAMPLE_NAMES) for e in entries
               if e.get("op") == "sample" and e.get("run_id") == run_id]
    added = conn.insert_rows(schema.samples, insert_sample, samples) if samples else 0
    runs = schema.runs
    conn.execute(update(runs).where(runs.c.run_id == run_id).values(samples=runs.c.samples + added))
    for entry in entries:
        if entry.get("run_id") == run_id:
            _apply(conn, entry)
    return added


def _apply(conn: Connection, entry: dict[str, Any]) -> None:
    op, run_id = entry.get("op"), entry["run_id"]
    steps, events, readings, runs = schema.steps, schema.events, schema.readings, schema.runs
    if op == "begin_step":
        here = and_(steps.c.run_id == run_id, steps.c.step_index == entry["step_index"])
        if conn.execute(select(1).where(here)).fetchone() is None:
            conn.execute(steps.insert().values(run_id=run_id, step_index=entry["step_index"], kind=entry["kind"],
                                               name=entry["name"], started=rows.utc_now()))
    elif op == "end_step":
        conn.execute(update(steps).where(steps.c.run_id == run_id, steps.c.step_index == entry["step_index"],
                                         steps.c.finished.is_(None))
                     .values(finished=rows.utc_now(), status=entry["status"]))
    elif op == "event":
        values = {"run_id": run_id, "t": entry.get("t"), "wall": entry["wall"], "kind": entry["kind"],
                  "text": entry["text"], "data": rows.to_json(entry.get("data"))}
        same = and_(*(events.c[k] == v for k, v in values.items() if v is not None))
        if conn.execute(select(1).where(same)).fetchone() is None:
            conn.execute(events.insert().values(**values))
    elif op == "reading":
        values = {"run_id": run_id, "step_index": entry["step_index"], "tag": entry["tag"],
                  "first_id": entry["first_id"], "last_id": entry["last_id"], **rows.reading_values(entry["stats"])}
        same = and_(*(readings.c[k] == values[k] for k in ("run_id", "step_index", "tag", "first_id", "last_id")))
        if conn.execute(select(1).where(same)).fetchone() is None:
            conn.execute(readings.insert().values(**values))
    elif op == "instruments":
        conn.execute(delete(schema.instruments).where(schema.instruments.c.run_id == run_id))
        for item in entry["instruments"]:
            values = dict(zip(("run_id", *rows.INSTRUMENT_FIELDS), rows.instrument_row(run_id, item)))
            conn.execute(schema.instruments.insert().values(**values))
    elif op == "finish":
        conn.execute(update(runs).where(runs.c.run_id == run_id).values(
            status=entry["status"], exit_code=entry["exit_code"], finished=rows.utc_now(),
            trip=rows.to_json(entry.get("trip")), record=rows.to_json(entry.get("record")),
            results=rows.to_json(entry.get("results"))))
