"""The simulated bay on loopback sockets: one port per instrument, SCPI raw-socket style.

Messages end with a newline; each reply ends with one. Connections are served one thread each,
so several in sequence (or at once) are fine. pyvisa-py reaches an instrument as
``TCPIP0::127.0.0.1::PORT::SOCKET`` with ``read_termination="\\n"`` and
``write_termination="\\n"``.
"""

from __future__ import annotations

import socket
import sys
import threading
import time
from typing import Iterable, TextIO

from harness.common.clock import Clock
from harness.sim.bay import Bay
from harness.sim.devices import DEVICE_FACTORIES, Device
from harness.sim.faults import FaultSpec
from harness.sim.scenario import Scenario

ROLES = tuple(DEVICE_FACTORIES)
HOST = "127.0.0.1"
MAX_MESSAGE = 64 * 1024
GARBAGE = "#\x15?E+\x7f3.1;@@\x02"


def _ack_now(conn: socket.socket) -> None:
    """Acknowledge at once: a client that writes twice without reading (Nagle on its side)
    would otherwise wait for the delayed acknowledgement, tens of real milliseconds."""
    if hasattr(socket, "TCP_QUICKACK"):
        try:
            conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_QUICKACK, 1)
        except OSError:
            pass


def resource_string(port: int) -> str:
    return f"TCPIP0::{HOST}::{port}::SOCKET"


class _Listener:
    """One instrument's port: accepts connections, a thread for each."""

    def __init__(self, device: Device, bay: Bay, stopping: threading.Event, reply_delay: float = 0.0):
        self.device = device
        self.bay = bay
        self.stopping = stopping
        self.reply_delay = reply_delay
        self.sock = socket.create_server((HOST, 0))
        self.sock.settimeout(0.2)
        self.port = self.sock.getsockname()[1]
        self.connections: set[socket.socket] = set()
        self.lock = threading.Lock()
        self.thread = threading.Thread(target=self._accept, name=f"sim-{device.role}", daemon=True)

    def _accept(self) -> None:
        while not self.stopping.is_set():
            try:
                conn, _ = self.sock.accept()
            except (socket.timeout, OSError):
                continue
            conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
            _ack_now(conn)
            with self.lock:
                self.connections.add(conn)
            threading.Thread(target=self._serve, args=(conn,), daemon=True,
                             name=f"sim-{self.device.role}-conn").start()

    def _serve(self, conn: socket.socket) -> None:
        buffer = b""
        try:
            while not self.stopping.is_set():
                chunk = conn.recv(65536)
                if not chunk:
                    return
                _ack_now(conn)
                buffer += chunk
                *lines, buffer = buffer.split(b"\n")
                for line in lines:
                    if not self._answer(conn, line.decode("ascii", "replace").strip("\r")):
                        return
                if len(buffer) > MAX_MESSAGE:
                    buffer = b""
        except OSError:
            return
        finally:
            self._close(conn)

    def _answer(self, conn: socket.socket, message: str) -> bool:
        """Handle one message; False when the connection is to be dropped."""
        if not message.strip():
            return True
        action = self.bay.link_action(self.device.role, "?" in message)
        if action == "drop":
            return False
        if action == "silent":
            return True
        with self.bay.lock:
            reply = self.device.handle(message)
        if reply is not None:
            if self.reply_delay:
                _wait(self.reply_delay)
            conn.sendall(((GARBAGE if action == "garbage" else reply) + "\n").encode("ascii", "replace"))
        return True

    def _close(self, conn: socket.socket) -> None:
        with self.lock:
            self.connections.discard(conn)
        try:
            conn.shutdown(socket.SHUT_RDWR)
        except OSError:
            pass
        conn.close()

    def stop(self) -> None:
        self.sock.close()
        with self.lock:
            open_now = list(self.connections)
        for conn in open_now:
            self._close(conn)


def _wait(seconds: float) -> None:
    """An instrument's own time to answer, in real seconds: slept, then the last fraction of a
    millisecond spun (a sleep overruns by tens of microseconds, which would blur a short delay)."""
    until = time.perf_counter() + seconds
    if seconds > 0.001:
        time.sleep(seconds - 0.0005)
    while time.perf_counter() < until:
        pass


class SimServer:
    """Serve a bay's instruments, one port per role; ``start()`` returns role -> resource string.
    ``reply_delay``: real seconds each instrument takes to answer a query (none by default; a
    benchmark uses it to stand for a real instrument's answering time)."""

    def __init__(self, bay: Bay, reply_delay: float = 0.0):
        if not 0.0 <= reply_delay <= 1.0:
            raise ValueError("the reply delay is between 0 and 1 s")
        self.bay = bay
        self.reply_delay = reply_delay
        self._stopping = threading.Event()
        self._listeners: dict[str, _Listener] = {}

    def start(self) -> dict[str, str]:
        if not self._listeners:
            self._stopping.clear()
            for role, factory in DEVICE_FACTORIES.items():
                listener = _Listener(factory(self.bay), self.bay, self._stopping, self.reply_delay)
                self._listeners[role] = listener
                listener.thread.start()
        return self.resources()

    def resources(self) -> dict[str, str]:
        return {role: resource_string(lst.port) for role, lst in self._listeners.items()}

    def stop(self) -> None:
        self._stopping.set()
        for listener in self._listeners.values():
            listener.stop()
        for listener in self._listeners.values():
            listener.thread.join(timeout=2.0)
        self._listeners.clear()

    def __enter__(self) -> "SimServer":
        self.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.stop()


def serve_forever(scenario: Scenario, time_scale: float = 1.0, faults: Iterable[str | FaultSpec] = (),
                  out: TextIO = sys.stdout, stop: threading.Event | None = None, reply_delay: float = 0.0) -> None:
    """Serve until interrupted (or ``stop`` is set); prints ``role resource`` lines first."""
    bay = Bay(scenario, Clock(time_scale), faults)
    stop = stop or threading.Event()
    with SimServer(bay, reply_delay) as server:
        for role, resource in server.resources().items():
            print(f"{role} {resource}", file=out, flush=True)
        try:
            while not stop.wait(0.5):
                pass
        except KeyboardInterrupt:
            pass
