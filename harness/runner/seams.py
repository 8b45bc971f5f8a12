"""The runner's seams, typed: what a run needs of the store, of the progress display and of the
operator. Each has more than one implementation (the store and the recorder that journals when
it fails; the live display and its guard; the operator at the terminal and the answering one of
the simulated bay), and tests give their own."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Callable, Protocol

if TYPE_CHECKING:
    from drivers.bay_control import BayControl

from harness.common.reading import Sample
from harness.config.checks import EffectiveLimits


class RunStore(Protocol):
    """The writes of one run (harness.store.Store, or the recorder standing in for it)."""

    def add_sample(self, run_id: str, step_index: int, t: float, channel: int, u_rms: float, u_mean: float,
                   i_rms: float, p: float, freq: float, setpoint: float, tag: str | None = None) -> int: ...

    def add_event(self, run_id: str, t: float | None, kind: str, text: str, data: Any = None) -> None: ...

    def begin_step(self, run_id: str, index: int, kind: str, name: str) -> None: ...

    def end_step(self, run_id: str, index: int, status: str) -> None: ...

    def add_reading(self, run_id: str, step_index: int, tag: str, first_id: int, last_id: int,
                    stats: dict[str, Any]) -> None: ...

    def flush(self) -> None: ...


class Display(Protocol):
    """The operator's view of a run in progress."""

    def step(self, index: int, kind: str, title: str) -> None: ...

    def stage(self, text: str, done: float, total: float) -> None: ...

    def event(self, kind: str, text: str) -> None: ...

    def sample(self, sample: Sample, limits: EffectiveLimits) -> None: ...


class Operator(Protocol):
    """Who makes a change at a prompt (the connections, a tap), with the bay de-energised and confirmed."""

    def change(self, text: str, on_simulated_bay: Callable[[BayControl], None] | None = None) -> bool:
        """Ask for the change; True once it is done, False when the operator declines. On the
        simulated bay, ``on_simulated_bay`` makes it through the bay's control."""
        ...
