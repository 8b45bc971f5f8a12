"""Is the process that began a run still alive?

A run row says 'running' until the runner finishes it; a runner killed outright (SIGKILL,
power cut, crash) never does. The row records the pid, the host and, on Linux, a token of
boot id and process start time, so that a pid the kernel has since given to another
process is not taken for the runner.
"""

from __future__ import annotations

import os
import socket
from pathlib import Path

_BOOT_ID = Path("/proc/sys/kernel/random/boot_id")
_STILL_ACTIVE = 259  # Windows exit code of a live process
_ERROR_ACCESS_DENIED = 5


STATION_ENV = "HARNESS_STATION_ID"


def host_name() -> str:
    return socket.gethostname()


def station_id() -> str:
    """The station's identity on its runs: ``HARNESS_STATION_ID``, else the computer's host name."""
    return os.environ.get(STATION_ENV, "").strip() or host_name()


def _proc_stat(pid: int) -> list[str] | None:
    """Fields of /proc/<pid>/stat after the command name (state first), or None."""
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    fields = text.rpartition(")")[2].split()
    return fields if len(fields) > 19 else None


def process_token(pid: int) -> str | None:
    """Boot id and start time of ``pid`` (Linux); None where /proc is not available."""
    fields = _proc_stat(pid)
    try:
        boot = _BOOT_ID.read_text().strip()
    except OSError:
        return None
    return f"{boot}:{fields[19]}" if fields else None


def _windows_pid_alive(pid: int) -> bool:
    import ctypes

    kernel32 = ctypes.windll.kernel32  # type: ignore[attr-defined]
    handle = kernel32.OpenProcess(0x1000, False, pid)  # PROCESS_QUERY_LIMITED_INFORMATION
    if not handle:
        return bool(ctypes.GetLastError() == _ERROR_ACCESS_DENIED)  # type: ignore[attr-defined]
    try:
        code = ctypes.c_ulong()
        return bool(kernel32.GetExitCodeProcess(handle, ctypes.byref(code))) and code.value == _STILL_ACTIVE
    finally:
        kernel32.CloseHandle(handle)


def pid_alive(pid: int) -> bool:
    # On Windows os.kill(pid, 0) would terminate the process, hence the separate path.
    if os.name == "nt":
        return _windows_pid_alive(pid)
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    fields = _proc_stat(pid)
    return fields is None or fields[0] not in ("Z", "X")  # a killed, unreaped process is a zombie


def still_running(pid: int | None, host: str | None, token: str | None) -> bool:
    """True unless the run's process is known to be gone."""
    if pid is None:
        return False
    if host != host_name():
        return True  # another computer's processes cannot be seen from here
    if not pid_alive(pid):
        return False
    current = process_token(pid) if token else None
    return current is None or current == token
