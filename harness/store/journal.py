"""The journal: where a run's writes go when the store cannot take them.

One JSON object per line (``{"op": "sample", ...}``), flushed and synced line by line, so a
journal cut short by a crash still holds every line before the cut. It lies beside the
database (``<data>/harness-journal-<run_id>.jsonl``) or, when the data folder cannot take it
either (a full disk, say), in the system's temp folder under the same name. ``harness runs``
and ``harness report`` look in both places.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any

SAMPLE_FIELDS = ("run_id", "id", "step_index", "t", "wall", "channel", "u_rms", "u_mean", "i_rms", "p",
                 "freq", "setpoint", "tag")


def journal_name(run_id: str) -> str:
    return f"harness-journal-{run_id}.jsonl"


def find_journal(run_id: str, data_folder: Path) -> Path | None:
    """The run's journal, if one was written (data folder first, then the temp folder)."""
    for folder in (data_folder, Path(tempfile.gettempdir())):
        path = folder / journal_name(run_id)
        if path.is_file():
            return path
    return None


def mark_replayed(path: Path) -> Path:
    """Set a journal aside once the store holds what it held (``harness sync``): kept, not found."""
    done = path.with_name(path.name + ".replayed")
    path.replace(done)
    return done


def journals(data_folder: Path) -> list[tuple[str, Path]]:
    """(run id, path) of every journal not yet replayed, in the data folder and the temp folder."""
    found = {}
    for folder in (Path(tempfile.gettempdir()), data_folder):
        for path in sorted(folder.glob(journal_name("*"))):
            found[path.name[len(journal_name("")) - len(".jsonl"):-len(".jsonl")]] = path
    return sorted(found.items())


def read_journal(path: Path) -> list[dict[str, Any]]:
    """The journal's entries; a last line cut short by a crash is left out."""
    entries = []
    for line in path.read_text(encoding="utf-8", errors="replace").splitlines():
        try:
            entries.append(json.loads(line))
        except json.JSONDecodeError:
            continue
    return entries


class Journal:
    """Appends entries to the run's journal file, opened on the first entry."""

    def __init__(self, run_id: str, data_folder: Path):
        self.run_id = run_id
        self._folders: tuple[Path, ...] = (data_folder, Path(tempfile.gettempdir()))
        self._file: Any = None
        self.path: Path | None = None
        self.errors: list[str] = []

    def write(self, entries: list[dict[str, Any]]) -> bool:
        """Append the entries; False when no folder could take them (the reasons are in ``errors``)."""
        text = "".join(json.dumps(_plain(e), allow_nan=False, default=str) + "\n" for e in entries)
        while True:
            if self._file is None and not self._open():
                return False
            try:
                self._file.write(text)
                self._file.flush()
                os.fsync(self._file.fileno())
                return True
            except OSError as exc:
                self.errors.append(f"{self.path}: {exc.strerror or exc}")
                self._close()
                self._folders = self._folders[1:]  # this folder failed mid-way: the next one takes all again
                text = self._rewrite_all(text)

    def close(self) -> None:
        self._close()

    def _open(self) -> bool:
        while self._folders:
            path = self._folders[0] / journal_name(self.run_id)
            try:
                self._file = open(path, "a", encoding="utf-8")  # noqa: SIM115 - kept open for the run
                self.path = path
                return True
            except OSError as exc:
                self.errors.append(f"{path}: {exc.strerror or exc}")
                self._folders = self._folders[1:]
        return False

    def _close(self) -> None:
        if self._file is not None:
            try:
                self._file.close()
            except OSError:
                pass
            self._file = None

    def _rewrite_all(self, text: str) -> str:
        """What the failed file held, plus the new text: the next folder's file gets everything."""
        if self.path is not None and self.path.is_file():
            try:
                return self.path.read_text(encoding="utf-8") + text
            except OSError:
                pass
        return text


def _plain(value: Any) -> Any:
    """JSON has no not-a-number: it is written as null, as the store keeps it."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    return value
