"""``harness sync``: bring a store up to date with its journals, and forward its runs to a lab database.

A station writes its runs to its own SQLite store first, always: the bay never waits on, nor
trips for, a network or a server. ``harness sync --to postgresql://...`` then forwards every
run that is no longer running and differs from the lab's copy, whole, in one transaction of
the lab database per run; a run already there unchanged is skipped, so sync can run as often
as wanted (after each run, from a timer) and a sync cut short by the server going away is
simply run again. Journals (what a store could not take when it failed, see
:mod:`harness.store.journal`) are replayed into their store first, so a run stopped by a
store failure ends up whole, exactly once, wherever it was being written.
"""

from __future__ import annotations

from typing import Any

from harness.store.errors import StoreError, UnknownRunError
from harness.store.journal import journals
from harness.store.store import Store


def sync(source: Store, target: Store | None = None) -> list[dict[str, Any]]:
    """Replay ``source``'s journals, then forward its runs to ``target``; one line per run touched."""
    done: list[dict[str, Any]] = []
    for run_id, path in journals(source.folder):
        try:
            added = source.replay_journal(run_id)
        except UnknownRunError:
            continue  # the journal of a run of another store (a lab database written directly)
        done.append({"run_id": run_id, "action": "journal replayed", "samples": added, "journal": str(path)})
    if target is None:
        return done
    for run in source.runs():
        if run["status"] == "running":
            done.append({"run_id": run["run_id"], "action": "still running: left for the next sync"})
            continue
        try:
            copied = source.copy_run_to(target, run["run_id"])
        except StoreError as exc:
            raise StoreError(f"run {run['run_id']} could not be forwarded ({exc}); the runs before it were; "
                             "run `harness sync` again when the lab database is back") from exc
        if copied is not None:
            done.append({"run_id": run["run_id"], "action": "forwarded", "samples": copied})
    return done
