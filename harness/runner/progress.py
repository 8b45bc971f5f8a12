"""Progress on stderr: step, live U/I/P and the headroom to the nearest limit.

A live rich panel on a terminal; plain event lines otherwise (CI, pipes, --json runs).
"""

from __future__ import annotations

from typing import Any, Callable

from rich.console import Console
from rich.live import Live
from rich.markup import escape
from rich.table import Table

from harness.common.reading import Sample
from harness.config.checks import EffectiveLimits
from harness.runner.seams import Display
from harness.safety import Trip

REFRESH_PER_S = 8  # the live panel's redraws per second (the display's own timing, nothing else)


class GuardedDisplay:
    """The progress display, kept from breaking the run: a display that fails (a closed
    terminal, a bug of ours) is switched off at once and its failure held as a trip, which the
    runner raises at its next step forward, so the run stops through the safe state. Calls made
    while the bay is made safe never raise."""

    def __init__(self, display: Display):
        self.display = display
        self.failure: str | None = None
        self._fault: Trip | None = None

    def pending_fault(self) -> Trip | None:
        fault, self._fault = self._fault, None
        return fault

    def step(self, index: int, kind: str, title: str) -> None:
        self._guarded(self.display.step, index, kind, title)

    def stage(self, text: str, done: float, total: float) -> None:
        self._guarded(self.display.stage, text, done, total)

    def event(self, kind: str, text: str) -> None:
        self._guarded(self.display.event, kind, text)

    def sample(self, sample: Sample, limits: EffectiveLimits) -> None:
        if self.failure is None:  # _guarded written out: this runs on every reading
            try:
                self.display.sample(sample, limits)
            except Exception as exc:  # noqa: BLE001 - any failure of the display stops the run safely
                self._failed(exc)

    def _guarded(self, method: Callable[..., None], *args: Any) -> None:
        if self.failure is not None:
            return
        try:
            method(*args)
        except Exception as exc:  # noqa: BLE001 - any failure of the display stops the run safely
            self._failed(exc)

    def _failed(self, exc: Exception) -> None:
        self.failure = f"progress display failed: {exc!r}"
        self._fault = Trip(self.failure)


# Said once, the first time the terminal shows U' (common practice: the mean-value voltmeter of the
# no-load test, IEC 60076-1 11.5; recalled from memory).
U_MEAN_NOTE = ("U' is the mean-value voltage scaled to rms (U' = 1.111 x rectified mean): U and U' apart "
               "means a distorted voltage, and the no-load loss is corrected for it")
LINE_WIDTH = 80
STAGE_MARKS = 4
STAGE_TEXT = LINE_WIDTH - 30  # the stage's name beside its bar and percentage  # without a live display, a long stage prints its progress at each quarter


class Progress:
    def __init__(self, quiet: bool = False):
        self.console = Console(stderr=True, highlight=False)
        self.quiet = quiet
        self.live: Live | None = None
        self._latest: tuple[Sample, EffectiveLimits] | None = None  # what the live panel shows next
        self._render_failure: Exception | None = None
        self._step = ""
        self._stage = ""
        self._mark = 0
        self._told_u_mean = False

    def __enter__(self) -> "Progress":
        if self.console.is_terminal and not self.quiet:
            self.live = Live(console=self.console, refresh_per_second=REFRESH_PER_S, transient=True,
                             get_renderable=self._render)
            self.live.__enter__()
        return self

    def __exit__(self, *exc: Any) -> None:
        if self.live is not None:
            self.live.__exit__(*exc)
            self.live = None

    def step(self, index: int, kind: str, title: str) -> None:
        self._step, self._stage, self._mark = escape(f"step {index + 1}: {title}"), "", 0
        self._print(f"[bold]{self._step}[/bold]")

    def stage(self, text: str, done: float, total: float) -> None:
        pct = 100 * done / total if total else 0
        short = text if len(text) <= STAGE_TEXT else text[:STAGE_TEXT - 1] + "…"
        self._stage = escape(f"{short}  [{'#' * int(pct / 5):<20}] {pct:3.0f} %")
        mark = int(pct * STAGE_MARKS / 100)
        if self.live is None and mark > self._mark:  # plain lines: each quarter once
            self._mark = mark
            self._print(escape(f"  {text}: {pct:.0f} % ({done:.0f} of {total:.0f} s)"))

    def event(self, kind: str, text: str) -> None:
        style = {"warning": "yellow", "trip": "bold red", "unsafe": "bold red on white"}.get(kind, "")
        line = escape(f"{kind}: {text}")
        self._print(f"  [{style}]{line}[/{style}]" if style else f"  {line}")
        if "U'" in text:
            self._explain_u_mean()

    def sample(self, sample: Sample, limits: EffectiveLimits) -> None:
        """Keep the reading for the live panel, which the display's own refresh draws
        (REFRESH_PER_S times a second, whatever the rate of readings): the cost per reading is
        keeping it. A panel that failed to draw fails here, at the next reading, so that the
        run's GuardedDisplay stops the run as for any failure of the display."""
        if self.live is None:
            return
        if self._render_failure is not None:
            raise self._render_failure
        self._latest = (sample, limits)
        if not self._told_u_mean:
            self._explain_u_mean()

    def _render(self) -> Table:
        """The live panel, drawn on the display's refresh thread; a failure is held for sample()."""
        try:
            latest = self._latest
            return self._table(*latest) if latest is not None else self._table(None, None)
        except Exception as exc:  # noqa: BLE001 - raised at the next reading, on the run's thread
            self._render_failure = exc
            return Table.grid()

    def _explain_u_mean(self) -> None:
        if not self._told_u_mean:
            self._told_u_mean = True
            self._print(escape(f"  note: {U_MEAN_NOTE}"))

    def _print(self, text: str) -> None:
        if not self.quiet or "red" in text:
            self.console.print(text)

    def _table(self, s: Any, limits: Any) -> Table:
        table = Table.grid()
        table.add_row(self._step)
        if self._stage:
            table.add_row(self._stage)
        for line in live_lines(s, limits) if s is not None else ():
            table.add_row(line)
        return table


def live_lines(s: Any, limits: Any) -> list[str]:
    """The live reading in lines of at most 80 columns: U, U', I, P (three phases: line-to-line
    U, line currents, total P), then the headroom to the nearest limit and the setpoint."""
    u_top = max(max(ph.u_rms, ph.u_mean) for ph in s.phases)
    i_top = max(abs(ph.i_rms) for ph in s.phases)
    headroom = min((1 - u_top / limits.voltage, "U"), (1 - i_top / limits.current, "I"),
                   (1 - abs(s.p) / limits.power, "P"))
    shown = max(100 * headroom[0], -999.9)  # past a limit the supervisor trips; the figure stays short
    tail = f"headroom {shown:.1f} % ({headroom[1]})  set {s.setpoint:.4g} V"
    if len(s.phases) == 1:
        return [f"U {s.u_rms:.4g} V  U' {s.u_mean:.4g} V  I {s.i_rms:.4g} A  P {s.p:.4g} W", tail]
    u = "/".join(f"{ph.u_rms:.4g}" for ph in s.phases)
    i = "/".join(f"{ph.i_rms:.4g}" for ph in s.phases)
    return [f"U12/23/31 {u} V  U' {s.u_mean:.4g} V", f"I1/2/3 {i} A  P {s.p:.4g} W", tail]
