"""The store of runs: one SQLite database in the data folder, written while the bay runs.

Samples are buffered in memory and committed by a background flusher every
``commit_interval_s`` (0.5 s), at every other write (step start and end, event, reading,
run end) and on :meth:`Store.flush`. Every commit writes the buffered samples first, so
nothing is ever committed ahead of the samples taken before it: a run killed at any moment
leaves a consistent store holding everything up to its last commit.

``add_sample`` takes no lock: it appends one tuple to a list, which the GIL makes atomic.
The flusher copies the list, writes the copy and only then deletes what it wrote. A signal
handler may call :meth:`flush` at any point of the runner's thread; if it interrupts a
commit in progress it returns at once and the interrupted commit finishes the work.
"""

from __future__ import annotations

import itertools
import operator
import os
import sqlite3
import threading
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Iterable, Iterator

import numpy as np

from harness.store import export, journal, rows
from harness.store.errors import AmbiguousRunError, StoreError, UnknownRunError
from harness.store.paths import DATABASE_NAME, data_dir, ensure_folder, new_run_id, run_folder
from harness.store.process import host_name, process_token, still_running
from harness.store.schema import connect

_INSERT_SAMPLE = ("INSERT OR IGNORE INTO samples (run_id, id, step_index, t, wall, channel, u_rms, u_mean, "
                  "i_rms, p, freq, setpoint, tag) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)")
_INSERT_RUN = ("INSERT INTO runs (run_id, status, started, pid, host, process_token, unit, lab, station_name, "
               "sequence_text, sequence_sha256, station_text, station_sha256, software_version, simulated) "
               "VALUES (:run_id, 'running', :started, :pid, :host, :process_token, :unit, :lab, :station_name, "
               ":sequence_text, :sequence_sha256, :station_text, :station_sha256, :software_version, :simulated)")
_INSERT_READING = ("INSERT INTO readings (run_id, step_index, tag, channel, first_id, last_id, count, stable, "
                   + ", ".join(rows.READING_STATS) + ") VALUES (:run_id, :step_index, :tag, :channel, :first_id, "
                   ":last_id, :count, :stable, " + ", ".join(f":{n}" for n in rows.READING_STATS) + ")")
SAMPLE_CHUNK = 16_384  # rows per read: about 1.5 MB of numpy columns, 6 MB of rows
_JSON_FIELDS = ("simulated", "trip", "record", "results")
_RUN_OF_ROW = operator.itemgetter(0)


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
    """Runs, steps, raw samples, events, instruments and readings of the test bay."""

    def __init__(self, folder: Path | None = None, *, commit_interval_s: float = 0.5,
                 background_flush: bool = True):
        if not (isinstance(commit_interval_s, (int, float)) and 0 < commit_interval_s <= 1.0):
            raise StoreError(f"commit_interval_s must be in (0, 1] s, got {commit_interval_s!r}")
        self.folder = ensure_folder(Path(folder)) if folder is not None else data_dir()
        self.path = self.folder / DATABASE_NAME
        self._conn = connect(self.path)
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
                conn.executemany("UPDATE runs SET pid = NULL WHERE run_id = ? AND status = 'running'",
                                 [(run_id,) for run_id in self._begun])
        finally:
            self._closed = True
            self._counters.clear()  # a late add_sample then meets the closed store, not a lost buffer
            self._conn.close()

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
            conn.execute(_INSERT_RUN, {"run_id": run_id, "started": rows.utc_now(), **_this_process(), **fields})
        self._track(run_id, 0)
        return run_id

    def set_instruments(self, run_id: str, instruments: list[dict[str, Any]]) -> None:
        """Record the identities of the run's instruments (replacing any given before)."""
        if not isinstance(instruments, (list, tuple)):
            raise StoreError(f"instruments must be a list of mappings, got {instruments!r}")
        values = [rows.instrument_row(run_id, item) for item in instruments]
        roles = [v[1] for v in values]
        if len(set(roles)) != len(roles):
            raise StoreError(f"an instrument role is given twice: {', '.join(roles)}")
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute("DELETE FROM instruments WHERE run_id = ?", (run_id,))
            conn.executemany(f"INSERT INTO instruments (run_id, {', '.join(rows.INSTRUMENT_FIELDS)}) "
                             f"VALUES ({', '.join('?' * (len(rows.INSTRUMENT_FIELDS) + 1))})", values)

    def begin_step(self, run_id: str, index: int, kind: str, name: str) -> None:
        step = rows.index(index, "step index")
        values = (run_id, step, rows.label(kind, "step kind"), rows.text(name, "step name"), rows.utc_now())
        with self._transaction() as conn:
            _require_run(conn, run_id)
            if conn.execute("SELECT 1 FROM steps WHERE run_id = ? AND step_index = ?", (run_id, step)).fetchone():
                raise StoreError(f"run {run_id}: step {step} was begun already; step indices are unique in a run")
            conn.execute("INSERT INTO steps (run_id, step_index, kind, name, started) VALUES (?, ?, ?, ?, ?)", values)

    def end_step(self, run_id: str, index: int, status: str) -> None:
        """Mark a step finished; its samples are committed in the same transaction."""
        step = rows.index(index, "step index")
        values = (rows.utc_now(), rows.label(status, "step status"), run_id, step)
        with self._transaction() as conn:
            _require_run(conn, run_id)
            done = conn.execute("UPDATE steps SET finished = ?, status = ? WHERE run_id = ? AND step_index = ? "
                                "AND finished IS NULL", values).rowcount
            if not done:
                raise StoreError(f"run {run_id}: step {step} was not begun, or has ended already")

    def add_sample(self, run_id: str, step_index: int, t: float, channel: int, u_rms: float | None,
                   u_mean: float | None, i_rms: float | None, p: float | None, freq: float | None,
                   setpoint: float | None, tag: str | None = None) -> int:
        """Buffer one raw sample; return its id (0, 1, 2, ... within the run)."""
        counter = self._counters.get(run_id) or self._open_counter(run_id)
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
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute(_INSERT_READING, values)

    def add_event(self, run_id: str, t: float | None, kind: str, text: str, data: Any = None) -> None:
        """Record an event, committed at once together with every sample taken before it."""
        values = (run_id, None if t is None else rows.bay_time(t), time.time(), rows.label(kind, "event kind"),
                  rows.text(text, "event text"), rows.to_json(data))
        with self._transaction() as conn:
            _require_run(conn, run_id, running=False)
            conn.execute("INSERT INTO events (run_id, t, wall, kind, text, data) VALUES (?, ?, ?, ?, ?, ?)", values)

    def flush(self) -> None:
        """Commit the buffered samples now (before the safe-state procedure, say)."""
        if self._closed and not self._pending:
            return
        with self._transaction():
            pass

    def uncommitted(self, run_id: str) -> list[dict[str, Any]]:
        """The run's samples buffered and not yet committed (all of them after a failed commit)."""
        return [dict(zip(journal.SAMPLE_FIELDS, row)) for row in self._pending[:] if row[0] == run_id]

    def amend_outcome(self, run_id: str, status: str, exit_code: int, trip: Any) -> None:
        """Change a finished run's outcome: only when what follows the run's end fails (its report)."""
        if status not in rows.FINAL_STATUSES:
            raise StoreError(f"a run ends as one of {', '.join(rows.FINAL_STATUSES)}, not {status!r}")
        with self._transaction() as conn:
            conn.execute("UPDATE runs SET status = ?, exit_code = ?, trip = ? WHERE run_id = ?",
                         (status, rows.index(exit_code, "exit code"), rows.to_json(trip), run_id))

    def journal(self, run_id: str) -> Path | None:
        """The run's journal, when the store failed during it (see harness.store.journal)."""
        return journal.find_journal(run_id, self.folder)

    def finish_run(self, run_id: str, status: str, exit_code: int, trip: Any, record: Any, results: Any) -> None:
        if status not in rows.FINAL_STATUSES:
            raise StoreError(f"a run ends as one of {', '.join(rows.FINAL_STATUSES)}, not {status!r}")
        code = rows.index(exit_code, "exit code")
        values = (status, code, rows.utc_now(), rows.to_json(trip), rows.to_json(record), rows.to_json(results), run_id)
        with self._transaction() as conn:
            _require_run(conn, run_id)
            conn.execute("UPDATE runs SET status = ?, exit_code = ?, finished = ?, trip = ?, record = ?, "
                         "results = ? WHERE run_id = ?", values)
        self._counters.pop(run_id, None)
        self._begun.discard(run_id)

    def approve(self, run_id: str, *, name: str, role: str, note: str | None = None) -> dict[str, Any]:
        """Add one approval row to a finished run (append-only): who, in what role, when, and the
        SHA-256 of the run's results as stored now; the row as stored."""
        row = {"run_id": run_id, "approved": rows.utc_now(), "name": rows.label(name, "approver's name").strip(),
               "role": rows.label(role, "approver's role").strip(), "note": rows.text(note, "note", optional=True)}
        with self._transaction() as conn:
            found = conn.execute("SELECT status, results FROM runs WHERE run_id = ?", (run_id,)).fetchone()
            if found is None:
                raise UnknownRunError(f"no run '{run_id}' in {self.path}; `harness runs` lists the stored runs")
            if found[0] == "running":
                raise StoreError(f"run {run_id} has not finished; only a finished run can be approved")
            row["results_sha256"] = rows.sha256(found[1] or "")
            conn.execute("INSERT INTO approvals (run_id, approved, name, role, note, results_sha256) "
                         "VALUES (:run_id, :approved, :name, :role, :note, :results_sha256)", row)
        return row

    def approvals(self, run_id: str) -> dict[str, Any]:
        """``results_sha256``: the SHA-256 of the run's results as stored now (None without
        results); ``rows``: its approvals, oldest first, each with ``results_match``, whether that
        hash is still the one that was approved."""
        now = self._query("SELECT results FROM runs WHERE run_id = ?", (run_id,))
        current = rows.sha256(now[0]["results"] or "") if now else None
        found = self._query("SELECT approved, name, role, note, results_sha256 FROM approvals "
                            "WHERE run_id = ? ORDER BY id", (run_id,))
        return {"results_sha256": current if now and now[0]["results"] else None,
                "rows": [{**r, "results_match": r["results_sha256"] == current} for r in found]}

    # -- reading --------------------------------------------------------------------------------

    def runs(self) -> list[dict[str, Any]]:
        """Every stored run, oldest first: run_id, status, samples, started, unit, exit_code."""
        self.flush()
        found = self._query("SELECT run_id, status, samples, started, unit, exit_code, pid, host, process_token "
                            "FROM runs ORDER BY run_id")
        return [{**{k: v for k, v in _with_visible_status(r).items() if k not in ("pid", "host", "process_token")},
                 "journal": _optional_path(self.journal(r["run_id"]))} for r in found]

    def run(self, run_id_or_prefix: str) -> dict[str, Any]:
        """Everything about one run but its raw samples (see :meth:`samples`)."""
        run_id = self.resolve(run_id_or_prefix)
        found = _with_visible_status(self._query("SELECT * FROM runs WHERE run_id = ?", (run_id,))[0])
        for name in _JSON_FIELDS:
            found[name] = rows.from_json(found[name])
        found.update(steps=self.steps(run_id), events=self.events(run_id),
                     instruments=self.instruments(run_id), readings=self.readings(run_id))
        return found

    def resolve(self, run_id_or_prefix: str) -> str:
        """The full id of the one run whose id is, or begins with, the given text."""
        key = run_id_or_prefix.strip() if isinstance(run_id_or_prefix, str) else ""
        if not key:
            raise UnknownRunError(f"give a run id (see `harness runs`), not {run_id_or_prefix!r}")
        found = [r["run_id"] for r in self._query(
            "SELECT run_id FROM runs WHERE substr(run_id, 1, ?) = ? ORDER BY run_id LIMIT 6", (len(key), key))]
        if key in found or len(found) == 1:
            return key if key in found else found[0]
        if not found:
            raise UnknownRunError(f"no run '{key}' in {self.path}; `harness runs` lists the stored runs")
        shown = ", ".join(found[:5]) + (", ..." if len(found) > 5 else "")
        raise AmbiguousRunError(f"'{key}' matches several runs ({shown}); give more of the run id")

    def samples(self, run_id: str, columns: Iterable[str] | None = None) -> dict[str, np.ndarray]:
        """The run's raw samples, one array per column (all of rows.SAMPLE_COLUMNS, or those
        asked for), in id order. A whole run in memory: a report reads :meth:`sample_chunks`."""
        names = rows.sample_column_names(columns)
        parts = list(self.sample_chunks(run_id, names))
        if not parts:
            return rows.sample_columns([], names)
        return {name: np.concatenate([part[name] for part in parts]) for name in names}

    def sample_chunks(self, run_id: str, columns: Iterable[str] | None = None,
                      chunk: int = SAMPLE_CHUNK) -> Iterator[dict[str, np.ndarray]]:
        """The run's raw samples as numpy columns, ``chunk`` rows at a time, in id order.

        Each chunk is one short query (keyset paging on the clustered key), so the store is not
        held while the caller works on a chunk, and memory stays bounded whatever the run's size.
        """
        names = rows.sample_column_names(columns)
        for page in self.sample_pages(run_id, names, chunk):
            yield rows.sample_columns(page, names)

    def sample_counts(self, run_id: str) -> dict[tuple[int, int], int]:
        """How many raw samples each (step, channel) of the run has (those without samples left out)."""
        run_id = self.resolve(run_id)
        self.flush()
        found = self._query("SELECT step_index, channel, count(*) AS n FROM samples WHERE run_id = ? "
                            "GROUP BY step_index, channel", (run_id,))
        return {(r["step_index"], r["channel"]): r["n"] for r in found}

    def sample_pages(self, run_id: str, columns: Iterable[str] | None = None,
                     chunk: int = SAMPLE_CHUNK) -> Iterator[list[tuple[Any, ...]]]:
        """The run's raw samples as rows of ``columns`` (all of rows.SAMPLE_COLUMNS by default),
        ``chunk`` rows at a time in id order, as :meth:`sample_chunks` reads them."""
        names = rows.sample_column_names(columns)
        if type(chunk) is not int or chunk < 1:
            raise StoreError(f"a chunk is a whole number of rows >= 1, got {chunk!r}")
        run_id = self.resolve(run_id)
        self.flush()
        key = names.index("id") if "id" in names else len(names)
        sql = (f"SELECT {', '.join(names)}{'' if 'id' in names else ', id'} FROM samples "
               "WHERE run_id = ? AND id > ? ORDER BY id LIMIT ?")
        last = -1
        while True:
            with self._lock, _mapped_errors(self.path):
                if self._closed:
                    raise StoreError(f"{self.path}: the store is closed")
                page = self._conn.execute(sql, (run_id, last, chunk)).fetchall()
            if not page:
                return
            last = page[-1][key]
            yield page if key < len(names) else [row[:-1] for row in page]
            if len(page) < chunk:
                return

    def events(self, run_id: str) -> list[dict[str, Any]]:
        found = self._query("SELECT id, t, wall, kind, text, data FROM events WHERE run_id = ? ORDER BY id",
                            (self.resolve(run_id),))
        return [{**e, "data": rows.from_json(e["data"])} for e in found]

    def steps(self, run_id: str) -> list[dict[str, Any]]:
        return self._query("SELECT step_index, kind, name, started, finished, status FROM steps "
                           "WHERE run_id = ? ORDER BY step_index", (self.resolve(run_id),))

    def readings(self, run_id: str) -> list[dict[str, Any]]:
        found = self._query("SELECT * FROM readings WHERE run_id = ? ORDER BY id", (self.resolve(run_id),))
        return [{**{k: v for k, v in r.items() if k != "run_id"}, "stable": bool(r["stable"])} for r in found]

    def instruments(self, run_id: str) -> list[dict[str, Any]]:
        return self._query(f"SELECT {', '.join(rows.INSTRUMENT_FIELDS)} FROM instruments WHERE run_id = ? "
                           "ORDER BY role", (self.resolve(run_id),))

    def export_csv(self, run_id: str, path: str | Path) -> Path:
        """Write the run's raw samples as CSV (a folder gets ``<run_id>-samples.csv``), streamed
        a chunk at a time."""
        run_id = self.resolve(run_id)
        target = export.target(path, run_id, "csv")
        return export.write_csv((row for page in self.sample_pages(run_id) for row in page), target)

    def export_parquet(self, run_id: str, path: str | Path) -> Path:
        """Write the run's raw samples as Parquet, streamed a chunk at a time; needs pyarrow."""
        export.require_pyarrow()
        run_id = self.resolve(run_id)
        return export.write_parquet(self.sample_chunks(run_id), export.target(path, run_id, "parquet"))

    # -- inside -----------------------------------------------------------------------------------

    @contextmanager
    def _transaction(self) -> Iterator[sqlite3.Connection]:
        """One commit: the buffered samples first, then the caller's statements."""
        with self._lock:
            if self._depth:  # re-entered by a signal handler: the interrupted commit does the work
                yield self._conn
                return
            if self._closed:
                raise StoreError(f"{self.path}: the store is closed")
            try:
                self._depth = 1
                written = self._write_pending()
                yield self._conn
                self._conn.commit()
            except BaseException as exc:
                self._conn.rollback()
                if isinstance(exc, sqlite3.Error):
                    raise StoreError(f"{self.path}: {exc}") from exc
                raise
            finally:
                self._depth = 0
            del self._pending[:written]
            self.flush_error = None

    def _write_pending(self) -> int:
        # A copy: samples appended meanwhile stay for the next commit. OR IGNORE makes a retry
        # harmless when an interruption struck between a commit and the removal of its rows.
        batch = self._pending[:]
        for run_id, group in itertools.groupby(batch, key=_RUN_OF_ROW):
            before = self._conn.total_changes
            self._conn.executemany(_INSERT_SAMPLE, group)
            added = self._conn.total_changes - before
            self._conn.execute("UPDATE runs SET samples = samples + ? WHERE run_id = ?", (added, run_id))
        return len(batch)

    def _flush_from_background(self) -> None:
        if not self._pending:
            return
        try:
            self.flush()
        except Exception as exc:  # handed to the runner by its next add_sample
            self.flush_error = exc

    def _query(self, sql: str, params: tuple[Any, ...] = ()) -> list[dict[str, Any]]:
        with self._lock:
            if self._closed:
                raise StoreError(f"{self.path}: the store is closed")
            try:
                return rows.dicts(self._conn.execute(sql, params))
            except sqlite3.Error as exc:
                raise StoreError(f"{self.path}: {exc}") from exc

    def _unused_run_id(self, conn: sqlite3.Connection) -> str:
        for _ in range(16):
            run_id = new_run_id()
            if not conn.execute("SELECT 1 FROM runs WHERE run_id = ?", (run_id,)).fetchone():
                return run_id
        raise StoreError(f"{self.path}: no free run id this second")  # 16 draws of 65536 all taken

    def _open_counter(self, run_id: str) -> Iterator[int]:
        """A run begun by another Store object: continue its sample ids after the stored ones."""
        found = self._query("SELECT status, samples FROM runs WHERE run_id = ?", (run_id,))
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


@contextmanager
def _mapped_errors(path: Path) -> Iterator[None]:
    try:
        yield
    except sqlite3.Error as exc:
        raise StoreError(f"{path}: {exc}") from exc


def _this_process() -> dict[str, Any]:
    return {"pid": os.getpid(), "host": host_name(), "process_token": process_token(os.getpid())}


def _require_run(conn: sqlite3.Connection, run_id: str, *, running: bool = True) -> None:
    row = conn.execute("SELECT status FROM runs WHERE run_id = ?", (run_id,)).fetchone()
    if row is None:
        raise UnknownRunError(f"no run '{run_id}' in the store; call begin_run first")
    if running and row[0] != "running":
        raise StoreError(f"run {run_id} is finished ({row[0]}); it cannot be changed")


def _optional_path(path: Path | None) -> str | None:
    return None if path is None else str(path)


def _with_visible_status(run: dict[str, Any]) -> dict[str, Any]:
    """'running' only while the run's process lives; otherwise the run is 'incomplete'."""
    if run["status"] == "running" and not still_running(run["pid"], run["host"], run["process_token"]):
        return {**run, "status": "incomplete"}
    return run
