"""The operator's terminal: the live reading fits 80 columns (three phases too), U' is explained
the first time it is shown, a long stage (a hold) shows its progress without a live display."""

from __future__ import annotations

import io
from types import SimpleNamespace

import pytest
from rich.console import Console

from harness.common.reading import Phase, combine
from harness.runner.progress import LINE_WIDTH, Progress, live_lines

WIDEST = -1.234567e5  # ".4g" of this is the widest a number prints: -1.235e+05
LIMITS = SimpleNamespace(voltage=1.0, current=1.0, power=1.0)


@pytest.mark.parametrize("phases", [1, 3])
@pytest.mark.parametrize("value", [WIDEST, 0.0, 12345.678, 1e-7])
def test_live_lines_fit_80_columns(phases, value):
    sample = combine(0, 0.0, tuple(Phase(value, value, value, value) for _ in range(phases)), 50.0, value)
    lines = live_lines(sample, LIMITS)
    assert lines and all(len(line) <= LINE_WIDTH for line in lines), [len(x) for x in lines]
    assert ("U12/23/31" in lines[0]) == (phases == 3)


def plain_progress(terminal: bool = False) -> tuple[Progress, io.StringIO]:
    progress = Progress()
    out = io.StringIO()
    progress.console = Console(file=out, width=LINE_WIDTH, force_terminal=terminal, highlight=False)
    return progress, out


def test_u_mean_is_explained_once():
    progress, out = plain_progress()
    progress.event("reading", "no-load: U 415 V, U' 414 V, I 1.8 A, P 149 W")
    progress.event("reading", "no-load: U 415 V, U' 414 V, I 1.8 A, P 149 W")
    assert out.getvalue().count("U' is the mean-value voltage scaled to rms") == 1


def test_a_hold_shows_its_progress_in_plain_lines():
    progress, out = plain_progress()
    progress.step(5, "hold", "warm the winding")
    for t in range(0, 121, 10):
        progress.stage("warm the winding", t, 120)
    text = out.getvalue()
    for pct in ("25 %", "50 %", "75 %", "100 %"):
        assert f"warm the winding: {pct}" in text, text
    assert text.count("warm the winding: ") == 4


def test_the_live_panel_draws_the_latest_reading_at_its_own_refresh():
    progress, out = plain_progress(terminal=True)
    with progress:
        assert progress.live is not None
        for volts in (100.0, 200.0, 314.159):  # readings faster than the panel redraws: only the latest is drawn
            progress.sample(combine(0, volts, (Phase(volts, volts, 1.0, 10.0),), 50.0, volts), LIMITS)
        progress.live.refresh()
        assert "U 314.2 V" in out.getvalue()


def test_a_panel_that_fails_to_draw_stops_the_run_at_the_next_reading(monkeypatch):
    from harness.runner import progress as module
    from harness.runner.progress import GuardedDisplay

    def broken(s, limits):
        raise ValueError("cannot draw")

    monkeypatch.setattr(module, "live_lines", broken)
    progress, _ = plain_progress(terminal=True)
    guarded = GuardedDisplay(progress)
    reading = combine(0, 1.0, (Phase(1.0, 1.0, 1.0, 1.0),), 50.0, 1.0)
    with progress:
        guarded.sample(reading, LIMITS)
        assert progress.live is not None
        progress.live.refresh()  # drawn on the display's thread: the failure is held ...
        guarded.sample(reading, LIMITS)  # ... and raised at the next reading, into the guard
    fault = guarded.pending_fault()
    assert fault is not None and "cannot draw" in str(fault)
