"""Ctrl-C and SIGTERM during a run: obeyed while steps run, held everywhere else.

One handler for the whole run (installed before anything is begun, removed after the outcome
is printed), so that no signal can cut the safe-state procedure, the evaluation, the run's
record or its report short. While a window is *obeyed* (the steps; opening the bay), the
first signal raises (KeyboardInterrupt or :class:`Terminated`) and every later one is held;
outside, signals are held, and one held before an obeyed window opens is obeyed as it opens.
"""

from __future__ import annotations

import contextlib
import signal
from typing import Any, Iterator

_NAMES: dict[int, str] = {signal.SIGINT: "Ctrl-C", signal.SIGTERM: "SIGTERM"}


class Terminated(Exception):
    """SIGTERM arrived: handled like Ctrl-C."""


def _stop(signum: int) -> BaseException:
    return KeyboardInterrupt("interrupted by Ctrl-C") if signum == signal.SIGINT else Terminated("terminated by SIGTERM")


class StopSignals:
    def __init__(self) -> None:
        self.arrived: list[int] = []
        self.held: list[int] = []
        self._obey = False
        self._previous: dict[int, Any] = {}

    def __enter__(self) -> StopSignals:
        for signum in _NAMES:
            self._previous[signum] = signal.signal(signum, self._on_signal)
        return self

    def __exit__(self, *exc: object) -> None:
        for signum, handler in self._previous.items():
            signal.signal(signum, handler)

    @contextlib.contextmanager
    def obeyed(self) -> Iterator[None]:
        if self.held:
            raise _stop(self.held.pop(0))
        self._obey = True
        try:
            yield
        finally:
            self._obey = False

    @property
    def held_after_steps(self) -> bool:
        return bool(self.held)

    def names(self) -> list[str]:
        return list(dict.fromkeys(_NAMES[s] for s in self.held))

    def _on_signal(self, signum: int, frame: Any) -> None:
        self.arrived.append(signum)
        if self._obey:
            self._obey = False  # only the first stops the steps; later ones must not cut the safe state
            raise _stop(signum)
        self.held.append(signum)
