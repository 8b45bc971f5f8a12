"""Fixtures for the driver tests: fresh pyvisa-sim libraries and a tiny loopback socket server."""

from __future__ import annotations

import shutil
import socket
import threading
from pathlib import Path
from typing import Callable, Iterator

import pytest
import pyvisa

SIM_DIR = Path(__file__).resolve().parents[2] / "sim_configs" / "pyvisa_sim"


@pytest.fixture
def sim_rm(tmp_path: Path) -> Iterator[Callable[[str], pyvisa.ResourceManager]]:
    """``sim_rm("generic-ac-source")``: a ResourceManager on a private copy of that definition.

    pyvisa-sim caches device state per file path for the whole process, so each test gets its
    own copy and therefore a fresh instrument.
    """
    managers: list[pyvisa.ResourceManager] = []

    def make(stem: str) -> pyvisa.ResourceManager:
        copy = tmp_path / f"{stem}.yaml"
        shutil.copy(SIM_DIR / f"{stem}.yaml", copy)
        rm = pyvisa.ResourceManager(f"{copy}@sim")
        managers.append(rm)
        return rm

    yield make
    for rm in managers:
        rm.close()


class LineServer:
    """One-port TCP server on loopback; ``behaviour(conn, line)`` handles each received line.

    ``behaviour`` gets the connection number (0 for the first client) and may return bytes to
    send, None to stay silent, or the string "close" to close the connection.
    """

    def __init__(self, behaviour: Callable[[int, bytes], bytes | str | None]):
        self.behaviour = behaviour
        self.sock = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen()
        self.sock.settimeout(0.05)
        self.port = self.sock.getsockname()[1]
        self.connections: list[socket.socket] = []
        self.received: list[tuple[int, bytes]] = []
        self.closed = threading.Event()   # set once the server has closed a connection
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._accept, daemon=True)
        self._thread.start()

    @property
    def resource(self) -> str:
        return f"TCPIP0::127.0.0.1::{self.port}::SOCKET"

    def _accept(self) -> None:
        while not self._stop.is_set():
            try:
                conn, _ = self.sock.accept()
            except OSError:
                continue
            index = len(self.connections)
            self.connections.append(conn)
            threading.Thread(target=self._serve, args=(index, conn), daemon=True).start()

    def _serve(self, index: int, conn: socket.socket) -> None:
        buffer = b""
        with conn:
            while not self._stop.is_set():
                try:
                    data = conn.recv(4096)
                except OSError:
                    return
                if not data:
                    return
                buffer += data
                while b"\n" in buffer:
                    line, buffer = buffer.split(b"\n", 1)
                    self.received.append((index, line))
                    answer = self.behaviour(index, line)
                    if answer == "close":
                        conn.shutdown(socket.SHUT_RDWR)
                        self.closed.set()
                        return
                    if isinstance(answer, bytes):
                        conn.sendall(answer)

    def stop(self) -> None:
        self._stop.set()
        self.sock.close()
        for conn in self.connections:
            try:
                conn.close()
            except OSError:
                pass
        self._thread.join(timeout=1)


@pytest.fixture
def line_server() -> Iterator[Callable[[Callable[[int, bytes], bytes | str | None]], LineServer]]:
    servers: list[LineServer] = []

    def make(behaviour: Callable[[int, bytes], bytes | str | None]) -> LineServer:
        server = LineServer(behaviour)
        servers.append(server)
        return server

    yield make
    for server in servers:
        server.stop()


@pytest.fixture
def free_port() -> int:
    """A loopback port with nothing listening (bound, then released)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]
