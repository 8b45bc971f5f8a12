"""The shared clock: bay seconds, running ``time_scale`` times faster than real time.

The simulated bay and the runner hold the same clock object, so physics (slew, heating,
settling) and the runner's intervals and timeouts stay consistent at any time scale.
"""

from __future__ import annotations

import threading
import time


class Clock:
    def __init__(self, time_scale: float = 1.0):
        if not time_scale > 0:
            raise ValueError("time scale must be positive")
        self.time_scale = float(time_scale)
        self._t0 = time.monotonic()

    def now(self) -> float:
        """Bay seconds since the clock was made."""
        return (time.monotonic() - self._t0) * self.time_scale

    def sleep(self, bay_seconds: float) -> None:
        if bay_seconds > 0:
            time.sleep(bay_seconds / self.time_scale)

    def wait(self, event: threading.Event, bay_seconds: float) -> bool:
        """Wait on ``event`` for at most ``bay_seconds``; True if it was set."""
        return event.wait(max(bay_seconds, 0.0) / self.time_scale)

    def at_least_real(self, bay_seconds: float, real_seconds: float) -> float:
        """A timeout in bay seconds that is never shorter than ``real_seconds`` of real time.

        Host stalls (a disk sync, a busy core) do not speed up with the simulated bay: a timeout
        that only guards against a stuck process must not fire because the clock runs fast.
        At time scale 1 this is just ``max`` of the two.
        """
        return max(bay_seconds, real_seconds * self.time_scale)

    def real(self, bay_seconds: float) -> float:
        """The real-time length of ``bay_seconds`` (for socket timeouts)."""
        return bay_seconds / self.time_scale

    def pace(self) -> str:
        """How bay time runs, for the event log."""
        return f"at {self.time_scale:g} x real time"


class Cadence:
    """Readings at a fixed interval: the n-th wait ends ``n * interval`` bay seconds after the
    cadence began, so the time a reading itself takes (its queries, the store, the checks) comes
    out of the interval instead of adding to it. After a reading that overran its slot (it took
    longer than the interval) the next follows at once and the schedule goes on from there:
    readings never come in a burst to catch up, and start to start they are never closer than
    the interval (but for the host's sleep jitter on a real clock)."""

    def __init__(self, clock: Clock, interval: float):
        self.clock = clock
        self.interval = interval
        self._due = clock.now()

    def wait(self) -> None:
        now = self.clock.now()
        due = self._due + self.interval
        if due > now:
            self.clock.sleep(due - now)
            self._due = due
        else:
            self._due = now


class SteppedClock(Clock):
    """A clock that moves only when its owner sleeps: bay time then depends on the calls made,
    never on how fast the host runs them. ``harness run --stepped-clock`` runs the built-in
    simulated bay on one: the runner is the one thread that sleeps.

    For driving the simulated bay from one thread (a test): that thread's ``sleep`` advances the
    bay's time; the bay's server threads only read ``now``. A command sent without waiting for
    its completion may be applied after a later ``sleep``, so confirm it first (``*OPC?`` on the
    same connection). ``time_scale`` only converts the real-time socket timeouts.
    """

    def __init__(self, time_scale: float = 1.0):
        super().__init__(time_scale)
        self._t = 0.0
        self._lock = threading.Lock()

    def now(self) -> float:
        return self._t

    def sleep(self, bay_seconds: float) -> None:
        if bay_seconds > 0:
            with self._lock:
                self._t += bay_seconds

    def wait(self, event: threading.Event, bay_seconds: float) -> bool:
        if not event.is_set():
            self.sleep(bay_seconds)
        return event.is_set()

    def pace(self) -> str:
        return "on a stepped clock (bay time moves only while the runner waits)"
