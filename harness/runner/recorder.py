"""The run's writes to the store, kept even when the store fails.

A store that fails while a run goes on (a full disk, a corrupt file) must not skip the safe
state, and no sample taken before the failure may be lost. The first failure therefore does
two things: every sample the store had not committed, and every write after it, goes to the
run's journal (:mod:`harness.store.journal`); and a :class:`StoreFault` is held for the runner,
which raises it at its next step forward (a reading, a step start), so the run stops through
the one safe-state procedure like any trip. The writes made while the bay is made safe and the
run is closed (events, the flush, the run's end) never raise: they are journalled instead.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING, Any

from harness.safety import Trip
from harness.store.journal import SAMPLE_FIELDS, Journal

if TYPE_CHECKING:
    from harness.store.protocol import RunStore


class StoreFault(Trip):
    """The store failed during a run: the run stops and the bay is made safe."""


class Recorder:
    """Stands in for the store during one run (same method signatures as :class:`Store`)."""

    def __init__(self, store: RunStore, run_id: str):
        self.store = store
        self.run_id = run_id
        self.failure: str | None = None
        self.journal = Journal(run_id, store.folder)
        self.held: list[dict[str, Any]] = []  # entries no journal folder could take: kept, and said
        self._fault: StoreFault | None = None
        self._last_id = -1

    @property
    def samples_taken(self) -> int:
        return self._last_id + 1

    @property
    def failed(self) -> bool:
        return self.failure is not None

    @property
    def path(self) -> Any:
        return self.store.path

    def run_folder(self, run_id: str) -> Any:
        return self.store.run_folder(run_id)

    def where(self) -> str:
        """One sentence on where the samples the store could not take went."""
        if not self.failed:
            return ""
        if self.journal.path is not None:
            return f"the store failed ({self.failure}); every sample and event it could not take is in {self.journal.path}"
        return (f"the store failed ({self.failure}) and no journal could be written "
                f"({'; '.join(self.journal.errors)}); {len(self.held)} entries are held in memory only")

    def pending_fault(self) -> StoreFault | None:
        """The fault to raise once, at the runner's next step forward."""
        fault, self._fault = self._fault, None
        return fault

    # -- the store's writing methods ------------------------------------------------------------
    def add_sample(self, run_id: str, step_index: int, t: float, channel: int, u_rms: float, u_mean: float,
                   i_rms: float, p: float, freq: float, setpoint: float, tag: str | None = None) -> int:
        if self.failure is None:
            try:
                self._last_id = self.store.add_sample(run_id, step_index, t, channel, u_rms, u_mean, i_rms, p,
                                                      freq, setpoint, tag)
                return self._last_id
            except Exception as exc:  # noqa: BLE001 - any failure of the store: journal, then stop
                self._fail(exc)  # the sample is among the store's uncommitted ones, journalled there
                raise self.pending_fault() or StoreFault(f"store failure: {exc}") from exc
        self._last_id += 1
        values = (run_id, self._last_id, step_index, t, time.time(), channel, u_rms, u_mean, i_rms, p, freq,
                  setpoint, tag)
        self._journal([{"op": "sample", **dict(zip(SAMPLE_FIELDS, values))}])
        return self._last_id

    def add_event(self, run_id: str, t: float | None, kind: str, text: str, data: Any = None) -> None:
        self._write("add_event", {"op": "event", "run_id": run_id, "t": t, "wall": time.time(), "kind": kind,
                                  "text": text, "data": data}, run_id, t, kind, text, data)

    def begin_step(self, run_id: str, index: int, kind: str, name: str) -> None:
        self._write("begin_step", {"op": "begin_step", "run_id": run_id, "step_index": index, "kind": kind,
                                   "name": name}, run_id, index, kind, name)

    def end_step(self, run_id: str, index: int, status: str) -> None:
        self._write("end_step", {"op": "end_step", "run_id": run_id, "step_index": index, "status": status},
                    run_id, index, status)

    def add_reading(self, run_id: str, step_index: int, tag: str, first_id: int, last_id: int,
                    stats: dict[str, Any]) -> None:
        self._write("add_reading", {"op": "reading", "run_id": run_id, "step_index": step_index, "tag": tag,
                                    "first_id": first_id, "last_id": last_id, "stats": stats},
                    run_id, step_index, tag, first_id, last_id, stats)

    def set_instruments(self, run_id: str, instruments: list[dict[str, Any]]) -> None:
        self._write("set_instruments", {"op": "instruments", "run_id": run_id, "instruments": instruments},
                    run_id, instruments)

    def finish_run(self, run_id: str, status: str, exit_code: int, trip: Any, record: Any, results: Any) -> None:
        self._write("finish_run", {"op": "finish", "run_id": run_id, "status": status, "exit_code": exit_code,
                                   "trip": trip, "record": record, "results": results},
                    run_id, status, exit_code, trip, record, results)

    def flush(self) -> None:
        if not self.failed:
            try:
                self.store.flush()
            except Exception as exc:  # noqa: BLE001 - called on the way to the safe state: never raises
                self._fail(exc)

    def close(self) -> None:
        self.journal.close()

    # -- inside ---------------------------------------------------------------------------------
    def _write(self, method: str, entry: dict[str, Any], *args: Any) -> None:
        if not self.failed:
            try:
                getattr(self.store, method)(*args)
                return
            except Exception as exc:  # noqa: BLE001 - any failure of the store: journal, then stop
                self._fail(exc)
        self._journal([entry])

    def _fail(self, exc: Exception) -> None:
        self.failure = str(exc)
        self._fault = StoreFault(f"store failure: {exc}")
        uncommitted = self.store.uncommitted(self.run_id)
        if uncommitted:
            self._last_id = max(self._last_id, uncommitted[-1]["id"])
        self._journal([{"op": "store-failure", "run_id": self.run_id, "error": self.failure, "wall": time.time()}]
                      + [{"op": "sample", **row} for row in uncommitted])

    def _journal(self, entries: list[dict[str, Any]]) -> None:
        if self.held or not self.journal.write(entries):
            self.held.extend(entries)  # kept in order; said in the outcome and the message
