"""An on-load tap changer's motor drive: moved between readings with the unit energised.

A move is sent only for a tap inside the unit's range (the nameplate's, given when the drive is
opened; else the drive's own), then the drive is polled until it reports that it has stopped, on
the clock the run keeps (bay seconds, so a simulated bay's drive takes its own simulated time),
and the tap it reports is compared with the one asked. A drive still moving after
``move_timeout_s`` per tap step, or one that stopped elsewhere, raises :class:`NotReached`
naming the instrument and the command: the step stops and the bay goes to the safe state.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

from drivers.errors import NotReached, ProtocolError
from drivers.profile import Profile, TapChangerProfile
from drivers.scpi import ScpiInstrument
from drivers.transport import Transport
from harness.common.clock import Clock

# How often a moving drive is asked whether it has stopped (bay seconds): a tap step takes
# seconds (common practice, no source), so half a second adds little and asks a few times per step.
POLL_INTERVAL_S = 0.5


class TapChanger(ScpiInstrument):
    KIND = "tap_changer"
    profile: TapChangerProfile

    def __init__(self, transport: Transport, name: str, profile: Profile | str | Path = "generic", *,
                 clock: Clock | None = None, move_timeout_s: float = 30.0,
                 taps: tuple[int, int] | None = None):
        super().__init__(transport, name, profile)
        if not move_timeout_s > 0:
            raise ValueError(f"the move timeout must be positive, got {move_timeout_s!r}")
        self.clock = clock if clock is not None else Clock()
        self.move_timeout_s = float(move_timeout_s)
        self.unit_taps = None if taps is None else _tap_range(taps)

    def position(self) -> int:
        """The tap the drive reports it is on."""
        return self._whole(self._template("position"), "tap position")

    def is_moving(self) -> bool:
        return self._query_bool(self._template("moving"))

    def position_range(self) -> tuple[int, int]:
        """(lowest, highest) tap the drive can reach, as it reports them."""
        lowest = self._whole(self._template("lowest"), "lowest tap")
        highest = self._whole(self._template("highest"), "highest tap")
        if lowest > highest:
            raise ProtocolError(f"lowest tap {lowest} is above highest tap {highest}", self.name,
                                self._template("highest"))
        return lowest, highest

    def check_range(self) -> None:
        """Refuse a drive that cannot reach every tap of the unit (another changer, or set up for
        another unit): raised before anything is energised."""
        if self.unit_taps is None:
            return
        lowest, highest = self.position_range()
        if not lowest <= self.unit_taps[0] <= self.unit_taps[1] <= highest:
            raise NotReached(f"the drive reaches taps {lowest} to {highest}, the unit has taps "
                             f"{self.unit_taps[0]} to {self.unit_taps[1]}", self.name, self._template("lowest"))

    def move_to(self, tap: int, watch: Callable[[], object] | None = None) -> int:
        """Drive to ``tap``, wait until the drive has stopped, and return the tap it reports,
        which must be ``tap``. A tap off the unit's range is refused before anything is sent.
        ``watch`` is called after each wait while the drive moves (the runner's supervised
        reading, so an energised move is watched like any other moment)."""
        if isinstance(tap, bool) or not isinstance(tap, int):
            raise ValueError(f"{self.name}: a tap is a whole number, got {tap!r}")
        lowest, highest = self.unit_taps if self.unit_taps is not None else self.position_range()
        if not lowest <= tap <= highest:
            raise ValueError(f"{self.name}: tap {tap} is outside the unit's taps {lowest} to {highest}; nothing sent")
        start = self.position()
        command = self._template("set_position").format(value=tap)
        self.configure(command)
        self._wait_stopped(command, self.move_timeout_s * max(1, abs(tap - start)), watch)
        reached = self.position()
        self.check_errors(command)
        if reached != tap:
            raise NotReached(f"asked for tap {tap}, the drive stopped on tap {reached}", self.name, command)
        return reached

    def _wait_stopped(self, command: str, timeout_s: float, watch: Callable[[], object] | None) -> None:
        deadline = self.clock.now() + timeout_s
        while self.is_moving():
            if self.clock.now() >= deadline:
                raise NotReached(f"still moving {timeout_s:g} s after the command (its move timeout)",
                                 self.name, command)
            self.clock.sleep(POLL_INTERVAL_S)
            if watch is not None:
                watch()

    def _whole(self, command: str, quantity: str) -> int:
        value = self._query_number(command, quantity)
        if value != int(value):
            raise ProtocolError(f"{quantity} is a whole number, got {value:g}", self.name, command)
        return int(value)


def _tap_range(taps: tuple[int, int]) -> tuple[int, int]:
    lowest, highest = taps
    if any(isinstance(t, bool) or not isinstance(t, int) for t in taps) or lowest > highest:
        raise ValueError(f"the unit's taps are (lowest, highest) whole numbers, got {taps!r}")
    return lowest, highest
