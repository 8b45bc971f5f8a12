"""Start-up cost: whole ``harness`` processes against a bare interpreter, measured in one run.

Each command is run as its own process several times, the commands taking turns so that a drift
of the machine's speed weighs on all alike; the CPU seconds of each finished child come from the
operating system's accounting (``wait4``). Medians are reported.

The children may keep Python's bytecode cache (``PYTHONDONTWRITEBYTECODE`` is dropped from their
environment, so the warm-up round writes it), as an installed harness has it: without it every
start compiles the product's modules again, about 0.1 s of CPU that no user pays.
"""

from __future__ import annotations

import os
import statistics
import sys
from pathlib import Path
from typing import Any

from harness.runner.bench import verdict
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


def installed_env() -> dict[str, str]:
    """The environment of a benchmark's child: this one, with the bytecode cache allowed."""
    return {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def _child(argv: list[str]) -> tuple[float, float]:
    cost = run_child(argv, env=installed_env())
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
    figures = {"help_s": round(med["help"], 3), "check_cpu_s": round(med["check"], 3),
               "evaluate_cpu_s": round(med["evaluate"], 3), "bare_python_s": round(med["bare"], 3),
               "help_ratio": round(statistics.median(ratios), 2) if ratios else None}
    return {
        **figures,
        "goals": {key: verdict(figures[key], goal) for key, goal in TARGETS.items()},
        "wall_s": {k: round(statistics.median(v), 3) for k, v in wall.items()},
        "spread_cpu_s": {k: [round(min(v), 3), round(max(v), 3)] for k, v in cpu.items()},
        "load_average_1min": round(os.getloadavg()[0], 2),
        "measure": "CPU seconds (user + system) per process, median of the rounds; help_ratio pairs each round; "
                   "bytecode cache on, as installed",
        "rounds": rounds, "targets": TARGETS,
    }

