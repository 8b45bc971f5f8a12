"""What callers hand the store, checked and converted; rows turned back into plain data."""

from __future__ import annotations

import datetime as dt
import hashlib
import itertools
import json
import math
import operator
import sqlite3
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from harness.store.errors import AmbiguousRunError, StoreError, UnknownRunError
from harness.store.process import still_running

QUANTITIES = ("u_rms", "u_mean", "i_rms", "p", "freq")
SAMPLE_COLUMNS = ("id", "step_index", "t", "wall", "channel", *QUANTITIES, "setpoint", "tag")
_SAMPLE_DTYPES: dict[str, Any] = {"id": np.int64, "step_index": np.int64, "channel": np.int64, "tag": object}
INSTRUMENT_FIELDS = ("role", "maker", "model", "serial", "firmware", "resource", "profile", "calibration_due")
READING_STATS = tuple(f"{q}_{s}" for q in QUANTITIES for s in ("mean", "std"))
READING_KEYS = ("count", "stable", "channel", *READING_STATS)
FINAL_STATUSES = ("passed", "failed", "tripped", "aborted", "unsafe")
RUN_JSON_FIELDS = ("simulated", "trip", "record", "results")
_NUMBER = (int, float, np.integer, np.floating)


def real(value: Any, what: str) -> float | None:
    """A measured value: a number or None (the instrument does not give it)."""
    if value is None or type(value) is float:
        return value  # type: ignore[no-any-return]
    if isinstance(value, _NUMBER) and not isinstance(value, (bool, np.bool_)):
        return float(value)
    raise StoreError(f"{what} must be a number or None, got {value!r}")


def bay_time(value: Any) -> float:
    number = real(value, "t (bay seconds)")
    if number is None or not math.isfinite(number):
        raise StoreError(f"t (bay seconds) must be a finite number, got {value!r}")
    return number


def index(value: Any, what: str) -> int:
    if type(value) is int and value >= 0:
        return value
    try:
        number = operator.index(value)
    except TypeError:
        number = -1
    if isinstance(value, (bool, np.bool_)) or number < 0:
        raise StoreError(f"{what} must be a whole number >= 0, got {value!r}")
    return number


def text(value: Any, what: str, *, optional: bool = False) -> str | None:
    if value is None and optional:
        return None
    if not isinstance(value, str):
        raise StoreError(f"{what} must be text, got {value!r}")
    return value


def label(value: Any, what: str) -> str:
    """Text that must say something: a kind, a name, a status."""
    if not isinstance(value, str) or not value.strip():
        raise StoreError(f"{what} must be non-empty text, got {value!r}")
    return value


def sha256(content: str | None) -> str | None:
    return None if content is None else hashlib.sha256(content.encode("utf-8")).hexdigest()


def utc_now() -> str:
    return dt.datetime.now(dt.timezone.utc).isoformat(timespec="milliseconds")


def plain(value: Any) -> Any:
    """JSON-ready data from dicts, lists, numbers, numpy values and pydantic models."""
    if hasattr(value, "model_dump"):
        return plain(value.model_dump(mode="json"))
    if hasattr(value, "to_dict") and not isinstance(value, np.ndarray):
        return plain(value.to_dict())
    if isinstance(value, Mapping):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [plain(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    if value is None or isinstance(value, (str, int, float)):
        return value
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, Path):
        return str(value)
    raise StoreError(f"cannot keep a {type(value).__name__} in the store as JSON: {value!r}")


def to_json(value: Any) -> str | None:
    # NaN and infinity are kept (Python's JSON reads them back): a trip on a not-a-number
    # reading must say so, not turn into null.
    return None if value is None else json.dumps(plain(value), ensure_ascii=False)


def from_json(content: str | None) -> Any:
    return None if content is None else json.loads(content)


def dicts(cursor: sqlite3.Cursor) -> list[dict[str, Any]]:
    names = [d[0] for d in cursor.description]
    return [dict(zip(names, row)) for row in cursor]


def empty_columns(names: tuple[str, ...] = SAMPLE_COLUMNS) -> dict[str, np.ndarray]:
    """The columns of a run without samples, each of its type."""
    return {name: np.empty(0, dtype=_SAMPLE_DTYPES.get(name, float)) for name in names}


def numeric_columns(rows: list[Any], names: tuple[str, ...]) -> dict[str, np.ndarray]:
    """Rows of numeric columns only, as one array per column (NULL -> NaN); called on one chunk
    of rows at a time (see ``Store.sample_chunks``), so a run's rows are never all held at once.

    One float array of the whole chunk (None -> NaN), then a column per name: far cheaper than
    building each column from Python objects. Whole-number columns (NOT NULL in the store) come
    back exact: every id and index is far below 2**53. The values are read flat
    (``np.fromiter``, a quarter faster than ``np.array`` on the rows, which must find their
    shape first); a chunk with a NULL, which ``fromiter`` refuses, takes ``np.array``.
    """
    if not rows:
        return empty_columns(names)
    try:
        block = np.fromiter(itertools.chain.from_iterable(rows), dtype=float, count=len(rows) * len(names))
    except TypeError:
        block = np.array(rows, dtype=float)
    block = block.reshape(len(rows), len(names))
    return {name: (block[:, j].astype(_SAMPLE_DTYPES[name]) if name in _SAMPLE_DTYPES else block[:, j].copy())
            for j, name in enumerate(names)}


def tag_column(count: int, ids: np.ndarray, tagged: list[tuple[int, str]]) -> np.ndarray:
    """The tag column of ``count`` samples with ids ``ids`` (ascending) from the few that carry one."""
    column = np.full(count, None, dtype=object)
    if tagged:
        found = np.array([i for i, _ in tagged], dtype=np.int64)
        column[np.searchsorted(ids, found)] = [tag for _, tag in tagged]
    return column


def sample_column_names(names: Any) -> tuple[str, ...]:
    """The asked-for sample columns, checked (None: all of them)."""
    if names is None:
        return SAMPLE_COLUMNS
    chosen = tuple(names)
    unknown = [n for n in chosen if n not in SAMPLE_COLUMNS]
    if unknown or not chosen:
        raise StoreError(f"unknown sample column(s) {', '.join(map(str, unknown)) or '(none given)'}; "
                         f"known: {', '.join(SAMPLE_COLUMNS)}")
    return chosen


def instrument_row(run_id: str, item: Any) -> tuple[Any, ...]:
    if not isinstance(item, Mapping):
        raise StoreError(f"an instrument must be a mapping of {', '.join(INSTRUMENT_FIELDS)}; got {item!r}")
    unknown = sorted(set(item) - set(INSTRUMENT_FIELDS))
    if unknown:
        raise StoreError(f"unknown instrument field(s) {', '.join(map(str, unknown))}; "
                         f"known: {', '.join(INSTRUMENT_FIELDS)}")
    label(item.get("role"), "instrument role")
    values = [item.get(name) for name in INSTRUMENT_FIELDS]
    return (run_id, *(None if v is None else str(v) for v in values))


def reading_values(stats: Any) -> dict[str, Any]:
    """The columns of a reading from ``stats``: count, stable, optional channel, <quantity>_mean/_std."""
    if not isinstance(stats, Mapping):
        raise StoreError(f"reading stats must be a mapping, got {stats!r}")
    unknown = sorted(set(stats) - set(READING_KEYS))
    if unknown:
        raise StoreError(f"unknown reading stat(s) {', '.join(map(str, unknown))}; known: {', '.join(READING_KEYS)}")
    count = index(stats.get("count"), "reading count")
    stable = stats.get("stable")
    if count < 1 or not isinstance(stable, (bool, np.bool_)):
        raise StoreError(f"a reading needs count >= 1 and stable true/false, got {stats.get('count')!r}, {stable!r}")
    channel = stats.get("channel")
    values = {name: real(stats.get(name), f"reading {name}") for name in READING_STATS}
    return {"count": count, "stable": int(bool(stable)),
            "channel": None if channel is None else index(channel, "reading channel"), **values}


# -- stored rows as callers see them (the store and the report's reader, see reader.py)

def run_key(run_id_or_prefix: Any) -> str:
    key = run_id_or_prefix.strip() if isinstance(run_id_or_prefix, str) else ""
    if not key:
        raise UnknownRunError(f"give a run id (see `harness runs`), not {run_id_or_prefix!r}")
    return key


def chosen_run(key: str, found: list[str], where: Any) -> str:
    """The one run that ``key`` names among ``found`` (up to six ids beginning with it, in order)."""
    if key in found or len(found) == 1:
        return key if key in found else found[0]
    if not found:
        raise UnknownRunError(f"no run '{key}' in {where}; `harness runs` lists the stored runs")
    shown = ", ".join(found[:5]) + (", ..." if len(found) > 5 else "")
    raise AmbiguousRunError(f"'{key}' matches several runs ({shown}); give more of the run id")


def visible_status(run: dict[str, Any]) -> dict[str, Any]:
    """'running' only while the run's process lives; otherwise the run is 'incomplete'."""
    if run["status"] == "running" and not still_running(run["pid"], run["host"], run["process_token"]):
        return {**run, "status": "incomplete"}
    return run


def run_row(run: dict[str, Any]) -> dict[str, Any]:
    """A row of ``runs`` with its visible status and its JSON fields parsed."""
    found = visible_status(run)
    return {**found, **{name: from_json(found[name]) for name in RUN_JSON_FIELDS}}


def event_row(event: dict[str, Any]) -> dict[str, Any]:
    return {**event, "data": from_json(event["data"])}


def reading_row(reading: dict[str, Any]) -> dict[str, Any]:
    return {**{k: v for k, v in reading.items() if k != "run_id"}, "stable": bool(reading["stable"])}


def approval_summary(results: str | None, found: bool, approvals: list[dict[str, Any]]) -> dict[str, Any]:
    """``results_sha256``: the hash of the run's stored results (None without); ``rows``: its
    approvals, each with ``results_match``, whether the hash approved is still the one stored."""
    current = sha256(results or "") if found else None
    return {"results_sha256": current if found and results else None,
            "rows": [{**r, "results_match": r["results_sha256"] == current} for r in approvals]}
