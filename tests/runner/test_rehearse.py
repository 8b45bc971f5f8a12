"""Rehearsal of sequences for units unlike the demo on a unit built from their own nameplate: each
completes and meets its own guarantees (losses within 1 %, impedance within 2 %, at the
reference temperature); a sequence on a simulated unit of another nameplate is refused."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from harness.common.errors import InputError
from harness.runner.prepare import RunOptions, prepare
from tests.runner.conftest import ROOT, harness, run_json

SEQUENCES = ROOT / "sequences"
UNITS = ["routine_3kva_single_phase.yaml", "routine_10kva_11kv_single_phase.yaml",
         "routine_2500kva_single_phase.yaml", "routine_60hz_single_phase.yaml"]


@pytest.fixture(scope="module", params=UNITS, ids=[u.split("_")[1] for u in UNITS])
def rehearsal(request, tmp_path_factory):
    data = tmp_path_factory.mktemp("rehearse")
    code, doc, _ = run_json(str(SEQUENCES / request.param), "--sim", "nameplate", "--yes", "--stepped-clock",
                            data=data)
    return request.param, code, doc


def _guarantees(name: str) -> dict:
    from harness.common.yamlio import load_file
    return load_file(SEQUENCES / name).data["guarantees"]


def _si(text: str) -> float:
    from harness.common.units import to_si
    return to_si(text, "W") if text.rstrip().endswith("W") else float(text.rstrip(" %"))


def test_rehearsal_completes(rehearsal) -> None:
    _, code, doc = rehearsal
    assert (code, doc["status"]) == (0, "passed"), (doc["trip"], doc["results"] and doc["results"]["checks"])


def test_results_meet_the_sequence_guarantees(rehearsal) -> None:
    name, _, doc = rehearsal
    g, r = _guarantees(name), doc["results"]
    assert r["no_load"]["loss_W"] == pytest.approx(_si(g["no_load_loss"]), rel=0.01)
    assert r["load"]["loss_ref_W"] == pytest.approx(_si(g["load_loss"]), rel=0.01)
    assert r["load"]["impedance_ref_pct"] == pytest.approx(_si(g["impedance"]), rel=0.02)


def test_a_sequence_on_a_unit_of_another_nameplate_is_refused(tmp_path: Path) -> None:
    seq = SEQUENCES / "routine_10kva_11kv_single_phase.yaml"
    proc = harness("run", str(seq), "--sim", "default", "--yes", data=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    [line] = proc.stderr.strip().splitlines()
    transformer_line = seq.read_text().splitlines().index("  rated_power: 10 kVA") + 1   # the nameplate's first line
    assert line.startswith(f"{seq}:{transformer_line}:")
    assert "differs from the simulated unit of scenario 'default'" in line
    assert "rating 10 kVA against 50 kVA" in line and "--sim nameplate" in line and "--allow-mismatch" in line


def test_the_refusal_names_the_scenario_that_fits(tmp_path: Path) -> None:
    proc = harness("check", str(SEQUENCES / "routine_large_single_phase.yaml"), "--sim", "default", data=tmp_path)
    assert proc.returncode == 2 and "--sim large or --sim nameplate" in proc.stderr


def test_allow_mismatch_accepts_it_on_purpose() -> None:
    seq = SEQUENCES / "routine_10kva_11kv_single_phase.yaml"
    prepared = prepare(RunOptions(seq, scenario="default", allow_mismatch=True))
    assert prepared.scenario.transformer.rated_power == 50e3


def test_the_sequence_names_its_own_scenario() -> None:
    assert prepare(RunOptions(SEQUENCES / "routine_three_phase.yaml")).scenario_name == "three-phase"
    assert prepare(RunOptions(SEQUENCES / "routine_3kva_single_phase.yaml")).scenario_name == "nameplate"
    assert prepare(RunOptions(SEQUENCES / "routine_single_phase.yaml")).scenario_name == "default"


def test_a_scenario_file_beside_the_sequence(tmp_path: Path) -> None:
    """sim scenario writes the unit; a sequence naming that file (relative to itself) runs on it."""
    proc = harness("sim", "scenario", str(SEQUENCES / "routine_3kva_single_phase.yaml"), data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    (tmp_path / "unit.yaml").write_text(proc.stdout, encoding="utf-8")
    text = (SEQUENCES / "routine_3kva_single_phase.yaml").read_text()
    (tmp_path / "seq.yaml").write_text(text.replace("rehearse: {scenario: nameplate}", "rehearse: {scenario: unit.yaml}"))
    prepared = prepare(RunOptions(tmp_path / "seq.yaml"))
    built = prepare(RunOptions(SEQUENCES / "routine_3kva_single_phase.yaml"))
    assert prepared.scenario == built.scenario and prepared.scenario_name == str(tmp_path / "unit.yaml")


def test_sim_truth_of_the_nameplate_unit(tmp_path: Path) -> None:
    seq = str(SEQUENCES / "routine_2500kva_single_phase.yaml")
    first = harness("sim", "truth", "nameplate", seq, "--json", data=tmp_path)
    second = harness("sim", "truth", "--sim", "nameplate", seq, "--json", data=tmp_path)
    assert first.returncode == second.returncode == 0, first.stderr + second.stderr
    truth = json.loads(first.stdout)
    assert truth == json.loads(second.stdout)
    assert truth["no_load"]["loss_W"] == pytest.approx(2600.0, rel=1e-4)
    assert truth["load"]["loss_ref_W"] == pytest.approx(20e3, rel=1e-6)
    assert truth["load"]["impedance_ref_pct"] == pytest.approx(7.0, rel=1e-6)
    assert harness("sim", "truth", "nameplate", data=tmp_path).returncode == 2


def test_guarantees_no_unit_can_have_are_refused_at_the_guarantees(tmp_path: Path) -> None:
    text = (SEQUENCES / "routine_10kva_11kv_single_phase.yaml").read_text()
    path = tmp_path / "seq.yaml"
    path.write_text(text.replace("impedance: 4 %", "impedance: 2 %"))
    with pytest.raises(InputError) as info:
        prepare(RunOptions(path))
    assert info.value.line == text.splitlines().index("  impedance: 4 %") + 1
    assert "not above the resistive part" in info.value.message


def test_check_a_folder(tmp_path: Path) -> None:
    proc = harness("check", str(SEQUENCES), data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert f"{len(list(SEQUENCES.glob('*.yaml')))} of {len(list(SEQUENCES.glob('*.yaml')))} sequences valid" in proc.stdout

    folder = tmp_path / "lab"
    folder.mkdir()
    shutil.copy(SEQUENCES / "routine_3kva_single_phase.yaml", folder / "good.yaml")
    (folder / "broken.yaml").write_text((SEQUENCES / "routine_3kva_single_phase.yaml").read_text()
                                        .replace("limits: {current: 3 A}", "limits: {current: 30 A}", 1))
    shutil.copy(ROOT / "sim_configs" / "default.yaml", folder / "a-scenario.yaml")   # a companion, not a sequence
    proc = harness("check", str(folder), data=tmp_path)
    assert proc.returncode == 2
    assert str(folder / "broken.yaml") in proc.stderr and "good.yaml" not in proc.stderr
    assert f"{folder / 'good.yaml'}: valid" in proc.stdout and "1 of 2 sequences valid" in proc.stdout


def test_a_three_phase_unit_from_its_nameplate(tmp_path: Path) -> None:
    """The 400 kVA Dyn11 sequence on the unit built from its nameplate (on a stepped clock: the
    no-load ramp's guard extrapolates from the last two readings, which a loaded host would put
    far apart on a fast real clock)."""
    name = "routine_three_phase.yaml"
    code, doc, _ = run_json(str(SEQUENCES / name), "--sim", "nameplate", "--yes", "--stepped-clock", data=tmp_path)
    assert (code, doc["status"]) == (0, "passed"), doc["trip"]
    g, r = _guarantees(name), doc["results"]
    assert r["no_load"]["loss_W"] == pytest.approx(_si(g["no_load_loss"]), rel=0.01)
    assert r["load"]["loss_ref_W"] == pytest.approx(_si(g["load_loss"]), rel=0.01)
    assert r["load"]["impedance_ref_pct"] == pytest.approx(_si(g["impedance"]), rel=0.02)
