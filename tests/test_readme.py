"""README's quick start stays true: exactly two commands, the second is what CI runs, the first
runs the demo sequence that exists; the cautions are there."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def quick_start() -> list[str]:
    section = README.split("## Quick start", 1)[1]
    block = re.search(r"```sh\n(.*?)```", section, re.S)
    assert block, "the quick start has a fenced block"
    return [line for line in block.group(1).splitlines() if line.strip()]


def test_quick_start_is_two_commands_and_ci_runs_the_second() -> None:
    first, second = quick_start()
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert second in ci.splitlines()
    sequence = re.search(r"harness run (\S+)", first)
    assert sequence and (ROOT / sequence.group(1)).is_file()


def test_first_paragraph_states_the_job_and_cautions_follow() -> None:
    first_paragraph = README.split("\n\n")[1]
    assert "no-load" in first_paragraph and "load-loss" in first_paragraph and "test bays" in first_paragraph
    assert README.index("## Quick start") < README.index("## Safety")
    for caution in ("High voltage", "open winding carries its full rated", "not a protective device",
                    "Local codes", "licensed practice", "Stored energy"):
        assert caution in README, caution
