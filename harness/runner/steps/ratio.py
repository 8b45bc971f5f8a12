"""The ratio step: voltage ratio and phase displacement on every tap listed.

Per tap: an off-circuit tap changer is moved at an operator prompt (switched off and confirmed
de-energised first); an on-load one (the nameplate's ``changer: on-load``) by the station's drive,
with the unit energised: the analyser's ranges opened to the step's limits, supervised readings
while it moves, the tap it reports compared with the one asked, then readings taken and checked for
the step's ``settle`` time but not averaged. The fed winding is brought to the step's reduced
voltage; each reading is one supervised reading of the fed winding (``Run.read``, every limit
checked), then one query of both windings' voltages (the fed winding's channels and the open
winding's, the same analyser update) and the phase angle of each open-winding channel against its
fed-winding pair. The open winding's voltage is checked against what the declared ratio gives: well
above it means the connections are not what the prompt said, and the step stops. At the end the tap
changer goes back to the principal tap (the loss tests are made there) and the output is off.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from harness.calc.ratio import declared_ratio, tap_factor, tap_name
from harness.common.clock import Cadence
from harness.config.checks import OPEN_WINDING
from harness.config.steps import Ratio
from harness.runner.context import Run
from harness.runner.steps import register
from harness.runner.steps.off import switch_off
from harness.runner.steps.prompt import operator_change
from harness.runner.steps.ramp import ramp_to
from harness.safety import ReadingFault, Trip

if TYPE_CHECKING:
    from drivers.tap_changer import TapChanger

# Ranges fitted to 110 % of the readings: the source holds a steady, low voltage through the
# readings, and the % of range part of the analyser's error is what limits a ratio measured on
# two channels (0.02 % of range on a range 1.3 times the reading is 0.026 % of it; at 1.1, 0.022 %).
RATIO_RANGE_HEADROOM = 1.1
# A ratio reading averages distinct analyser updates: a reading that repeats the last one exactly is
# not counted; more than this many times the readings asked for without enough new ones is a fault.
REPEATS_ALLOWED = 3
# The open winding may read this much above what the declared ratio of the tap gives before the
# step stops: a tap step or a ratio error is a few %, a swapped connection is a factor.
OPEN_WINDING_MARGIN = 1.5


def taps_of(step: Any, run: Run) -> list[int]:
    taps = run.sequence.transformer.taps
    if isinstance(step.taps, list):
        return list(step.taps)
    return list(taps.positions()) if taps is not None else [0]


def expected_ratio(run: Run, tap: int) -> float:
    """Fed-winding voltage per open-winding volt on ``tap``, from the nameplate."""
    t = run.sequence.transformer
    taps = t.taps
    ratio = declared_ratio(t.hv.rated_voltage, t.lv.rated_voltage, taps.winding if taps else None,
                           taps.step if taps else 0.0, tap)
    return ratio if run.fed == "hv" else 1.0 / ratio


def on_load_changer(run: Run) -> TapChanger | None:
    """The station's drive when the nameplate's changer is on-load; None: moves at prompts."""
    taps = run.sequence.transformer.taps
    if taps is None or taps.changer != "on-load":
        return None
    if run.bay.tap_changer is None:  # refused by check already; never fall back to a live move by hand
        raise ReadingFault("the unit's tap changer is on-load but the station has no tap_changer", step=run.step_title)
    return run.bay.tap_changer


def move_tap(run: Run, tap: int, settle: float = 0.0) -> None:
    """Set the tap changer: by the station's drive for an on-load changer, else at an operator
    prompt (nothing to do on a unit without taps)."""
    taps = run.sequence.transformer.taps
    changer = on_load_changer(run)
    if changer is not None and run.tap is None:
        run.tap = changer.position()
    if taps is None or run.tap == tap:
        return
    if changer is not None:
        _drive(run, changer, tap, settle)
        return
    volts = (run.sequence.transformer.hv if taps.winding == "hv" else run.sequence.transformer.lv).rated_voltage
    text = (f"Set the off-circuit tap changer to tap {tap_name(tap)} "
            f"({volts * tap_factor(taps.step, tap):.6g} V on the {taps.winding.upper()} winding).")
    operator_change(run, text, lambda bay_control: bay_control.set_tap(tap))
    run.tap = tap
    run.event("tap", f"tap changer at tap {tap_name(tap)}", {"tap": tap})


def _drive(run: Run, changer: TapChanger, tap: int, settle: float) -> None:
    """An on-load move: energised, every moment supervised; the tap read back, then settled."""
    energised = run.energised
    if energised:
        run.range_for_limits()  # the magnetising current follows the tap: fitted ranges could overload
    start = run.clock.now()
    reached = changer.move_to(tap, watch=(lambda: run.read(tag="tap-move")) if energised else None)
    run.tap = reached
    state = "energised" if energised else "de-energised"
    run.event("tap", f"on-load tap changer driven to tap {tap_name(reached)} ({state}, read back, "
              f"{run.clock.now() - start:.3g} s)", {"tap": reached, "changer": "on-load", "energised": energised})
    if energised:
        _settle(run, settle)


def _settle(run: Run, seconds: float) -> None:
    """Readings after an energised move: supervised like every reading, not averaged."""
    end = run.clock.now() + seconds
    while run.clock.now() < end:
        run.clock.sleep(min(run.update_interval, max(end - run.clock.now(), 0.0)))
        run.read(tag="tap-settle")


def channels(run: Run) -> tuple[tuple[int, ...], tuple[int, ...]]:
    """(fed winding's channels, open winding's channels) of the analyser."""
    given = run.station.instruments.analyser.channels.get(OPEN_WINDING)
    open_ = (given,) if isinstance(given, int) else tuple(given or ())
    n = run.sequence.transformer.phases
    if len(open_) != n:
        raise ReadingFault(f"the station's analyser needs {n} '{OPEN_WINDING}' channel(s) for a ratio step",
                           step=run.step_title)
    return tuple(range(1, n + 1)), open_


def read_tap(run: Run, step: Any, tap: int) -> dict[str, Any]:
    """The averaged readings of one tap: voltages of both windings and the LV lag per phase pair."""
    fed_ch, open_ch = channels(run)
    vt = run.station.measurement.vt_ratio
    expected = expected_ratio(run, tap)
    run.use_averaging(run.measure_averaging)
    first = run.read(tag="ratio")
    run.fit_ranges(first, RATIO_RANGE_HEADROOM)
    u_fed = max(ph.u_rms for ph in first.phases)
    run.bay.analyser.set_channel_voltage_range(RATIO_RANGE_HEADROOM * u_fed / expected / vt, open_ch)
    fed_v: list[np.ndarray] = []
    open_v: list[np.ndarray] = []
    lags: list[list[float]] = []
    cadence = Cadence(run.clock, step.interval)  # readings `interval` apart, start to start
    previous: tuple[float, ...] | None = None
    for _ in range(REPEATS_ALLOWED * step.readings):
        if len(fed_v) == step.readings:
            break
        cadence.wait()
        run.read(tag="ratio")
        raw = tuple(run.bay.analyser.voltages(fed_ch + open_ch))
        if raw == previous:
            continue  # the analyser's last update again (a reading right after a late one): nothing new to average
        previous = raw
        volts = np.array(raw) * vt
        fed, other = volts[:len(fed_ch)], volts[len(fed_ch):]
        _check_open_winding(run, fed, other, expected, tap)
        angles = [run.bay.analyser.phase_angle(a, b) for a, b in zip(fed_ch, open_ch)]
        fed_v.append(fed)
        open_v.append(other)
        lags.append([(-a if run.fed == "hv" else a) % 360.0 for a in angles])
    if len(fed_v) < step.readings:
        raise ReadingFault(f"the analyser's voltages did not change over {REPEATS_ALLOWED * step.readings} readings "
                           f"on tap {tap_name(tap)}: its readings are not being updated", step=run.step_title)
    fed_mean, open_mean = np.mean(fed_v, axis=0), np.mean(open_v, axis=0)
    hv, lv = (fed_mean, open_mean) if run.fed == "hv" else (open_mean, fed_mean)
    lag = [_circular_mean([row[k] for row in lags]) for k in range(len(fed_ch))]
    return {"tap": tap, "fed": run.fed, "hv": [float(v) for v in hv], "lv": [float(v) for v in lv], "lag_deg": lag,
            "count": step.readings}


def _check_open_winding(run: Run, fed: np.ndarray, other: np.ndarray, expected: float, tap: int) -> None:
    for k, (u_fed, u_open) in enumerate(zip(fed, other)):
        allowed = OPEN_WINDING_MARGIN * u_fed / expected
        if not math.isfinite(u_open) or u_open > allowed:
            raise Trip(f"the open winding reads {u_open:.4g} V on tap {tap_name(tap)} where the declared ratio "
                       f"gives {u_fed / expected:.4g} V: the connections or the tap are not what the prompt said",
                       "voltage", float(u_open), allowed, run.step_title, run.clock.now())


def _circular_mean(degrees: list[float]) -> float:
    """Mean of angles near each other, also across 0/360 (reversed polarity sits at 180)."""
    rad = np.radians(degrees)
    return float(math.degrees(math.atan2(np.mean(np.sin(rad)), np.mean(np.cos(rad)))) % 360.0)


def _record(run: Run, reading: dict[str, Any]) -> None:
    run.ratio_readings = [r for r in run.ratio_readings if r["tap"] != reading["tap"]] + [reading]
    ratios = ", ".join(f"{h / l:.6g}" for h, l in zip(reading["hv"], reading["lv"]))
    lags = ", ".join(f"{a:.2f}" for a in reading["lag_deg"])
    run.event("ratio-reading", f"tap {tap_name(reading['tap'])}: HV/LV {ratios}; LV lag {lags} deg "
              f"({reading['count']} readings)", {**reading, "step": run.step_index})


@register("ratio")
def execute(step: Ratio, run: Run) -> None:
    target = run.target_value(step, step.target)
    taps = taps_of(step, run)
    for index, tap in enumerate(taps):
        run.progress.stage(f"{step.title()}: tap {tap_name(tap)} ({index + 1} of {len(taps)})", index, len(taps))
        move_tap(run, tap, step.settle)
        ramp_to(run, "voltage", target, step.tolerance)
        _record(run, read_tap(run, step, tap))
    switch_off(run, "after the ratio test")
    move_tap(run, 0)
