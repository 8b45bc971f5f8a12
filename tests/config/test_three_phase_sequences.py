"""Three-phase sequences: valid against the simulated three-phase bays, and a nameplate whose
vector group contradicts its connections refused at the place in the file (IEC 60076-1 Annex D
notation, recalled: HV letter in capitals, LV in lower case, N/n a neutral brought out)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
SEQUENCES = ROOT / "sequences"


def check(path: Path, scenario: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "harness.cli", "check", str(path), "--sim", scenario],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)


@pytest.mark.parametrize("name, scenario", [("routine_three_phase.yaml", "three-phase"),
                                            ("routine_large_three_phase.yaml", "large-three-phase")])
def test_example_sequences_are_valid_against_their_bays(name: str, scenario: str) -> None:
    done = check(SEQUENCES / name, scenario)
    assert done.returncode == 0, done.stderr


# (what is changed, into what, the message, the line the error points at: a contradiction with
# the vector group is reported on the vector group, which is what the connections are held against)
@pytest.mark.parametrize("old, new, message, at", [
    ("hv: {rated_voltage: 11 kV, connection: delta}", "hv: {rated_voltage: 11 kV, connection: star}",
     "the vector group says delta, the hv connection says star", "vector_group:"),
    ("lv: {rated_voltage: 420 V, connection: star, neutral: true}", "lv: {rated_voltage: 420 V, connection: star}",
     "neutral brought out on the lv winding", "vector_group:"),
    ("vector_group: Dyn11", "vector_group: Dyn12", "the clock number is 0 to 11", "vector_group:"),
    ("vector_group: Dyn11", "vector_group: Dyn10", "odd", "vector_group:"),
    ("hv: {rated_voltage: 11 kV, connection: delta}", "hv: {rated_voltage: 11 kV, connection: delta, neutral: true}",
     "only a star or zigzag winding has a neutral", "hv: {"),
])
def test_a_nameplate_that_contradicts_itself_is_refused_where_it_is(tmp_path: Path, old: str, new: str,
                                                                     message: str, at: str) -> None:
    text = (SEQUENCES / "routine_three_phase.yaml").read_text(encoding="utf-8")
    assert old in text
    path = tmp_path / "unit.yaml"
    path.write_text(text.replace(old, new), encoding="utf-8")
    done = check(path, "three-phase")
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert message in done.stderr
    line = next(n for n, row in enumerate(path.read_text().splitlines(), start=1) if row.strip().startswith(at))
    assert any(row.startswith(f"{path}:{line}:") and message in row for row in done.stderr.splitlines()), done.stderr
