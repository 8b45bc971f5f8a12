"""The data folder, run ids and run folders.

The data folder holds the database and one folder per run: ``./runs`` by default, or the
folder that ``HARNESS_DATA`` names. Every command finds it through :func:`data_dir`.
"""

from __future__ import annotations

import os
import re
import secrets
import time
from pathlib import Path

from harness.store.errors import StoreError

DATA_ENV = "HARNESS_DATA"
DEFAULT_DATA = "runs"
DATABASE_NAME = "harness.sqlite"
# UTC time to the second, then 16 random bits: ids sort by start time and two bays
# starting in the same second still get different ids.
_RUN_ID = re.compile(r"\d{8}-\d{6}-[0-9a-f]{4}")


def ensure_folder(folder: Path) -> Path:
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"cannot create the folder {folder}: {exc.strerror or exc}") from exc
    return folder


def data_dir() -> Path:
    """The data folder (``HARNESS_DATA``, else ``./runs``), created on first use."""
    named = os.environ.get(DATA_ENV, "").strip()
    return ensure_folder(Path(named or DEFAULT_DATA).expanduser().absolute())


def new_run_id(now: float | None = None) -> str:
    stamp = time.strftime("%Y%m%d-%H%M%S", time.gmtime(now))
    return f"{stamp}-{secrets.token_hex(2)}"


def check_run_id(run_id: object) -> str:
    if not isinstance(run_id, str) or not _RUN_ID.fullmatch(run_id):
        raise StoreError(f"'{run_id}' is not a run id (a run id looks like 20261202-031500-ab12)")
    return run_id


def run_folder(run_id: str, folder: Path | None = None) -> Path:
    """``<data>/<run_id>/`` (reports, exports), created on first use."""
    return ensure_folder((folder if folder is not None else data_dir()) / check_run_id(run_id))
