"""Report cost against run size: a stored run of N raw samples, then ``harness report`` on it as a
child process, its wall time and peak memory; the same at a tenth and a half of N shows whether
cost is linear. Each run is built by a process of its own, so that this one stays small (see
``_report_cost``).

The run is written through the store's ordinary ``add_sample`` path: a ramp, a measure and a
hold, the measure's averaged readings, step-start events with their limits, and the results of
an example record, so the report draws, tabulates and exports what a real run gives it.
"""

from __future__ import annotations

import math
import os
import resource
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Any

from harness.runner.bench import verdict
from harness.runner.bench.children import run_child
from harness.runner.bench.startup import EVALUATE_RECORD, examples_folder, installed_env

SAMPLES = 1_000_000
TARGETS = {"wall_s": 3.0, "peak_rss_mb": 150.0}
_STEPS = (("ramp", "to rated current", 0.1), ("measure", "load loss at rated current", 0.5), ("hold", "watch", 0.4))


def build_run(store: Any, samples: int) -> str:
    """A finished run of ``samples`` raw samples in ``store``; its id."""
    from harness.calc import evaluate, load_record

    folder = examples_folder()
    sequence = (folder / "routine_single_phase.yaml").read_text(encoding="utf-8")
    run_id = store.begin_run(unit="NTW-50-0417", lab="Northfield Transformer Works (invented)", station_name="bench",
                             sequence_text=sequence, station_text=None, software_version="bench", simulated=None)
    first = 0
    for index, (kind, name, share) in enumerate(_STEPS):
        count = samples - first if index == len(_STEPS) - 1 else int(samples * share)
        store.begin_step(run_id, index, kind, name)
        store.add_event(run_id, first * 0.05, "step-start", f"step {index + 1}: {name}",
                        {"step": index, "limits": {"voltage_V": 520.0, "current_A": 12.0, "power_W": 3000.0}})
        for k in range(first, first + count):
            t = k * 0.05
            ripple = 1.0 + 0.002 * math.sin(k * 0.7)
            level = min(1.0, (k + 1) / max(1, count)) if kind == "ramp" else 1.0
            store.add_sample(run_id, index, t, 0, 270.0 * level * ripple, 268.0 * level, 7.58 * level * ripple,
                             1010.0 * level * level, 50.0, 272.0 * level, None)
        if kind == "measure":
            stats = {"count": count, "stable": True, "channel": 0, "u_rms_mean": 270.0, "u_rms_std": 0.4,
                     "i_rms_mean": 7.58, "i_rms_std": 0.01, "p_mean": 1010.0, "p_std": 1.4}
            store.add_reading(run_id, index, "load-loss", first, first + count - 1, stats)
        store.end_step(run_id, index, "passed")
        first += count
    results = evaluate(load_record(folder / EVALUATE_RECORD)).to_dict()
    store.finish_run(run_id, "passed", 0, None, None, results)
    return run_id


def build_into(folder: str, samples: int) -> None:
    """Build the run into a store in ``folder`` and print its id: run as a process of its own."""
    from harness.store import Store

    with Store(Path(folder), background_flush=False) as store:
        print(build_run(store, samples))


def _report_cost(samples: int) -> dict[str, Any]:
    with tempfile.TemporaryDirectory(prefix="harness-bench-report-") as scratch:
        # Built by a process of its own: on Linux a child's peak memory, as wait4 reports it, is
        # at least its parent's peak at the fork (the high-water mark is carried across exec), so
        # a parent that had built 10^6 samples itself would be measured instead of the report.
        build = f"from harness.runner.bench.report import build_into; build_into({scratch!r}, {samples})"
        built = subprocess.run([sys.executable, "-c", build], env=installed_env(), capture_output=True, text=True)
        if built.returncode != 0:
            raise RuntimeError(f"building the run failed: {built.stderr[-400:]}")
        run_id = built.stdout.split()[-1]
        env = {**installed_env(), "HARNESS_DATA": scratch}
        cost = run_child([sys.executable, "-m", "harness.cli", "report", run_id], env=env)
        written = {p.name: p.stat().st_size for p in (Path(scratch) / run_id).iterdir()}
    return {"wall_s": cost.wall_s, "cpu_s": cost.cpu_s, "peak_rss_mb": cost.peak_rss_mb, "files": written}


def launcher_peak_rss_mb() -> float:
    """This process's own peak memory: the floor under every child's reported peak."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _per_sample(low: dict[str, Any], high: dict[str, Any], samples: tuple[int, int], key: str = "wall_s") -> float:
    """Marginal cost between two run sizes: microseconds of ``key`` per sample."""
    return (high[key] - low[key]) / (samples[1] - samples[0]) * 1e6


def _bytes_per_sample(low: dict[str, Any], high: dict[str, Any], samples: tuple[int, int]) -> float:
    return max(0.0, high["peak_rss_mb"] - low["peak_rss_mb"]) * 2**20 / (samples[1] - samples[0])


def bench_report(samples: int = SAMPLES) -> dict[str, Any]:
    if type(samples) is not int or samples < 10:
        raise ValueError(f"bench report needs at least 10 samples, got {samples!r}")
    load_before = os.getloadavg()[0]
    sizes = (samples // 10, samples // 2, samples)
    tenth, half, whole = (_report_cost(n) for n in sizes)
    ends = (sizes[0], sizes[2])
    # linearity from CPU seconds: on a shared machine wall time also measures the neighbours
    cpu_low, cpu_high = _per_sample(tenth, half, sizes[:2], "cpu_s"), _per_sample(half, whole, sizes[1:], "cpu_s")
    figures = {"samples": samples, "wall_s": round(whole["wall_s"], 3), "peak_rss_mb": round(whole["peak_rss_mb"], 1),
               "cpu_s": round(whole["cpu_s"], 3)}
    return {
        **figures,
        "goals": {key: verdict(figures[key], goal) for key, goal in TARGETS.items()},
        "at_a_tenth": {"samples": sizes[0], "wall_s": round(tenth["wall_s"], 3), "cpu_s": round(tenth["cpu_s"], 3),
                       "peak_rss_mb": round(tenth["peak_rss_mb"], 1)},
        "at_a_half": {"samples": sizes[1], "wall_s": round(half["wall_s"], 3), "cpu_s": round(half["cpu_s"], 3),
                      "peak_rss_mb": round(half["peak_rss_mb"], 1)},
        "us_per_sample": round(_per_sample(tenth, whole, ends), 3),
        "cpu_us_per_sample": round(_per_sample(tenth, whole, ends, "cpu_s"), 3),
        "bytes_per_sample": round(_bytes_per_sample(tenth, whole, ends), 1),
        # linear cost: the marginal cost per sample is the same over the upper half as over the lower part
        "linearity": round(cpu_high / cpu_low, 2) if cpu_low > 0 else None,
        "files_bytes": whole["files"],
        "load_average_1min": [round(load_before, 2), round(os.getloadavg()[0], 2)],
        "launcher_peak_rss_mb": round(launcher_peak_rss_mb(), 1),
        "measure": "harness report as a child process at N/10, N/2 and N samples: wall seconds, CPU seconds "
                   "(both threads) and its peak resident memory (never below launcher_peak_rss_mb, this process's "
                   "own, which the operating system carries into every child); linearity is the marginal CPU "
                   "cost per sample from N/2 to N over that from N/10 to N/2 (1.0 is linear); the load "
                   "average before and after says how busy the machine was",
        "targets": TARGETS,
    }
