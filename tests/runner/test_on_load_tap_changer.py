"""The ratio step with an on-load tap changer, in-process on the simulated three-phase bay (time
scale 100): the routine sequence's ratio prompt and step, its nameplate's changer declared
on-load, so the built-in station's drive moves the taps between readings with the HV energised.

Every tap's ratio is within 0.05 % of the model's true ratio (``harness sim truth``) and agrees
with the same step run through operator prompts (the off-circuit path, unchanged); each move is
one event, read back and settled, with no prompt and no switching off between taps. A drive that
sticks while energised ends the run tripped (exit 3) with a sentence naming the drive, the
command and both taps, and the bay's de-energisation confirmed.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
import yaml

from harness.runner.prepare import RunOptions
from harness.runner.run import EXIT, RunOutcome, execute
from harness.sim.scenario import load_scenario
from harness.sim.truth import truth
from harness.store import Store
from tests.runner.test_ratio_run import TRUE_WITHIN_PCT, ratio_sequence

def on_load(path: Path) -> Path:
    """The same sequence with the nameplate's changer on-load."""
    doc = yaml.safe_load(path.read_text(encoding="utf-8"))
    doc["transformer"]["taps"]["changer"] = "on-load"
    target = path.with_name("on-load-" + path.name)
    target.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return target


def run(sequence: Path, folder: Path, *faults: str) -> tuple[RunOutcome, list[dict[str, Any]]]:
    with Store(folder) as store:
        outcome = execute(RunOptions(sequence, scenario="three-phase", faults=faults, yes=True, quiet=True,
                                     stepped_clock=True), store)
        return outcome, store.events(outcome.run_id)


@pytest.fixture(scope="module")
def both(tmp_path_factory: pytest.TempPathFactory) -> dict[str, tuple[RunOutcome, list[dict[str, Any]]]]:
    folder = tmp_path_factory.mktemp("on-load")
    prompts = ratio_sequence("three-phase", folder)
    driven = on_load(prompts)
    return {"prompts": run(prompts, folder / "data"), "on-load": run(driven, folder / "data")}


def ratios(outcome: RunOutcome) -> dict[int, list[float]]:
    return {t["tap"]: [p["measured"] for p in t["phases"]] for t in outcome.results["ratio"]["taps"]}


def test_the_drive_gives_every_taps_true_ratio_and_the_prompts_ratios(both) -> None:
    driven, _ = both["on-load"]
    prompted, _ = both["prompts"]
    assert (driven.status, driven.exit_code) == ("passed", 0), driven.trip
    assert (prompted.status, prompted.exit_code) == ("passed", 0), prompted.trip
    true = truth(load_scenario("three-phase"))["ratio"]
    got, before = ratios(driven), ratios(prompted)
    assert sorted(got) == [int(k) for k in true["taps"]]            # every tap, -2 to +2
    for tap, measured in got.items():
        for phase, (m, want, other) in enumerate(zip(measured, true["taps"][str(tap)]["ratio"], before[tap])):
            assert abs(m / want - 1) * 100 <= TRUE_WITHIN_PCT, (tap, phase, m, want)
            assert abs(m / other - 1) * 100 <= 2 * TRUE_WITHIN_PCT, (tap, phase, m, other)
    assert all(p["clock"] == true["clock"] for t in driven.results["ratio"]["taps"] for p in t["phases"])


def test_the_drive_moves_between_readings_without_prompts_or_switching_off(both) -> None:
    _, events = both["on-load"]
    kinds = [e["kind"] for e in events]
    moves = [e for e in events if e["kind"] == "tap"]
    # The first move before energising, four while energised (-2 to +2), back to the principal tap after.
    assert [(m["data"]["tap"], m["data"]["energised"]) for m in moves] == [
        (-2, False), (-1, True), (0, True), (1, True), (2, True), (0, False)]
    assert all("read back" in m["text"] for m in moves)
    assert kinds.count("prompt") == 1                                # the wiring prompt only
    assert kinds.count("energised") == 1 and kinds.count("off") == 2    # on once; off before the prompt and at the end


def test_the_prompt_path_is_unchanged_on_a_station_with_a_drive(both) -> None:
    _, events = both["prompts"]
    prompts = [e["text"] for e in events if e["kind"] == "prompt"]
    assert sum("Set the off-circuit tap changer" in p for p in prompts) == 6    # to -2, -1, 0, +1, +2 and back to 0
    assert not any(e["kind"] == "tap" and e["data"].get("changer") == "on-load" for e in events)


def test_a_stuck_drive_trips_the_run_and_leaves_the_bay_safe(tmp_path: Path) -> None:
    sequence = on_load(ratio_sequence("three-phase", tmp_path))
    outcome, events = run(sequence, tmp_path / "data", "tap-changer-stuck")
    assert (outcome.status, outcome.exit_code) == ("tripped", 3) == ("tripped", EXIT["tripped"])
    assert outcome.safe_state is not None and outcome.safe_state["confirmed"]
    assert outcome.trip["text"] == ("instrument fault: tap_changer after 'TAPChanger:POSition -1': asked for tap -1, "
                                    "the drive stopped on tap -2")
    assert [e["data"]["tap"] for e in events if e["kind"] == "tap"] == [-2]      # the stuck move is not logged as made
