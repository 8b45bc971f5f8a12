"""Every lower-level failure becomes one InstrumentError, with the instrument's name and command.

The socket paths run against a real loopback server (pyvisa-py on TCPIP SOCKET resources), so
they show what pyvisa-py actually raises: a refused connection on the first query, a peer that
closed the connection (pyvisa-py itself only times out), a late reply after a timeout, a broken
pipe on writing, bytes that are not text. The remaining VISA codes are shown with a stub
resource that raises them.
"""

from __future__ import annotations

import contextlib
import socket
import time
import warnings
from typing import Iterator

import pytest
from pyvisa import constants
from pyvisa.errors import InvalidSession, VisaIOError

from drivers import (ConnectionLost, FakeTransport, InstrumentError, InstrumentTimeout, PowerAnalyser,
                     ProtocolError, PyvisaTransport)
from drivers.transport import map_visa_error

SC = constants.StatusCode
GUARD_S = 5.0   # real seconds; only a stuck link or server reaches it

# The mapping table (README of drivers/): exception -> InstrumentError subclass.
MAPPING = [
    (VisaIOError(SC.error_timeout), InstrumentTimeout),
    (VisaIOError(SC.error_connection_lost), ConnectionLost),
    (VisaIOError(SC.error_io), ConnectionLost),
    (VisaIOError(SC.error_resource_not_found), ConnectionLost),
    (VisaIOError(SC.error_invalid_object), ConnectionLost),
    (VisaIOError(SC.error_resource_busy), ConnectionLost),
    (VisaIOError(SC.error_no_listeners), ConnectionLost),
    (VisaIOError(SC.error_system_error), ConnectionLost),
    (VisaIOError(SC.error_invalid_format), ProtocolError),
    (VisaIOError(SC.error_nonsupported_operation), ProtocolError),
    (ConnectionRefusedError(111, "Connection refused"), ConnectionLost),
    (BrokenPipeError(32, "Broken pipe"), ConnectionLost),
    (ConnectionResetError(104, "Connection reset by peer"), ConnectionLost),
    (ConnectionAbortedError(103, "Software caused connection abort"), ConnectionLost),
    (socket.timeout("timed out"), InstrumentTimeout),
    (OSError(113, "No route to host"), ConnectionLost),
    (UnicodeDecodeError("ascii", b"\xff", 0, 1, "ordinal not in range"), ProtocolError),
    (InvalidSession(), ConnectionLost),
]


@pytest.mark.parametrize("exc, expected", MAPPING, ids=lambda v: type(v).__name__ if isinstance(v, BaseException) else v.__name__)
def test_each_failure_maps_to_its_instrument_error(exc: BaseException, expected: type) -> None:
    error = map_visa_error(exc, "analyser", "MEAS:VOLT:AC?")
    assert type(error) is expected
    assert error.instrument == "analyser" and error.command == "MEAS:VOLT:AC?"
    assert "analyser after 'MEAS:VOLT:AC?'" in str(error)


class _StubResource:
    """Stands in for a pyvisa resource whose VISA library raises ``exc`` on every write and read
    (the transport talks through the library's calls on the resource's session)."""

    session = 7

    def __init__(self, exc: BaseException):
        self.exc = exc
        self.closed = False
        self.visalib = self
        self.ignoring: set[object] = set()

    def write(self, session: int, data: bytes) -> int:
        assert session == self.session and data.endswith(b"\n")
        raise self.exc

    def read(self, session: int, count: int) -> tuple[bytes, object]:
        assert session == self.session
        raise self.exc

    @contextlib.contextmanager
    def ignore_warning(self, session: int, *codes: object) -> Iterator[None]:
        self.ignoring.update(codes)
        yield
        self.ignoring.difference_update(codes)

    def close(self) -> None:
        self.closed = True


class _StubManager:
    def __init__(self, exc: BaseException, fail_open: bool = False):
        self.exc = exc
        self.fail_open = fail_open
        self.opened: list[_StubResource] = []

    def open_resource(self, resource: str, **kwargs: object) -> _StubResource:
        if self.fail_open:
            raise self.exc
        assert kwargs["read_termination"] == "\n" and kwargs["write_termination"] == "\n"
        self.opened.append(_StubResource(self.exc))
        return self.opened[-1]


@pytest.mark.parametrize("exc, expected", MAPPING, ids=lambda v: type(v).__name__ if isinstance(v, BaseException) else v.__name__)
@pytest.mark.parametrize("operation", ["query", "write", "read"])
def test_pyvisa_transport_maps_every_operation(exc: BaseException, expected: type, operation: str) -> None:
    rm = _StubManager(exc)
    transport = PyvisaTransport("TCPIP0::10.0.0.9::5025::SOCKET", rm=rm, name="source")
    with pytest.raises(expected) as info:
        if operation == "read":
            transport.read()
        else:
            getattr(transport, operation)("SOUR:VOLT 10")
    assert info.value.instrument == "source"
    assert info.value.command == (None if operation == "read" else "SOUR:VOLT 10")
    assert isinstance(info.value.__cause__, type(exc))
    assert rm.opened[0].closed  # the failed session is dropped, never reused
    assert not rm.opened[0].ignoring  # and the warnings ignored on it are back as they were
    transport.close()


@pytest.mark.parametrize("exc", [VisaIOError(SC.error_resource_not_found), OSError(99, "Cannot assign"),
                                 ValueError("bad resource name")])
def test_open_failure_is_connection_lost(exc: BaseException) -> None:
    with pytest.raises(ConnectionLost, match="cannot open|not a VISA resource name") as info:
        PyvisaTransport("TCPIP0::10.0.0.9::5025::SOCKET", rm=_StubManager(exc, fail_open=True), name="meter")
    assert info.value.instrument == "meter"


def test_mistyped_simulated_resource_is_refused_at_open(sim_rm) -> None:
    with pytest.raises(ConnectionLost, match="has no 'TCPIP0::sim-thermometr::5025::SOCKET'.*sim-thermometer"):
        PyvisaTransport("TCPIP0::sim-thermometr::5025::SOCKET", rm=sim_rm("generic-thermometer"), name="t")


def test_simulated_resource_in_another_spelling_is_accepted(sim_rm) -> None:
    transport = PyvisaTransport("TCPIP::sim-thermometer::5025::SOCKET", rm=sim_rm("generic-thermometer"), name="t")
    try:
        assert transport.query("*OPC?") == "1"
    finally:
        transport.close()


def test_invalid_resource_name_with_pyvisa_py() -> None:
    with pytest.raises(ConnectionLost, match="cannot open|not a VISA resource name"):
        PyvisaTransport("no such thing", name="thermometer")


# --- real loopback sockets -------------------------------------------------------------------


def test_nothing_listening_is_connection_lost_on_first_query(free_port: int) -> None:
    # pyvisa-py opens the resource without complaint; the failure comes with the first query.
    transport = PyvisaTransport(f"TCPIP0::127.0.0.1::{free_port}::SOCKET", timeout_s=GUARD_S, name="source")
    try:
        with pytest.raises(ConnectionLost, match="refused") as info:
            transport.query("*IDN?")
        assert info.value.instrument == "source" and info.value.command == "*IDN?"
    finally:
        transport.close()


def test_peer_closed_connection_is_connection_lost_not_timeout(line_server) -> None:
    server = line_server(lambda conn, line: "close")
    transport = PyvisaTransport(server.resource, timeout_s=0.3, name="analyser")
    try:
        transport.write("*IDN?")
        assert server.closed.wait(GUARD_S)   # closed before the read begins: no race with the timeout
        with pytest.raises(ConnectionLost, match="closed the connection"):
            transport.read()
    finally:
        transport.close()


def test_late_reply_never_answers_the_next_query(line_server) -> None:
    def behaviour(conn: int, line: bytes) -> bytes | None:
        if conn == 0:
            return None   # no reply in time
        # The first connection answers late: after the client has given up (it reconnects only
        # then) and before the next query's reply.
        _send_quietly(server.connections[0], b"LATE\n")
        return b"FRESH " + line + b"\n"

    server = line_server(behaviour)
    transport = PyvisaTransport(server.resource, timeout_s=0.2, name="source")
    try:
        with pytest.raises(InstrumentTimeout) as info:
            transport.query("SOUR:VOLT?")
        assert info.value.command == "SOUR:VOLT?" and info.value.instrument == "source"
        assert transport.query("SOUR:FREQ?") == "FRESH SOUR:FREQ?"
    finally:
        transport.close()


def _send_quietly(conn: socket.socket, data: bytes) -> None:
    try:
        conn.sendall(data)
    except OSError:
        pass  # the client has already closed this connection, which is the point


def test_write_on_a_dead_socket_is_connection_lost(line_server) -> None:
    server = line_server(lambda conn, line: "close" if conn == 0 else None)
    transport = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="source")
    try:
        transport.write("*CLS")  # the server closes on receiving it
        assert server.closed.wait(GUARD_S)
        # The first send after a close may still be accepted by the kernel; the peer's reset
        # then fails a later one. Real time bounds the loop only against a stuck link.
        deadline = time.monotonic() + GUARD_S
        with pytest.raises(ConnectionLost) as info:
            while time.monotonic() < deadline:
                transport.write("OUTP:STAT OFF")
        assert info.value.command == "OUTP:STAT OFF"
    finally:
        transport.close()


def test_bytes_that_are_not_text_are_a_protocol_error(line_server) -> None:
    server = line_server(lambda conn, line: b"\xff\xfe230\n" if conn == 0 else b"230.0\n")
    transport = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="analyser")
    try:
        with pytest.raises(ProtocolError, match="not text"):
            transport.query("MEAS:VOLT:AC?")
        assert transport.query("MEAS:VOLT:AC?") == "230.0"  # reopened: a clean session
    finally:
        transport.close()


def test_instrument_over_socket_round_trip_and_garbled_snapshot(line_server) -> None:
    replies = iter([b"230.1;229.5;0.512;38.7;50.0\n", b"230.1;#garbage;0.512;38.7;50.0\n"])
    server = line_server(lambda conn, line: next(replies))
    analyser = PowerAnalyser(PyvisaTransport(server.resource, timeout_s=GUARD_S), "analyser")
    try:
        assert analyser.snapshot().channels[0].p == 38.7
        with pytest.raises(ProtocolError, match="garbage") as info:
            analyser.snapshot()
        assert info.value.instrument == "analyser"
        assert server.received[0][1].decode() == analyser.snapshot_command
    finally:
        analyser.close()


def test_reply_longer_than_one_chunk_is_read_whole_without_warnings(line_server, monkeypatch) -> None:
    # The library fills one chunk and says so (a "success" code that pyvisa warns about unless
    # told to ignore it); the transport reads on until the newline, and nothing is warned.
    reply = ";".join(f"{k}.{k:03d}E+00" for k in range(40))
    server = line_server(lambda conn, line: reply.encode() + b"\n")
    monkeypatch.setattr("drivers.transport.CHUNK_BYTES", 16)
    transport = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="analyser")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            assert transport.query("MEAS?") == reply
            assert transport.query("MEAS?") == reply  # the next reply starts clean
    finally:
        transport.close()


def test_the_visa_resource_is_the_sessions_own_and_shares_its_connection(line_server) -> None:
    """Plain pyvisa on the transport's resource (the overhead benchmark's raw side) goes over the
    same connection as the transport: one connection at the server, replies in turn."""
    server = line_server(lambda conn, line: line + b"\n")
    transport = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="analyser")
    try:
        raw = transport.visa_resource
        assert raw.query("A?") == "A?" and transport.query("B?") == "B?" and raw.query("C?") == "C?"
        assert len(server.received) == 3 and len({connection for connection, _ in server.received}) == 1
    finally:
        transport.close()
    assert transport.visa_resource is None


def test_closed_transport_refuses_work(line_server) -> None:
    server = line_server(lambda conn, line: b"1\n")
    transport = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="source")
    transport.close()
    with pytest.raises(ConnectionLost, match="closed"):
        transport.query("*OPC?")


def test_closing_one_transport_leaves_the_others_open(line_server) -> None:
    server = line_server(lambda conn, line: b"1\n")
    first = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="source")
    second = PyvisaTransport(server.resource, timeout_s=GUARD_S, name="analyser")
    try:
        first.close()
        assert second.query("*OPC?") == "1"
    finally:
        second.close()


def test_timeout_must_be_positive() -> None:
    with pytest.raises(ValueError, match="positive"):
        PyvisaTransport("TCPIP0::127.0.0.1::5025::SOCKET", rm=_StubManager(OSError()), timeout_s=0)


# --- the function fake -----------------------------------------------------------------------


def test_fake_transport_answers_records_and_times_out() -> None:
    fake = FakeTransport(lambda cmd: "1" if cmd == "*OPC?" else None, name="fake source")
    assert fake.query("*OPC?") == "1"
    fake.write("*CLS")
    with pytest.raises(InstrumentTimeout) as info:
        fake.query("SOUR:VOLT?")
    assert info.value.command == "SOUR:VOLT?" and info.value.instrument == "fake source"
    assert fake.sent == ["*OPC?", "*CLS", "SOUR:VOLT?"]


def test_fake_transport_maps_oserror_and_passes_instrument_errors() -> None:
    def handler(cmd: str) -> str:
        if cmd == "A?":
            raise BrokenPipeError(32, "Broken pipe")
        raise ProtocolError("bad", "x", cmd)

    fake = FakeTransport(handler)
    with pytest.raises(ConnectionLost):
        fake.query("A?")
    with pytest.raises(ProtocolError):
        fake.query("B?")
    fake.close()
    with pytest.raises(ConnectionLost):
        fake.write("C")


def test_every_error_is_one_family() -> None:
    for _, expected in MAPPING:
        assert issubclass(expected, InstrumentError)
