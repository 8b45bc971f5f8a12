"""The store of runs: SQLite in the data folder, or a lab's PostgreSQL database, written while the bay runs.

The store is chosen by URL (:mod:`harness.store.database`); the layout and every query are the
same on both back ends (SQLAlchemy Core, :mod:`harness.store.schema`), and the layout is brought
up to date when the store is opened (:mod:`harness.store.migrate`).

Samples are buffered in memory and committed by a background flusher every
``commit_interval_s`` (0.5 s), at every other write (step start and end, event, reading,
run end) and on :meth:`Store.flush`. Every commit writes the buffered samples first, so
nothing is ever committed ahead of the samples taken before it: a run killed at any moment
leaves a consistent store holding everything up to its last commit. A run's committed sample
ids are therefore always 0..n-1, and ``runs.samples`` is n.

``add_sample`` takes no lock: it appends one tuple to a list, which the GIL makes atomic.
The flusher copies the list, writes the copy and only then deletes what it wrote. A signal
handler may call :meth:`flush` at any point of the runner's thread; if it interrupts a
commit in progress it returns at once and the interrupted commit finishes the work.
"""

from __future__ import annotations

import itertools
import math
import operator
import os
import sqlite3
import threading
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Iterable, Iterator

import numpy as np
from sqlalchemy import bindparam, func, select, update
from sqlalchemy.dialects import postgresql as pg_dialect
from sqlalchemy.dialects import sqlite as sqlite_dialect
from sqlalchemy.exc import SQLAlchemyError

from harness.store import database, export, journal, rows, schema, transfer
from harness.store.connection import Connection
from harness.store.errors import StoreError, UnknownRunError
from harness.store.migrate import ensure_schema
from harness.store.paths import data_dir, ensure_folder, new_run_id, run_folder
from harness.store.process import host_name, process_token, station_id

SAMPLE_CHUNK = 4096  # rows per read: about 0.4 MB of numpy columns, 1.5 MB of rows (a bigger chunk is no faster)
_RUN_OF_ROW = operator.itemgetter(0)
_SAMPLE_KEYS = journal.SAMPLE_FIELDS
_FLOATS = tuple(i for i, name in enumerate(_SAMPLE_KEYS) if name in ("u_rms", "u_mean", "i_rms", "p", "freq",
                                                                       "setpoint"))
_DB_ERRORS = (SQLAlchemyError, sqlite3.Error)
_INSERTS = {"sqlite": sqlite_dialect.insert, "postgresql": pg_dialect.insert}
_LISTED = ("run_id", "status", "samples", "started", "unit", "exit_code", "station_id", "station_name")
_LIVENESS = ("pid", "host", "process_token")
_RUNS, _SAMPLES = schema.runs, schema.samples
_INF = math.inf


class _Flusher(threading.Thread):
    """Commits the buffered samples every interval, off the runner's reading loop."""

    def __init__(self, store: Store, interval_s: float):
        super().__init__(name="harness-store-flusher", daemon=True)
        self._store = store
        self._interval_s = interval_s
        self._halt = threading.Event()

    def run(self) -> None:
        while not self._halt.wait(self._interval_s):
            self._store._flush_from_background()

    def stop(self) -> None:
        self._halt.set()
        self.join()


class Store:
    """Runs, steps, raw samples, events, instruments and readings of the test bay (a :class:`RunStore`).

    ``Store()`` opens the store that ``HARNESS_STORE`` names, else the SQLite file in the data
    folder; ``Store(folder)`` the SQLite file in ``folder``; ``Store(url=...)`` the one named.
    ``folder`` is where run folders (reports, exports) and journals go: a SQLite store's own
    folder by default, the data folder for a server.
    """

    def __init__(self, folder: Path | None = None, *, url: str | None = None, commit_interval_s: float = 0.5,
                 background_flush: bool = True):
        if not (isinstance(commit_interval_s, (int, float)) and 0 < commit_interval_s <= 1.0):
            raise StoreError(f"commit_interval_s must be in (0, 1] s, got {commit_interval_s!r}")
        if url is None and folder is not None:
            url = database.sqlite_url(ensure_folder(Path(folder)) / database.DATABASE_NAME)
        self.url = database.store_url(url)
        file = database.sqlite_path(self.url)
        self.path: Any = file if file is not None else database.redacted(self.url)
        if folder is not None:
            self.folder = ensure_folder(Path(folder))
        else:
            self.folder = ensure_folder(file.parent) if file is not None else data_dir()
        self._engine = database.create(self.url)
        try:
            ensure_schema(self._engine, str(self.path))
            self._conn = Connection(self._engine)
        except (*_DB_ERRORS, self._engine.dialect.dbapi.Error) as exc:
            self._engine.dispose()
            raise StoreError(f"{self.path}: cannot open the store: {_reason(exc)}") from exc
        except BaseException:
            self._engine.dispose()
            raise
        dialect = self._engine.dialect.name
        self._errors = self._conn.errors
        self._insert_sample, _ = self._conn.sql(_INSERTS[dialect](_SAMPLES).on_conflict_do_nothing())
        assert tuple(c.name for c in _SAMPLES.columns) == _SAMPLE_KEYS, "samples columns follow SAMPLE_FIELDS"
        self._nan_is_a_value = dialect != "sqlite"  # SQLite keeps NaN as NULL; the server must be told  # SQLite keeps NaN as NULL; the server must be told
        self._lock = threading.RLock()
        self._depth = 0
        self._pending: list[tuple[Any, ...]] = []
        self._counters: dict[str, Iterator[int]] = {}
        self._begun: set[str] = set()
        self._interval_s = float(commit_interval_s)
        self._oldest = 0.0
        self._background = background_flush
        self._flusher: _Flusher | None = None
        self._closed = False
        self.flush_error: Exception | None = None

    # -- life cycle ---------------------------------------------------------------------------

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Commit what is buffered and close; runs begun here and not finished become incomplete."""
        if self._closed:
            return
        if self._flusher is not None:
            self._flusher.stop()
        try:
            with self._transaction() as conn:
                for run_id in sorted(self._begun):
                    conn.execute(update(_RUNS).where(_RUNS.c.run_id == run_id, _RUNS.c.status == "running")
                                 .values(pid=None))
        finally:
            self._closed = True
            self._counters.clear()  # a late add_sample then meets the closed store, not a lost buffer
            self._conn.close()
            self._engine.dispose()

    def run_folder(self, run_id: str) -> Path:
        return run_folder(run_id, self.folder)

    # -- writing --------------------------------------------------------------------------------

    def begin_run(self, *, unit: str, lab: str, station_name: str, sequence_text: str,
                  station_text: str | None, software_version: str, simulated: dict[str, Any] | None = None) -> str:
        """Record a new run as 'running' (committed at once) and return its id."""
        if simulated is not None and not isinstance(simulated, dict):
            raise StoreError(f"simulated must be a mapping (scenario, fault, ...) or None, got {simulated!r}")
        fields = {"unit": rows.label(unit, "unit"), "lab": rows.label(lab, "lab"),
                  "station_name": rows.label(station_name, "station name"),
                  "sequence_text": rows.text(sequence_text, "sequence text"),
                  "station_text": rows.text(station_text, "station text", optional=True),
                  "software_version": rows.label(software_version, "software version"),
                  "simulated": rows.to_json(simulated)}
        fields["sequence_sha256"] = rows.sha256(fields["sequence_text"])
        fields["station_sha256"] = rows.sha256(fields["station_text"])
        with self._transaction() as conn:
            run_id = self._unused_run_id(conn)
            conn.execute(_RUNS.insert().values(run_id=run_id, status="running", started=rows.utc_now(),
                                               station_id=station_id(), **_this_process(), **fields))
        self._track(run_id, 0)
        return run_id

    def set_instruments(self, run_id: str, instruments: list[dict[str, Any]]) -> None:
        """Record the identities of the run's instruments (replacing any given before)."""
        if not isinstance(instruments, (list, tuple)):
            raise StoreError(f"instruments must be a list of mappings, got {instruments!r}")
        values = [dict(zip(("run_id", *rows.INSTRUMENT_FIELDS), rows.instrument_row(run_id, item)))
                  for item in instruments]
        roles = [v["role"] for v in values]
        if len(set(roles)) != len(roles):
            raise StoreError(f"an instrument role is given twice: {', '.join(roles)}")
        table = schema.instruments
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute(table.delete().where(table.c.run_id == run_id))
            for value in values:
                conn.execute(table.insert().values(**value))

    def begin_step(self, run_id: str, index: int, kind: str, name: str) -> None:
        step = rows.index(index, "step index")
        values = {"run_id": run_id, "step_index": step, "kind": rows.label(kind, "step kind"),
                  "name": rows.text(name, "step name"), "started": rows.utc_now()}
        table = schema.steps
        with self._transaction() as conn:
            _require_run(conn, run_id)
            if conn.execute(select(1).where(table.c.run_id == run_id, table.c.step_index == step)).fetchone():
                raise StoreError(f"run {run_id}: step {step} was begun already; step indices are unique in a run")
            conn.execute(table.insert().values(**values))

    def end_step(self, run_id: str, index: int, status: str) -> None:
        """Mark a step finished; its samples are committed in the same transaction."""
        step = rows.index(index, "step index")
        table = schema.steps
        change = (update(table).where(table.c.run_id == run_id, table.c.step_index == step, table.c.finished.is_(None))
                  .values(finished=rows.utc_now(), status=rows.label(status, "step status")))
        with self._transaction() as conn:
            _require_run(conn, run_id)
            if not conn.execute(change).rowcount:
                raise StoreError(f"run {run_id}: step {step} was not begun, or has ended already")

    def add_sample(self, run_id: str, step_index: int, t: float, channel: int, u_rms: float | None,
                   u_mean: float | None, i_rms: float | None, p: float | None, freq: float | None,
                   setpoint: float | None, tag: str | None = None) -> int:
        """Buffer one raw sample; return its id (0, 1, 2, ... within the run)."""
        counter = self._counters.get(run_id) or self._open_counter(run_id)
        if (type(step_index) is int and type(channel) is int and step_index >= 0 and channel >= 0
                and type(t) is float and -_INF < t < _INF and (tag is None or type(tag) is str)
                and type(u_rms) is type(u_mean) is type(i_rms) is type(p) is type(freq) is type(setpoint) is float):
            # The reading loop's case, checked in one expression: what the checks below accept as is.
            values: tuple[Any, ...] = (step_index, t, time.time(), channel, u_rms, u_mean, i_rms, p, freq,
                                       setpoint, tag)
        else:
            values = (rows.index(step_index, "step index"), rows.bay_time(t), time.time(),
                      rows.index(channel, "channel"), rows.real(u_rms, "u_rms"), rows.real(u_mean, "u_mean"),
                      rows.real(i_rms, "i_rms"), rows.real(p, "p"), rows.real(freq, "freq"),
                      rows.real(setpoint, "setpoint"), rows.text(tag, "tag", optional=True))
        sample_id = next(counter)
        if not self._pending:
            self._oldest = time.monotonic()
        self._pending.append((run_id, sample_id, *values))
        if self.flush_error is not None:
            raise StoreError(f"{self.path}: samples cannot be committed: {self.flush_error}")
        if not self._background and time.monotonic() - self._oldest >= self._interval_s:
            self.flush()
        return sample_id

    def add_reading(self, run_id: str, step_index: int, tag: str, first_id: int, last_id: int,
                    stats: dict[str, Any]) -> None:
        """Record one averaged reading over samples first_id..last_id (see rows.READING_KEYS)."""
        first, last = rows.index(first_id, "first sample id"), rows.index(last_id, "last sample id")
        if last < first:
            raise StoreError(f"run {run_id}: a reading's last sample id {last} is before its first {first}")
        values = {"run_id": run_id, "step_index": rows.index(step_index, "step index"),
                  "tag": rows.label(tag, "reading tag"), "first_id": first, "last_id": last,
                  **rows.reading_values(stats)}
        values = {k: None if isinstance(v, float) and math.isnan(v) else v for k, v in values.items()}
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute(schema.readings.insert().values(**values))

    def add_event(self, run_id: str, t: float | None, kind: str, text: str, data: Any = None) -> None:
        """Record an event, committed at once together with every sample taken before it."""
        values = {"run_id": run_id, "t": None if t is None else rows.bay_time(t), "wall": time.time(),
                  "kind": rows.label(kind, "event kind"), "text": rows.text(text, "event text"),
                  "data": rows.to_json(data)}
        with self._transaction() as conn:
            _require_run(conn, run_id, running=False)
            conn.execute(schema.events.insert().values(**values))

    def flush(self) -> None:
        """Commit the buffered samples now (before the safe-state procedure, say)."""
        if self._closed and not self._pending:
            return
        with self._transaction():
            pass

    def uncommitted(self, run_id: str) -> list[dict[str, Any]]:
        """The run's samples buffered and not yet committed (all of them after a failed commit)."""
        return [dict(zip(_SAMPLE_KEYS, row)) for row in self._pending[:] if row[0] == run_id]

    def amend_outcome(self, run_id: str, status: str, exit_code: int, trip: Any) -> None:
        """Change a finished run's outcome: only when what follows the run's end fails (its report)."""
        if status not in rows.FINAL_STATUSES:
            raise StoreError(f"a run ends as one of {', '.join(rows.FINAL_STATUSES)}, not {status!r}")
        change = update(_RUNS).where(_RUNS.c.run_id == run_id).values(
            status=status, exit_code=rows.index(exit_code, "exit code"), trip=rows.to_json(trip))
        with self._transaction() as conn:
            conn.execute(change)

    def journal(self, run_id: str) -> Path | None:
        """The run's journal, when the store failed during it (see harness.store.journal)."""
        return journal.find_journal(run_id, self.folder)

    def finish_run(self, run_id: str, status: str, exit_code: int, trip: Any, record: Any, results: Any) -> None:
        if status not in rows.FINAL_STATUSES:
            raise StoreError(f"a run ends as one of {', '.join(rows.FINAL_STATUSES)}, not {status!r}")
        change = update(_RUNS).where(_RUNS.c.run_id == run_id).values(
            status=status, exit_code=rows.index(exit_code, "exit code"), finished=rows.utc_now(),
            trip=rows.to_json(trip), record=rows.to_json(record), results=rows.to_json(results))
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute(change)
        self._counters.pop(run_id, None)
        self._begun.discard(run_id)

    def approve(self, run_id: str, *, name: str, role: str, note: str | None = None) -> dict[str, Any]:
        """Add one approval row to a finished run (append-only): who, in what role, when, and the
        SHA-256 of the run's results as stored now; the row as stored."""
        row = {"run_id": run_id, "approved": rows.utc_now(), "name": rows.label(name, "approver's name").strip(),
               "role": rows.label(role, "approver's role").strip(), "note": rows.text(note, "note", optional=True)}
        with self._transaction() as conn:
            found = conn.execute(select(_RUNS.c.status, _RUNS.c.results).where(_RUNS.c.run_id == run_id)).fetchone()
            if found is None:
                raise UnknownRunError(f"no run '{run_id}' in {self.path}; `harness runs` lists the stored runs")
            if found[0] == "running":
                raise StoreError(f"run {run_id} has not finished; only a finished run can be approved")
            row["results_sha256"] = rows.sha256(found[1] or "")
            conn.execute(schema.approvals.insert().values(**row))
        return row

    def approvals(self, run_id: str) -> dict[str, Any]:
        """``results_sha256``: the SHA-256 of the run's results as stored now (None without
        results); ``rows``: its approvals, oldest first, each with ``results_match``, whether that
        hash is still the one that was approved."""
        table = schema.approvals
        now = self._query(select(_RUNS.c.results).where(_RUNS.c.run_id == run_id))
        found = self._query(select(table.c.approved, table.c.name, table.c.role, table.c.note, table.c.results_sha256)
                            .where(table.c.run_id == run_id).order_by(table.c.id))
        return rows.approval_summary(now[0]["results"] if now else None, bool(now), found)

    def replay_journal(self, run_id: str) -> int | None:
        """Write the run's journal (what this store could not take when it failed) into it, in
        one transaction, then mark the journal replayed; the samples added (None: no journal).
        Idempotent: a replay cut short is run again, and nothing is doubled."""
        path = self.journal(run_id)
        if path is None:
            return None
        entries = journal.read_journal(path)
        with self._transaction() as conn:
            _require_run(conn, run_id, running=False)
            added = transfer.apply_journal(conn, run_id, entries, self._insert_sample)
        journal.mark_replayed(path)
        return added

    def copy_run_to(self, target: Store, run_id: str) -> int | None:
        """Put the run into ``target``, whole, replacing what it held of it; the samples copied
        (None: the target holds this run as it is here already, and nothing was written)."""
        run_id = self.resolve(run_id)
        with self._transaction() as conn:
            found = transfer.run_rows(conn, run_id)
        with target._transaction() as conn:
            there = conn.dicts(select(*(_RUNS.c[n] for n in transfer.SAME_RUN)).where(_RUNS.c.run_id == run_id))
            if there and there[0] == {n: found["runs"][0][n] for n in transfer.SAME_RUN}:
                # the run is there as it is here; approvals given since still go across
                return 0 if transfer.add_approvals(conn, run_id, found["approvals"]) else None
            return transfer.copy_run(conn, found, self.sample_pages(run_id), target._insert_sample)

    # -- reading --------------------------------------------------------------------------------

    def runs(self, *, station: str | None = None, unit: str | None = None, status: str | None = None,
             sequence: str | None = None, since: str | None = None, until: str | None = None) -> list[dict[str, Any]]:
        """Stored runs, oldest first: run_id, status, samples, started, unit, exit_code, station_id,
        station_name, journal. Filters (all optional, combined): ``station`` (its id or its name),
        ``unit`` (text the unit contains), ``status`` (as listed: 'incomplete' too), ``sequence`` (the
        start of its SHA-256), ``since``/``until`` (ISO dates or times, UTC, ``until`` inclusive)."""
        self.flush()
        query = select(*(_RUNS.c[name] for name in (*_LISTED, *_LIVENESS))).order_by(_RUNS.c.run_id)
        if station:
            query = query.where((_RUNS.c.station_id == station) | (_RUNS.c.station_name == station))
        if unit:
            query = query.where(_RUNS.c.unit.contains(unit, autoescape=True))
        if sequence:
            query = query.where(_RUNS.c.sequence_sha256.startswith(sequence.lower(), autoescape=True))
        if since:
            query = query.where(_RUNS.c.started >= since)
        if until:
            query = query.where(func.substr(_RUNS.c.started, 1, len(until)) <= until)
        if status:
            stored = "running" if status == "incomplete" else status
            query = query.where(_RUNS.c.status == stored)
        found = [rows.visible_status(r) for r in self._query(query)]
        return [{**{k: v for k, v in r.items() if k not in _LIVENESS},
                 "journal": _optional_path(self.journal(r["run_id"]))}
                for r in found if not status or r["status"] == status]

    def run(self, run_id_or_prefix: str) -> dict[str, Any]:
        """Everything about one run but its raw samples (see :meth:`samples`)."""
        run_id = self.resolve(run_id_or_prefix)
        found = rows.run_row(self._query(select(_RUNS).where(_RUNS.c.run_id == run_id))[0])
        found.update(steps=self.steps(run_id), events=self.events(run_id),
                     instruments=self.instruments(run_id), readings=self.readings(run_id))
        return found

    def results(self) -> list[dict[str, Any]]:
        """Every finished run's run_id, unit, status, started, station_id, record and results (parsed),
        oldest first: what a comparison across units needs, in one query."""
        names = ("run_id", "unit", "status", "started", "station_id", "record", "results")
        found = self._query(select(*(_RUNS.c[n] for n in names)).where(_RUNS.c.status != "running")
                            .order_by(_RUNS.c.run_id))
        return [{**r, "record": rows.from_json(r["record"]), "results": rows.from_json(r["results"])} for r in found]

    def resolve(self, run_id_or_prefix: str) -> str:
        """The full id of the one run whose id is, or begins with, the given text."""
        key = rows.run_key(run_id_or_prefix)
        found = [r["run_id"] for r in self._query(
            select(_RUNS.c.run_id).where(func.substr(_RUNS.c.run_id, 1, len(key)) == key)
            .order_by(_RUNS.c.run_id).limit(6))]
        return rows.chosen_run(key, found, self.path)

    def samples(self, run_id: str, columns: Iterable[str] | None = None) -> dict[str, np.ndarray]:
        """The run's raw samples, one array per column (all of rows.SAMPLE_COLUMNS, or those
        asked for), in id order. A whole run in memory: a report reads :meth:`sample_chunks`."""
        names = rows.sample_column_names(columns)
        parts = list(self.sample_chunks(run_id, names))
        if not parts:
            return rows.empty_columns(names)
        return {name: np.concatenate([part[name] for part in parts]) for name in names}

    def sample_chunks(self, run_id: str, columns: Iterable[str] | None = None,
                      chunk: int = SAMPLE_CHUNK) -> Iterator[dict[str, np.ndarray]]:
        """The run's raw samples as numpy columns, ``chunk`` rows at a time, in id order.

        Each chunk is one short query (keyset paging on the clustered key), so the store is not
        held while the caller works on a chunk, and memory stays bounded whatever the run's size.
        """
        names = rows.sample_column_names(columns)
        # The numbers as one block of rows (no text among them), the tags of the chunk by a query
        # of their own: most samples carry none, and a Python object per row costs more than the query.
        numeric = tuple(n for n in names if n != "tag")
        read = numeric if "id" in numeric else ("id", *numeric)
        run_id = self.resolve(run_id)
        tags = self._conn.prepare(
            select(_SAMPLES.c.id, _SAMPLES.c.tag)
            .where(_SAMPLES.c.run_id == bindparam("run_id"), _SAMPLES.c.id >= bindparam("first"),
                   _SAMPLES.c.id <= bindparam("last"), _SAMPLES.c.tag.is_not(None)).order_by(_SAMPLES.c.id))
        for page in self.sample_pages(run_id, read, chunk):
            found = rows.numeric_columns(page, read)
            if "tag" in names:
                ids = found["id"]
                with self._transaction() as conn:
                    tagged = conn.run_prepared(tags, run_id=run_id, first=int(ids[0]), last=int(ids[-1])).fetchall()
                found["tag"] = rows.tag_column(len(ids), ids, tagged)
            yield {name: found[name] for name in names}

    def sample_counts(self, run_id: str) -> dict[tuple[int, int], int]:
        """How many raw samples each (step, channel) of the run has (those without samples left out)."""
        run_id = self.resolve(run_id)
        self.flush()
        query = (select(_SAMPLES.c.step_index, _SAMPLES.c.channel, func.count().label("n"))
                 .where(_SAMPLES.c.run_id == run_id).group_by(_SAMPLES.c.step_index, _SAMPLES.c.channel))
        return {(r["step_index"], r["channel"]): r["n"] for r in self._query(query)}

    def sample_pages(self, run_id: str, columns: Iterable[str] | None = None,
                     chunk: int = SAMPLE_CHUNK, *, after: int = -1) -> Iterator[list[tuple[Any, ...]]]:
        """The run's raw samples as rows of ``columns`` (all of rows.SAMPLE_COLUMNS by default),
        ``chunk`` rows at a time in id order, as :meth:`sample_chunks` reads them; only those
        whose id is above ``after`` (a live view's next rows)."""
        names = rows.sample_column_names(columns)
        if type(chunk) is not int or chunk < 1:
            raise StoreError(f"a chunk is a whole number of rows >= 1, got {chunk!r}")
        run_id = self.resolve(run_id)
        self.flush()
        key = names.index("id") if "id" in names else len(names)
        chosen = [_SAMPLES.c[name] for name in names] + ([] if "id" in names else [_SAMPLES.c.id])
        last = rows.index(after + 1, "after (a sample id, or -1)") - 1
        # compiled once: a run of 10^6 samples is hundreds of pages
        page_query = self._conn.prepare(
            select(*chosen).where(_SAMPLES.c.run_id == bindparam("run_id"), _SAMPLES.c.id > bindparam("last"))
            .order_by(_SAMPLES.c.id).limit(chunk))
        while True:
            with self._transaction() as conn:
                page = conn.run_prepared(page_query, run_id=run_id, last=last).fetchall()
            if not page:
                return
            last = page[-1][key]
            yield page if key < len(names) else [row[:-1] for row in page]
            if len(page) < chunk:
                return

    def events(self, run_id: str) -> list[dict[str, Any]]:
        table = schema.events
        found = self._query(select(table.c.id, table.c.t, table.c.wall, table.c.kind, table.c.text, table.c.data)
                            .where(table.c.run_id == self.resolve(run_id)).order_by(table.c.id))
        return [rows.event_row(e) for e in found]

    def steps(self, run_id: str) -> list[dict[str, Any]]:
        table = schema.steps
        return self._query(select(*(table.c[n] for n in ("step_index", "kind", "name", "started", "finished",
                                                         "status")))
                           .where(table.c.run_id == self.resolve(run_id)).order_by(table.c.step_index))

    def readings(self, run_id: str) -> list[dict[str, Any]]:
        table = schema.readings
        found = self._query(select(table).where(table.c.run_id == self.resolve(run_id)).order_by(table.c.id))
        return [rows.reading_row(r) for r in found]

    def instruments(self, run_id: str) -> list[dict[str, Any]]:
        table = schema.instruments
        return self._query(select(*(table.c[n] for n in rows.INSTRUMENT_FIELDS))
                           .where(table.c.run_id == self.resolve(run_id)).order_by(table.c.role))

    def export_csv(self, run_id: str, path: str | Path) -> Path:
        """Write the run's raw samples as CSV (a folder gets ``<run_id>-samples.csv``), streamed
        a chunk at a time."""
        run_id = self.resolve(run_id)
        target = export.target(path, run_id, "csv")
        export.write_samples(self.sample_chunks(run_id), csv_path=target)
        return target

    def export_parquet(self, run_id: str, path: str | Path) -> Path:
        """Write the run's raw samples as Parquet, streamed a chunk at a time; needs pyarrow."""
        export.require_pyarrow()
        run_id = self.resolve(run_id)
        target = export.target(path, run_id, "parquet")
        export.write_samples(self.sample_chunks(run_id), parquet_path=target)
        return target

    # -- inside -----------------------------------------------------------------------------------

    @contextmanager
    def _transaction(self) -> Iterator[Any]:
        """One commit: the buffered samples first, then the caller's statements."""
        with self._lock:
            if self._depth:  # re-entered by a signal handler: the interrupted commit does the work
                yield self._conn
                return
            if self._closed:
                raise StoreError(f"{self.path}: the store is closed")
            # Plain commit and rollback, not SQLAlchemy's context managers: an exception from a
            # signal handler may strike anywhere in here, and must leave a state the next commit
            # can start from (a transaction left half-begun is rolled back first).
            self._depth = 1
            try:
                self._conn.begin()
                written = self._write_pending()
                yield self._conn
                self._conn.commit()
            except BaseException as exc:
                self._roll_back()
                if not isinstance(exc, (self._errors, StoreError)):
                    self._conn.interrupted()
                if isinstance(exc, self._errors):
                    raise StoreError(f"{self.path}: {_reason(exc)}") from exc
                raise
            finally:
                self._depth = 0
            del self._pending[:written]
            self.flush_error = None

    def _roll_back(self) -> None:
        try:
            self._conn.rollback()
        except self._errors:
            pass  # a connection gone away has no transaction left; the next commit reopens it

    def _write_pending(self) -> int:
        # A copy: samples appended meanwhile stay for the next commit. DO NOTHING on a known id
        # makes a retry harmless when an interruption struck between a commit and the removal
        # of its rows.
        batch = self._pending[:]
        for run_id, group in itertools.groupby(batch, key=_RUN_OF_ROW):
            values = [_nan_to_null(row) for row in group] if self._nan_is_a_value else list(group)
            added = self._conn.insert_rows(_SAMPLES, self._insert_sample, values)  # rows already there not counted
            self._conn.execute(update(_RUNS).where(_RUNS.c.run_id == run_id)
                               .values(samples=_RUNS.c.samples + added))
        return len(batch)

    def _flush_from_background(self) -> None:
        if not self._pending:
            return
        try:
            self.flush()
        except Exception as exc:  # handed to the runner by its next add_sample
            self.flush_error = exc

    def _query(self, query: Any) -> list[dict[str, Any]]:
        """Read in a transaction of its own (which commits the buffered samples first, as any)."""
        with self._transaction() as conn:
            return conn.dicts(query)

    def _unused_run_id(self, conn: Any) -> str:
        for _ in range(16):
            run_id = new_run_id()
            if not conn.execute(select(1).where(_RUNS.c.run_id == run_id)).fetchone():
                return run_id
        raise StoreError(f"{self.path}: no free run id this second")  # 16 draws of 65536 all taken

    def _open_counter(self, run_id: str) -> Iterator[int]:
        """A run begun by another Store object: continue its sample ids after the stored ones."""
        found = self._query(select(_RUNS.c.status, _RUNS.c.samples).where(_RUNS.c.run_id == run_id))
        if not found:
            raise UnknownRunError(f"no run '{run_id}' in {self.path}; call begin_run first")
        if found[0]["status"] != "running":
            raise StoreError(f"run {run_id} is finished ({found[0]['status']}); it takes no more samples")
        return self._track(run_id, found[0]["samples"])

    def _track(self, run_id: str, first_id: int) -> Iterator[int]:
        counter = self._counters[run_id] = itertools.count(first_id)
        self._begun.add(run_id)
        if self._background and self._flusher is None:
            self._flusher = _Flusher(self, self._interval_s)
            self._flusher.start()
        return counter


def _reason(exc: BaseException) -> str:
    """The database's own words, without SQLAlchemy's statement dump and links."""
    original = getattr(exc, "orig", None)
    return str(original if original is not None else exc).strip().splitlines()[0]


def _nan_to_null(row: tuple[Any, ...]) -> tuple[Any, ...]:
    if any(row[i] != row[i] for i in _FLOATS if row[i] is not None):
        return tuple(None if i in _FLOATS and v is not None and v != v else v for i, v in enumerate(row))
    return row


def _this_process() -> dict[str, Any]:
    return {"pid": os.getpid(), "host": host_name(), "process_token": process_token(os.getpid())}


def _require_run(conn: Any, run_id: str, *, running: bool = True) -> None:
    row = conn.execute(select(_RUNS.c.status).where(_RUNS.c.run_id == run_id)).fetchone()
    if row is None:
        raise UnknownRunError(f"no run '{run_id}' in the store; call begin_run first")
    if running and row[0] != "running":
        raise StoreError(f"run {run_id} is finished ({row[0]}); it cannot be changed")


def _optional_path(path: Path | None) -> str | None:
    return None if path is None else str(path)


