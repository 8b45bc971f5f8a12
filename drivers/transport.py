"""The small transport the instruments talk through: ``write``, ``read``, ``query``, ``close``.

:class:`PyvisaTransport` speaks to a VISA resource (a LAN instrument on a raw socket, GPIB, USB,
or a pyvisa-sim device); :class:`FakeTransport` answers from a function, for unit tests.

Every lower-level failure leaves a transport as one of the :class:`InstrumentError` family,
with the instrument's name and the command. pyvisa-py on a raw socket needs care:

- ``open_resource`` succeeds when nothing listens; the first I/O raises
  ``ConnectionRefusedError``.
- A peer that closed the connection is not reported: the read waits for data until the timeout.
  After a timeout the socket is probed, and a closed one is reported as a lost connection.
- After a timeout, a late reply would answer the *next* query. The session is therefore dropped
  and reopened before the next command, so a late reply can never be taken for a fresh one.

Messages go through the VISA library's own ``write`` and ``read`` on the resource's session (the
calls a resource's ``query`` makes), without the resource's per-call layers: a query on the
reading loop's path then costs about 12 us less on a loopback socket (``harness bench overhead``).
What those layers did is done here: the newline appended and stripped, ASCII both ways, and a
reply longer than one chunk read on while the library says the chunk was filled. The two
"success" codes a resource's read ignores (chunk filled, no listener) are ignored on the session
while it is open, so that they never surface as warnings.
"""

from __future__ import annotations

import socket
from collections import deque
from typing import Any, Callable, Protocol

import pyvisa
from pyvisa import constants, rname
from pyvisa.errors import InvalidSession, VisaIOError

from drivers.errors import ConnectionLost, InstrumentError, InstrumentTimeout, ProtocolError

# VISA status codes that mean the link itself is gone (VPP-4.3 completion and error codes).
_LINK_CODES = frozenset({
    constants.StatusCode.error_connection_lost,
    constants.StatusCode.error_io,
    constants.StatusCode.error_invalid_object,
    constants.StatusCode.error_closing_failed,
    constants.StatusCode.error_resource_not_found,
    constants.StatusCode.error_resource_busy,
    constants.StatusCode.error_resource_locked,
    constants.StatusCode.error_no_listeners,
    constants.StatusCode.error_not_cic,
    constants.StatusCode.error_system_error,
})


class Transport(Protocol):
    """What an instrument needs of its link. ``name`` labels the errors it raises."""

    name: str

    def write(self, command: str) -> None: ...

    def read(self) -> str: ...

    def query(self, command: str) -> str: ...

    def close(self) -> None: ...


def map_visa_error(exc: BaseException, name: str, command: str | None) -> InstrumentError:
    """The :class:`InstrumentError` for a pyvisa or socket failure (see the table in the README)."""
    if isinstance(exc, VisaIOError):
        return _from_visa_code(exc, name, command)
    if isinstance(exc, ConnectionRefusedError):
        return ConnectionLost("connection refused: nothing listens at the resource", name, command)
    if isinstance(exc, (BrokenPipeError, ConnectionResetError, ConnectionAbortedError)):
        return ConnectionLost(f"the connection broke ({exc.__class__.__name__})", name, command)
    if isinstance(exc, socket.timeout):
        return InstrumentTimeout("no reply within the timeout (socket)", name, command)
    if isinstance(exc, OSError):
        return ConnectionLost(f"link error: {exc.strerror or exc}", name, command)
    if isinstance(exc, UnicodeDecodeError):
        return ProtocolError(f"the reply is not text (byte {exc.object[exc.start:exc.start + 1]!r})",
                             name, command)
    if isinstance(exc, InvalidSession):
        return ConnectionLost("the session is closed", name, command)
    return ProtocolError(f"unexpected failure: {exc}", name, command)


def _from_visa_code(exc: VisaIOError, name: str, command: str | None) -> InstrumentError:
    if exc.error_code == constants.StatusCode.error_timeout:
        return InstrumentTimeout("no reply within the timeout", name, command)
    if exc.error_code in _LINK_CODES:
        return ConnectionLost(f"link error {exc.abbreviation}: {exc.description}", name, command)
    return ProtocolError(f"VISA error {exc.abbreviation}: {exc.description}", name, command)


_MAPPED = (VisaIOError, OSError, UnicodeDecodeError, InvalidSession)
CHUNK_BYTES = 20 * 1024  # one library read, as pyvisa's resources read
_MORE = constants.StatusCode.success_max_count_read  # the chunk was filled: the message goes on
_QUIET = (constants.StatusCode.success_device_not_present, _MORE)  # what a resource's read ignores


def _canonical(resource: str) -> str:
    try:
        return rname.to_canonical_name(resource)
    except (ValueError, rname.InvalidResourceName):
        return resource


class PyvisaTransport:
    """A VISA resource opened with newline terminations (what raw-socket instruments need)."""

    def __init__(self, resource: str, rm: Any | None = None, timeout_s: float = 2.0,
                 name: str | None = None):
        if not timeout_s > 0:
            raise ValueError("the timeout must be positive")
        self.resource = resource
        self.name = name or resource
        self._timeout_ms = max(1, round(timeout_s * 1000))
        self._rm = rm
        self._res: Any = None
        self._lib: Any = None       # the VISA library and session messages go through
        self._sid: Any = None
        self._quiet: Any = None     # the library's warnings ignored on the session while it is open
        self._closed = False
        self._open(None)

    def _resource_manager(self, command: str | None) -> Any:
        if self._rm is None:
            try:
                self._rm = pyvisa.ResourceManager("@py")
            except (OSError, ValueError, pyvisa.errors.Error) as exc:
                raise ConnectionLost(f"no VISA library: {exc}", self.name, command) from exc
        return self._rm

    def _open(self, command: str | None) -> Any:
        rm = self._resource_manager(command)
        self._check_simulated_name(rm, command)
        try:
            self._res = rm.open_resource(self.resource, read_termination="\n",
                                         write_termination="\n", timeout=self._timeout_ms)
        except _MAPPED as exc:
            raise ConnectionLost(f"cannot open {self.resource}: {exc}", self.name, command) from exc
        except ValueError as exc:  # pyvisa's InvalidResourceName
            raise ConnectionLost(f"not a VISA resource name: {exc}", self.name, command) from exc
        self._lib, self._sid = self._res.visalib, self._res.session
        self._quiet = self._lib.ignore_warning(self._sid, *_QUIET)
        self._quiet.__enter__()
        return self._res

    def _check_simulated_name(self, rm: Any, command: str | None) -> None:
        """pyvisa-sim opens a mistyped name and then answers every read with '' (and a
        warning), so the name is checked against its definitions first."""
        if not type(getattr(rm, "visalib", None)).__module__.startswith("pyvisa_sim"):
            return
        known = rm.list_resources("?*")  # plain list_resources() leaves out SOCKET resources
        if _canonical(self.resource) not in {_canonical(k) for k in known}:
            raise ConnectionLost(f"the simulated library has no '{self.resource}' "
                                 f"(it has: {', '.join(known) or 'none'})", self.name, command)

    def _session(self, command: str) -> Any:
        if self._res is not None:
            return self._res
        if self._closed:
            raise ConnectionLost("the transport is closed", self.name, command)
        return self._open(command)

    @property
    def visa_resource(self) -> Any:
        """The open pyvisa resource of this session (None while closed): what a plain pyvisa
        script on the same connection would use (the overhead benchmark's raw side)."""
        return self._res

    def query(self, command: str) -> str:
        self.write(command)
        return self._read(command)

    def write(self, command: str) -> None:
        if self._res is None:
            self._session(command)
        try:
            self._lib.write(self._sid, (command + "\n").encode("ascii"))
        except _MAPPED as exc:
            raise self._failure(exc, command) from exc

    def read(self) -> str:
        return self._read(None)

    def _read(self, command: str | None) -> str:
        if self._res is None:
            self._session(command or "(read)")
        lib, sid = self._lib, self._sid
        try:
            chunk, status = lib.read(sid, CHUNK_BYTES)
            if status == _MORE:
                whole = bytearray(chunk)
                while status == _MORE:
                    chunk, status = lib.read(sid, CHUNK_BYTES)
                    whole += chunk
                chunk = bytes(whole)
            reply: str = chunk.decode("ascii")
        except _MAPPED as exc:
            raise self._failure(exc, command) from exc
        return reply[:-1] if reply.endswith("\n") else reply

    def _failure(self, exc: BaseException, command: str | None) -> InstrumentError:
        error = map_visa_error(exc, self.name, command)
        if isinstance(error, InstrumentTimeout) and self._peer_closed():
            error = ConnectionLost("the instrument closed the connection", self.name, command)
        if isinstance(error, (InstrumentTimeout, ConnectionLost, ProtocolError)):
            # A late or partial reply must not answer the next query: start a fresh session.
            self._drop()
        return error

    def _peer_closed(self) -> bool:
        """True when the raw socket under the session has reached end-of-stream."""
        sock = self._raw_socket()
        if sock is None:
            return False
        try:
            return sock.recv(1, socket.MSG_PEEK | socket.MSG_DONTWAIT) == b""
        except BlockingIOError:
            return False
        except OSError:
            return True

    def _raw_socket(self) -> socket.socket | None:
        try:
            session = self._res.visalib.sessions[self._res.session]
        except (AttributeError, KeyError, TypeError, InvalidSession):
            return None
        sock = getattr(session, "interface", None)
        return sock if isinstance(sock, socket.socket) else None

    def _drop(self) -> None:
        res, self._res = self._res, None
        quiet, self._quiet = self._quiet, None
        if quiet is not None:
            quiet.__exit__(None, None, None)
        if res is not None:
            try:
                res.close()
            except _MAPPED:
                pass  # the session is being abandoned; nothing more can go wrong on it

    def close(self) -> None:
        # Only the session: pyvisa hands every caller the same ResourceManager per library, so
        # closing it would close the other instruments' sessions too.
        self._closed = True
        self._drop()


Handler = Callable[[str], "str | None"]


class FakeTransport:
    """Answers each command from ``handler(command)``: a reply string, or None for no reply.

    A query whose handler returns None times out, as an instrument that stays silent would.
    The handler may raise an :class:`InstrumentError` or an ``OSError`` to act out a failure.
    ``sent`` keeps every command, for tests that check what went out.
    """

    def __init__(self, handler: Handler, name: str = "fake"):
        self.handler = handler
        self.name = name
        self.sent: list[str] = []
        self._replies: deque[str] = deque()
        self._closed = False

    def write(self, command: str) -> None:
        if self._closed:
            raise ConnectionLost("the transport is closed", self.name, command)
        self.sent.append(command)
        try:
            reply = self.handler(command)
        except OSError as exc:
            raise map_visa_error(exc, self.name, command) from exc
        if reply is not None:
            self._replies.append(reply)

    def read(self) -> str:
        return self._next_reply(None)

    def query(self, command: str) -> str:
        self.write(command)
        return self._next_reply(command)

    def _next_reply(self, command: str | None) -> str:
        if not self._replies:
            raise InstrumentTimeout("no reply within the timeout", self.name, command)
        return self._replies.popleft()

    def close(self) -> None:
        self._closed = True
        self._replies.clear()
