"""Start-up cost: whole ``harness`` processes against a bare interpreter, measured in one run.

Each command is run as its own process several times, the commands taking turns so that a drift
of the machine's speed weighs on all alike; the CPU seconds of each finished child come from the
operating system's accounting (``wait4``). Medians are reported.
"""

from __future__ import annotations

import statistics
import sys
from pathlib import Path
from typing import Any

from harness.runner.bench.children import run_child

ROUNDS = 5
CHECK_SEQUENCE = "routine_single_phase.yaml"
EVALUATE_RECORD = "records/single_phase_pole_mount.yaml"
TARGETS = {"help_ratio": 3.0, "check_cpu_s": 0.5, "evaluate_cpu_s": 0.5}


def examples_folder() -> Path:
    """The example sequences beside the package (a checkout, or a source tree)."""
    folder = Path(__file__).resolve().parents[3] / "sequences"
    if not (folder / CHECK_SEQUENCE).is_file():
        from harness.common.errors import HarnessError
        raise HarnessError(f"the example sequences are not in {folder}: run the benchmarks from a checkout")
    return folder


def _child(argv: list[str]) -> tuple[float, float]:
    cost = run_child(argv)
    return cost.cpu_s, cost.wall_s


def bench_startup(rounds: int = ROUNDS) -> dict[str, Any]:
    folder = examples_folder()
    harness = [sys.executable, "-m", "harness.cli"]
    commands = {
        "bare": [sys.executable, "-c", "pass"],
        "help": [*harness, "--help"],
        "check": [*harness, "check", str(folder / CHECK_SEQUENCE)],
        "evaluate": [*harness, "evaluate", "--json", str(folder / EVALUATE_RECORD)],
    }
    for argv in commands.values():  # warm-up: the file cache, pint's unit cache
        _child(argv)
    cpu: dict[str, list[float]] = {k: [] for k in commands}
    wall: dict[str, list[float]] = {k: [] for k in commands}
    for _ in range(rounds):
        for key, argv in commands.items():
            c, w = _child(argv)
            cpu[key].append(c)
            wall[key].append(w)
    med = {k: statistics.median(v) for k, v in cpu.items()}
    ratios = [h / b for h, b in zip(cpu["help"], cpu["bare"]) if b > 0]
    return {
        "help_s": round(med["help"], 3), "check_cpu_s": round(med["check"], 3),
        "evaluate_cpu_s": round(med["evaluate"], 3), "bare_python_s": round(med["bare"], 3),
        "help_ratio": round(statistics.median(ratios), 2) if ratios else None,
        "wall_s": {k: round(statistics.median(v), 3) for k, v in wall.items()},
        "measure": "CPU seconds (user + system) per process, median of the rounds; help_ratio pairs each round",
        "rounds": rounds, "targets": TARGETS,
    }
