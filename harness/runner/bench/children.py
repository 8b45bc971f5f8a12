"""Whole child processes timed from outside: wall seconds, CPU seconds and peak memory of each."""

from __future__ import annotations

import os
import subprocess
import time
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class ChildCost:
    wall_s: float
    cpu_s: float
    peak_rss_mb: float  # the child's largest resident set (Linux reports it in KiB)


def run_child(argv: list[str], env: dict[str, str] | None = None, **popen: Any) -> ChildCost:
    """Run ``argv`` to its end; its own resource use, from the operating system's accounting."""
    start = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env or os.environ.copy(),
                            **popen)
    assert proc.stderr is not None
    errors = proc.stderr.read()
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - start
    proc.returncode = os.waitstatus_to_exitcode(status)
    proc.stderr.close()
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(argv[1:])} exited {proc.returncode}: {errors.decode(errors='replace')[-400:]}")
    return ChildCost(wall, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024)
