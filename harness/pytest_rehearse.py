"""pytest plugin: every sequence of a folder rehearsed on the simulated bay, one test item each.

``pytest --rehearse sequences/ --junitxml=out.xml`` collects each sequence file of the folder
(``harness.runner.folder``) as an item that checks it and runs it as ``harness run SEQUENCE
--yes --json`` on the simulated unit it names (``rehearse: {scenario: ...}``) or, naming none,
on the unit built from its own nameplate and guarantees. An item fails when the sequence is
invalid (exit 2), completes outside its guarantees' tolerances (1), trips (3), is aborted (4) or
ends with the safe state not confirmed (5). Registered through the ``pytest11`` entry point;
inactive unless ``--rehearse`` is given. Each run is a child process, so one sequence cannot
take the session down, and imports nothing heavy into pytest.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Any

import pytest

EXIT_MEANING = {1: "completed outside its guarantees' tolerances", 2: "invalid (nothing was energised)",
                3: "tripped (safe state confirmed)", 4: "aborted (safe state confirmed)",
                5: "ENDED UNSAFE: the safe state was not confirmed"}
DEFAULT_SIM = "nameplate"
# By default a rehearsal runs on the stepped clock (``harness run --stepped-clock``): its outcome
# is the same on an idle host and a loaded CI runner. On a fast real clock a loaded host puts the
# bay seconds between two readings far apart, and the no-load ramp's guard, which extrapolates two
# more steps like the last, may then stop a ramp that would have been fine.


def pytest_addoption(parser: pytest.Parser) -> None:
    group = parser.getgroup("rehearse", "rehearse transformer test sequences on the simulated bay")
    group.addoption("--rehearse", action="append", default=[], metavar="DIR",
                    help="rehearse every sequence in DIR on the simulated bay, one test item each (repeatable)")
    group.addoption("--rehearse-sim", default=DEFAULT_SIM, metavar="SCENARIO",
                    help="the simulated unit of sequences that name none in rehearse.scenario "
                         "(default: nameplate, a unit built from the sequence's own nameplate)")
    group.addoption("--rehearse-time-scale", type=float, default=None, metavar="X",
                    help="run the simulated bay on the real clock at this speed-up (default: the stepped "
                         "clock, as fast as the host computes, the same outcome every time)")
    group.addoption("--rehearse-timeout", type=float, default=1800.0, metavar="SECONDS",
                    help="real seconds after which a rehearsal counts as stuck (default 1800)")
    group.addoption("--rehearse-data", type=Path, metavar="DIR",
                    help="where the runs' store and reports go (default: HARNESS_DATA, else a new temp folder)")


@pytest.hookimpl(tryfirst=True)
def pytest_load_initial_conftests(early_config: pytest.Config, args: list[str], parser: pytest.Parser) -> None:
    """Without test paths on the command line, the folders are the initial paths: the project's
    own testpaths (and their conftest files, which may need the project's test extras) are not
    loaded for a rehearsal."""
    namespace = early_config.known_args_namespace
    folders = getattr(namespace, "rehearse", None)
    if folders and not getattr(namespace, "file_or_dir", None):
        namespace.file_or_dir = list(folders)


def _folders(config: pytest.Config) -> list[Path]:
    return [Path(d).resolve() for d in config.getoption("rehearse")]


def pytest_configure(config: pytest.Config) -> None:
    folders = _folders(config)
    if not folders:
        return
    for folder in folders:
        if not folder.is_dir():
            raise pytest.UsageError(f"--rehearse {folder}: not a folder")
    # The folders are what is collected: without test paths on the command line, only them
    # (not the project's own testpaths); with paths, them as well.
    given = config.args_source == pytest.Config.ArgsSource.ARGS
    extra = [str(f) for f in folders if str(f) not in config.args]
    config.args = (list(config.args) if given else []) + extra
    data = config.getoption("rehearse_data") or (Path(os.environ["HARNESS_DATA"]) if os.environ.get("HARNESS_DATA")
                                                 else Path(tempfile.mkdtemp(prefix="harness-rehearse-")))
    config.stash[_DATA] = data


_DATA = pytest.StashKey[Path]()


def pytest_collect_file(file_path: Path, parent: pytest.Collector) -> pytest.Collector | None:
    folders = _folders(parent.config)
    if not folders or file_path.resolve().parent not in folders:
        return None
    from harness.runner.folder import SUFFIXES, is_companion
    if file_path.suffix not in SUFFIXES or is_companion(file_path):
        return None
    return SequenceFile.from_parent(parent, path=file_path)


def pytest_report_header(config: pytest.Config) -> list[str] | None:
    if not _folders(config):
        return None
    return [f"rehearse: {', '.join(map(str, _folders(config)))} on the simulated bay "
            f"(runs in {config.stash[_DATA]})"]


class SequenceFile(pytest.File):
    def collect(self):  # type: ignore[override]
        yield RehearsalItem.from_parent(self, name="rehearse")


class RehearsalFailed(Exception):
    """A sequence that did not pass its rehearsal: the message says how."""


class RehearsalItem(pytest.Item):
    def runtest(self) -> None:
        scenario = self._scenario()
        scale = self.config.getoption("rehearse_time_scale")
        command = [sys.executable, "-m", "harness.cli", "run", str(self.path), "--yes", "--json",
                   *(["--stepped-clock"] if scale is None else ["--time-scale", f"{scale:g}"])]
        if scenario is not None:
            command += ["--sim", scenario]
        env = {**os.environ, "HARNESS_DATA": str(self.config.stash[_DATA])}
        try:
            proc = subprocess.run(command, capture_output=True, text=True, env=env,
                                  timeout=self.config.getoption("rehearse_timeout"))
        except subprocess.TimeoutExpired as exc:
            raise RehearsalFailed(f"no outcome after {exc.timeout:g} s: the rehearsal is stuck") from exc
        self.user_properties.append(("exit_code", proc.returncode))
        self.user_properties.append(("scenario", scenario or "the sequence's own"))
        outcome = _outcome(proc.stdout)
        if outcome:
            self._record(outcome)
        if proc.returncode != 0:
            raise RehearsalFailed(_explain(proc.returncode, outcome, proc.stderr))

    def _scenario(self) -> str | None:
        """--sim for this sequence: None when it names its own (an invalid sequence is refused by the run)."""
        from harness.common.errors import HarnessError
        from harness.common.yamlio import load_file
        try:
            data = load_file(self.path).data
        except HarnessError:
            return self.config.getoption("rehearse_sim")
        if isinstance(data, dict) and isinstance(data.get("rehearse"), dict) and "scenario" in data["rehearse"]:
            return None
        return self.config.getoption("rehearse_sim")

    def _record(self, outcome: dict[str, Any]) -> None:
        self.user_properties.append(("status", outcome.get("status")))
        self.user_properties.append(("run_folder", outcome.get("folder")))
        for check in (outcome.get("results") or {}).get("checks") or []:
            self.user_properties.append((check["quantity"], f"{check['value']:.6g} against {check['guaranteed']:.6g} "
                                         f"{check['unit']}: {'passed' if check['passed'] else 'FAILED'}"))

    def repr_failure(self, excinfo: pytest.ExceptionInfo[BaseException], style: Any = None) -> str:
        if isinstance(excinfo.value, RehearsalFailed):
            return str(excinfo.value)
        return super().repr_failure(excinfo)

    def reportinfo(self) -> tuple[Path, int, str]:
        return self.path, 0, f"rehearse {self.path.name}"


def _outcome(stdout: str) -> dict[str, Any] | None:
    try:
        document = json.loads(stdout)
    except ValueError:
        return None
    return document if isinstance(document, dict) else None


def _explain(code: int, outcome: dict[str, Any] | None, stderr: str) -> str:
    lines = [f"{EXIT_MEANING.get(code, f'exit code {code}')} (exit {code})"]
    if outcome:
        if outcome.get("trip"):
            trip = outcome["trip"]
            lines.append(f"trip: {trip.get('text', trip) if isinstance(trip, dict) else trip}")
        for check in (outcome.get("results") or {}).get("checks") or []:
            if not check["passed"]:
                lines.append(f"{check['quantity']}: {check['value']:.6g} {check['unit']} against "
                             f"{check['guaranteed']:.6g} (limit {check['limit']}; {check['source']})")
        if outcome.get("folder"):
            lines.append(f"report: {outcome['folder']}")
    if stderr.strip():
        lines.append(stderr.strip())
    return "\n".join(lines)
