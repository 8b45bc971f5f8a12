"""Hostile and broken input files end in one located error and exit 2, never a hang, a traceback
or exhausted memory: alias bombs, deep nesting, devices, FIFOs, directories, oversized files.

Every CLI call runs in its own process with a generous timeout, so a regression fails the test
instead of hanging the suite; the assertions are on the outcome, never on time.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from harness.common import yamlio
from harness.common.errors import InputError
from harness.runner.sim_station import sim_station_text

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"
RECORD = ROOT / "sequences" / "records" / "single_phase_pole_mount.yaml"
TIMEOUT_S = 60  # generous: a guard answers at once; only a regression comes near this

needs_posix = pytest.mark.skipif(not hasattr(os, "mkfifo") or not Path("/dev/zero").exists(),
                                 reason="needs FIFOs and /dev/zero (POSIX)")


def alias_bomb(levels: int = 9, width: int = 9) -> str:
    """The 'billion laughs' document: each level names the one below ``width`` times."""
    lines = ["a0: &a0 [" + ", ".join(['"lol"'] * width) + "]"]
    for n in range(1, levels):
        lines.append(f"a{n}: &a{n} [" + ", ".join([f"*a{n - 1}"] * width) + "]")
    return "\n".join(lines) + "\n"


def harness(*args: str, data: Path) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "HARNESS_DATA": str(data)}
    return subprocess.run([sys.executable, "-m", "harness.cli", *args], capture_output=True, text=True,
                          env=env, timeout=TIMEOUT_S, cwd=ROOT)


def refused(proc: subprocess.CompletedProcess[str], file: str, words: str) -> None:
    """Exit 2, one line on stderr naming the file and saying what is wrong, no traceback."""
    lines = proc.stderr.strip().splitlines()
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr and len(lines) == 1, proc.stderr
    assert file in lines[0] and words in lines[0], lines[0]


@pytest.fixture
def hostile(tmp_path: Path) -> dict[str, tuple[str, str]]:
    """Name -> (path, words the message must contain). Files are made for real."""
    (tmp_path / "bomb.yaml").write_text(alias_bomb(), encoding="utf-8")
    (tmp_path / "deep.yaml").write_text("[" * 5000 + "]" * 5000 + "\n", encoding="utf-8")
    (tmp_path / "big.yaml").write_text("spec: 1\n" + "#" * (yamlio.MAX_FILE_BYTES + 10) + "\n", encoding="utf-8")
    (tmp_path / "dir.yaml").mkdir()
    os.mkfifo(tmp_path / "fifo.yaml")
    return {
        "alias-bomb": (str(tmp_path / "bomb.yaml"), f"more than {yamlio.MAX_NODES} values"),
        "deep-nesting": (str(tmp_path / "deep.yaml"), f"nested more than {yamlio.MAX_DEPTH} levels deep"),
        "oversized": (str(tmp_path / "big.yaml"), "larger than 1024 KiB"),
        "directory": (str(tmp_path / "dir.yaml"), "not a regular file but a directory"),
        "fifo": (str(tmp_path / "fifo.yaml"), "not a regular file but a FIFO"),
        "dev-zero": ("/dev/zero", "not a regular file but a character device"),
        "dev-urandom": ("/dev/urandom", "not a regular file but a character device"),
    }


@needs_posix
@pytest.mark.parametrize("case", ["alias-bomb", "deep-nesting", "oversized", "directory", "fifo", "dev-zero",
                                  "dev-urandom"])
def test_check_refuses_a_hostile_sequence(case: str, hostile: dict[str, tuple[str, str]], tmp_path: Path) -> None:
    path, words = hostile[case]
    refused(harness("check", path, data=tmp_path), path, words)


@needs_posix
@pytest.mark.parametrize("case", ["alias-bomb", "fifo", "dev-zero"])
def test_check_refuses_a_hostile_station(case: str, hostile: dict[str, tuple[str, str]], tmp_path: Path) -> None:
    path, words = hostile[case]
    refused(harness("check", str(ROUTINE), "--station", path, data=tmp_path), path, words)


@needs_posix
@pytest.mark.parametrize("case", ["alias-bomb", "deep-nesting", "fifo", "dev-urandom"])
def test_evaluate_refuses_a_hostile_record(case: str, hostile: dict[str, tuple[str, str]], tmp_path: Path) -> None:
    path, words = hostile[case]
    refused(harness("evaluate", path, data=tmp_path), path, words)


@needs_posix
@pytest.mark.parametrize("case", ["alias-bomb", "fifo"])
def test_run_refuses_a_hostile_scenario_before_energising(case: str, hostile: dict[str, tuple[str, str]],
                                                          tmp_path: Path) -> None:
    path, words = hostile[case]
    proc = harness("run", str(ROUTINE), "--sim", path, "--yes", data=tmp_path)
    refused(proc, path, words)
    assert proc.stdout == ""


@needs_posix
def test_a_station_naming_a_fifo_as_profile_is_refused_at_the_station(hostile: dict[str, tuple[str, str]],
                                                                      tmp_path: Path) -> None:
    fifo, _ = hostile["fifo"]
    station = tmp_path / "station.yaml"
    station.write_text(sim_station_text().replace("profile: generic-ac-source", f"profile: {fifo}"), encoding="utf-8")
    proc = harness("check", str(ROUTINE), "--station", str(station), data=tmp_path)
    refused(proc, f"{station}:6:", "not a regular file but a FIFO")
    assert "instruments.source.profile" in proc.stderr


# In-process checks of the loader: each fails fast even if its guard regressed.

def test_an_alias_inside_the_value_it_names_is_refused_at_the_alias() -> None:
    with pytest.raises(InputError) as caught:
        yamlio.load_text("spec: 1\nsteps: &s [1, *s]\n", "x.yaml")
    assert (caught.value.line, caught.value.column) == (2, 15)
    assert "stands inside the value it names" in caught.value.message


def test_deep_nesting_is_refused_where_it_passes_the_bound() -> None:
    with pytest.raises(InputError) as caught:
        yamlio.load_text("a:\n  " + "[" * 5000 + "]" * 5000 + "\n", "x.yaml")
    assert caught.value.line == 2 and "nested more than" in caught.value.message


def test_ordinary_anchors_and_aliases_still_load() -> None:
    loaded = yamlio.load_text("base: &lim {current: 6 A}\nsteps:\n  - limits: *lim\n  - limits: *lim\n", "x.yaml")
    assert loaded.data["steps"][1]["limits"] == {"current": "6 A"}


def test_a_nested_structure_at_the_depth_bound_loads() -> None:
    depth = yamlio.MAX_DEPTH
    assert yamlio.load_text("[" * depth + "]" * depth, "x.yaml").data is not None


@pytest.mark.parametrize("text,line,column,words", [
    ("spec: 1\nname: a\x00b\n", 2, 8, "control character U+0000"),
    ("spec: 1\nx: !!timestamp 2026-02-30\n", 2, 4, "day is out of range"),
    ("spec: " + "9" * 5000 + "\n", 1, 7, "4300 digits"),
])
def test_unreadable_values_are_located(text: str, line: int, column: int, words: str) -> None:
    with pytest.raises(InputError) as caught:
        yamlio.load_text(text, "x.yaml")
    assert (caught.value.line, caught.value.column) == (line, column) and words in caught.value.message


def test_dates_stay_text_for_the_models_to_parse() -> None:
    assert yamlio.load_text("due: 2027-03-01\n", "x.yaml").data == {"due": "2027-03-01"}


def test_a_file_that_is_not_utf8_is_located(tmp_path: Path) -> None:
    path = tmp_path / "latin1.yaml"
    path.write_bytes("spec: 1\nname: caf\u00e9\n".encode("latin-1"))
    with pytest.raises(InputError) as caught:
        yamlio.load_file(path)
    assert (caught.value.line, caught.value.column) == (2, 10) and "not UTF-8" in caught.value.message


def test_an_error_without_a_position_prints_file_and_message() -> None:
    assert str(InputError("cannot read the file", "a.yaml")) == "a.yaml: cannot read the file"
    assert str(InputError("bad", "a.yaml", 3, 4)) == "a.yaml:3:4: bad"
