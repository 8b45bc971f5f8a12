"""The command line: a thin layer over the public API (see ARCHITECTURE's command-line contract)."""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import re
import sys
from pathlib import Path
from typing import Any, Callable

# numpy's OpenBLAS starts a pool of threads when numpy loads, and they spin for a while: about
# 0.1 s of CPU in every command on this 2-core machine. The harness's linear algebra is on
# matrices of a few rows (circuit solves, small fits), where one thread is as fast, so the pool
# is kept to one thread unless the user's environment says otherwise. Set before numpy loads.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from harness.common.errors import HarnessError, InputError, UsageError


def _floats(text: str) -> list[float]:
    try:
        values = [float(v) for v in text.split(",") if v.strip()]
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"'{text}' is not a comma-separated list of numbers") from exc
    if not values:
        raise argparse.ArgumentTypeError("the list is empty")
    return values


def _scale(text: str) -> float:
    try:
        value = float(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number") from exc
    if not 0 < value <= 10000:
        raise argparse.ArgumentTypeError("the time scale must be above 0 and at most 10000")
    return value


def _count(text: str) -> int:
    try:
        value = int(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from exc
    if not 1 <= value <= 100_000_000:
        raise argparse.ArgumentTypeError("give a whole number from 1 to 100000000")
    return value


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="harness", description="Transformer no-load and load-loss test harness.")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    run = sub.add_parser("run", help="run a test sequence (the built-in simulated bay without --station)")
    run.add_argument("sequence", type=Path)
    run.add_argument("--station", type=Path)
    run.add_argument("--sim", metavar="SCENARIO", help=(
        "the simulated unit - 'nameplate' (built from the sequence's nameplate and guarantees), a built-in "
        "scenario's name or a scenario file; without --station default: the sequence's rehearse.scenario, else "
        "'default'; with --station: rehearse that station served by the simulated bay"))
    run.add_argument("--allow-mismatch", action="store_true",
                     help="run on a simulated unit whose nameplate differs from the sequence's")
    run.add_argument("--fault", action="append", default=[], metavar="NAME", help="inject a fault (simulated bay)")
    pace = run.add_mutually_exclusive_group()
    pace.add_argument("--time-scale", type=_scale, metavar="X", help="simulated bay speed-up (default 20)")
    pace.add_argument("--stepped-clock", action="store_true",
                      help="built-in simulated bay: bay time moves only while the runner waits - as fast as the "
                           "host computes, the same readings every time (for CI)")
    run.add_argument("--yes", action="store_true", help="answer prompts (simulated bay only)")
    run.add_argument("--json", action="store_true")
    run.add_argument("--pdf", action="store_true", help="also print the report to report.pdf (headless Chromium)")
    _store_option(run)

    chk = sub.add_parser("check", help="validate a sequence (or every sequence in a folder) against a station; "
                                       "nothing is energised")
    chk.add_argument("sequence", type=Path, metavar="SEQUENCE_OR_DIR")
    chk.add_argument("--station", type=Path)
    chk.add_argument("--sim", metavar="SCENARIO",
                     help="without --station: check against this simulated bay ('nameplate', a name or a scenario "
                          "file; default: the sequence's rehearse.scenario, else 'default')")
    chk.add_argument("--allow-mismatch", action="store_true",
                     help="accept a simulated unit whose nameplate differs from the sequence's")

    ev = sub.add_parser("evaluate", help="evaluate a record of readings taken by hand")
    ev.add_argument("record", type=Path)
    ev.add_argument("--json", action="store_true")
    ev.add_argument("--load", type=_floats, metavar="LIST", help="load fractions, e.g. 0.25,0.5,1")
    ev.add_argument("--pf", type=_floats, metavar="LIST", help="power factors, e.g. 1,0.8")
    ev.add_argument("--html", type=Path, metavar="FILE", help="also write the HTML report")

    rep = sub.add_parser("report", help="rebuild a run's reports from the store")
    rep.add_argument("run", metavar="RUN_ID_OR_DIR")
    _store_option(rep)
    rep.add_argument("--pdf", action="store_true", help="also print it to report.pdf (A4, headless Chromium)")

    app = sub.add_parser("approve", help="record a check or approval of a finished run (append-only)")
    app.add_argument("run", metavar="RUN_ID")
    app.add_argument("--by", required=True, metavar="NAME", help="who checked or approved")
    app.add_argument("--role", required=True, metavar="ROLE", help="'checked' or 'approved' fill the report's sign-off rows (only "
                     "'approved' lifts its NOT YET APPROVED mark); any other role is listed as given")
    app.add_argument("--note", metavar="TEXT")
    _store_option(app)

    runs = sub.add_parser("runs", help="list stored runs (all, or those the filters keep)")
    runs.add_argument("--json", action="store_true")
    runs.add_argument("--station", metavar="NAME", help="the station's id (HARNESS_STATION_ID) or its file's name")
    runs.add_argument("--unit", metavar="TEXT", help="units whose serial or name contains TEXT")
    runs.add_argument("--status", choices=["running", "incomplete", *_FINAL_STATUSES])
    runs.add_argument("--sequence", metavar="SHA256", help="the sequence's SHA-256 (or its start)")
    runs.add_argument("--since", type=_date, metavar="DATE", help="started on or after (UTC, YYYY-MM-DD[THH:MM])")
    runs.add_argument("--until", type=_date, metavar="DATE", help="started on or before (UTC, YYYY-MM-DD[THH:MM])")
    _store_option(runs)

    syn = sub.add_parser("sync", help="replay journals into the store; forward its runs to a lab database (--to)")
    syn.add_argument("--to", type=_url, metavar="URL", help="the lab database, e.g. postgresql://USER@HOST/DB")
    syn.add_argument("--json", action="store_true")
    _store_option(syn)

    web = sub.add_parser("web", help="read-only web view of the store: runs, a live run, designs across units")
    web.add_argument("--host", default="127.0.0.1", help="address to listen on (not loopback: needs a token)")
    web.add_argument("--port", type=int, default=8750)
    web.add_argument("--token", metavar="TEXT", help="access token (or HARNESS_WEB_TOKEN); needed off loopback")
    _store_option(web)

    sch = sub.add_parser("schema", help="JSON Schema for editors")
    sch.add_argument("which", nargs="?", default="sequence", choices=["sequence", "station", "record"])

    sim = sub.add_parser("sim", help="the simulated bay").add_subparsers(dest="sim_command", required=True, metavar="ACTION")
    serve = sim.add_parser("serve", help="serve the simulated bay on loopback sockets")
    serve.add_argument("scenario", nargs="?", default="default")
    serve.add_argument("--time-scale", type=_scale, default=1.0, metavar="X")
    serve.add_argument("--fault", action="append", default=[], metavar="NAME")
    truth = sim.add_parser("truth", help="the model's true values from its own parameters")
    truth.add_argument("scenario", nargs="?", default="default",
                       help="a scenario's name or file, or 'nameplate' followed by the sequence")
    truth.add_argument("sequence", nargs="?", type=Path, help="with 'nameplate': the sequence to build the unit from")
    truth.add_argument("--sim", dest="sim_option", metavar="SCENARIO", help="the same as the SCENARIO argument")
    truth.add_argument("--json", action="store_true")
    scen = sim.add_parser("scenario", help="write the unit and bay built from a sequence's nameplate as a "
                                           "scenario file (to stdout)")
    scen.add_argument("sequence", type=Path)

    bench = sub.add_parser("bench", help="benchmarks: each prints its figures against its goal")
    bench.add_argument("which", choices=["startup", "report", "overhead", "ramp", "sequence", "reduce", "store"])
    bench.add_argument("sequence", nargs="?", type=Path, help="the sequence (bench sequence)")
    bench.add_argument("--samples", type=_count, metavar="N", help="raw samples in the run (bench report)")
    bench.add_argument("--time-scale", type=_scale, metavar="X",
                       help="bay seconds per real second on the simulated bay (bench sequence, bench ramp)")
    bench.add_argument("--json", action="store_true")
    _store_option(bench, "the store to measure (bench store): a scratch SQLite store by default")
    return p


_FINAL_STATUSES = ("passed", "failed", "tripped", "aborted", "unsafe")  # harness.store.FINAL_STATUSES, not imported
_DATE = re.compile(r"\d{4}-\d{2}-\d{2}(T\d{2}(:\d{2}(:\d{2})?)?)?")


def _date(text: str) -> str:
    if not _DATE.fullmatch(text.strip()):
        raise argparse.ArgumentTypeError(f"'{text}' is not a UTC date or time like 2026-12-02 or 2026-12-02T14:30")
    return text.strip()


def _url(text: str) -> str:
    if not text.strip():
        raise argparse.ArgumentTypeError("give the store's URL, e.g. sqlite:///runs/harness.sqlite")
    return text.strip()


def _store_option(parser: argparse.ArgumentParser, text: str | None = None) -> None:
    parser.add_argument("--store", type=_url, metavar="URL", help=text or "the store: sqlite:///PATH or postgresql://USER@HOST/DB "
                        "(default: HARNESS_STORE, else harness.sqlite in the data folder)")


def _open_store(args: argparse.Namespace) -> Any:
    from harness.store import Store
    return Store(url=args.store)


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    handler: Callable[[argparse.Namespace], int] = _COMMANDS[args.command]
    try:
        return handler(args)
    except InputError as exc:
        print(str(exc), file=sys.stderr)
        return 2
    except HarnessError as exc:
        print(f"harness: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        # Outside a run's steps (those end in the safe state themselves): nothing is energised here.
        print("harness: interrupted", file=sys.stderr)
        return 4


def _emit(document: Any) -> None:
    sys.stdout.write(json.dumps(document, indent=2, default=str, allow_nan=False) + "\n")


def cmd_run(args: argparse.Namespace) -> int:
    from harness.runner.run import RunOptions, execute
    from harness.runner.signals import StopSignals
    from harness.runner.summary import print_outcome

    # At a terminal, a run that stopped shows its outcome at once; its report follows in the background.
    options = RunOptions(args.sequence, args.station, args.sim, tuple(args.fault), args.time_scale, args.stepped_clock,
                         args.yes, quiet=args.json, defer_stopped_report=not args.json, pdf=args.pdf,
                         allow_mismatch=args.allow_mismatch)
    if args.pdf:
        from harness.report.pdf import find_chromium
        find_chromium()  # no browser: say so before anything is begun
    _check_faults(options)
    from harness.runner.reporting import write_in_background
    store = _open_store(args)
    # From here until the outcome is printed, a stop signal stops only the steps: it can never
    # cut the safe state, the run's record or its report short, nor change a finished run's exit code.
    with StopSignals() as signals:
        try:
            outcome = execute(options, store, signals)
        finally:
            _close_after_run(store)
        if args.json:
            _emit(outcome.as_dict())
        else:
            print_outcome(outcome)
            if outcome.report is None and outcome.journal is None:
                report, _ = write_in_background(store, outcome.run_id, pdf=args.pdf)
                print(f"  report: being written to {report} (in the background)")
        if args.pdf and outcome.report is not None:
            _print_run_pdf(Path(outcome.report), quiet=args.json)
    return outcome.exit_code


def _print_run_pdf(report: Path, quiet: bool) -> None:
    """The run's outcome stands whatever happens here: a PDF that cannot be printed is said, and
    `harness report RUN_ID --pdf` tries again."""
    from harness.report.pdf import print_pdf
    try:
        path = print_pdf(report)
    except HarnessError as exc:
        print(f"harness: the PDF was not written: {exc}", file=sys.stderr)
        return
    if not quiet:
        print(f"  pdf:    {path}")


def _close_after_run(store: Any) -> None:
    """A store that failed during the run fails again here; the run's outcome stands and is printed."""
    try:
        store.close()
    except HarnessError as exc:
        print(f"harness: {exc}", file=sys.stderr)


def _check_faults(options: Any) -> None:
    from harness.sim.faults import FAULTS
    for name in options.faults:
        if name not in FAULTS:
            raise UsageError(f"--fault: unknown fault '{name}'; known: {', '.join(sorted(FAULTS))}")
    if options.faults and options.station is not None and options.scenario is None:
        raise UsageError("--fault injects into the simulated bay; drop --station, or give --sim to rehearse the "
                         "station on the simulated bay")


def cmd_check(args: argparse.Namespace) -> int:
    from harness.runner.prepare import RunOptions, prepare
    if args.sequence.is_dir() and args.sequence.suffix not in (".yaml", ".yml"):
        return _check_folder(args)  # a folder named like a sequence file is refused as one
    prepared = prepare(RunOptions(args.sequence, args.station, args.sim, allow_mismatch=args.allow_mismatch))
    steps = len(prepared.sequence.steps)
    print(f"{args.sequence}: valid against {_bay_name(prepared)} ({steps} steps); nothing was energised")
    for line in prepared.calibration:
        print(f"  {line}")
    return 0


def _bay_name(prepared: Any) -> str:
    if prepared.scenario_name is None:
        return prepared.station_file
    return f"{prepared.station_file} (scenario {prepared.scenario_name})"


def _check_folder(args: argparse.Namespace) -> int:
    """Every sequence in the folder: each valid one on a line, each refusal as its own lines; exit 2 if any."""
    from harness.runner.folder import sequence_files
    from harness.runner.prepare import RunOptions, prepare
    files = sequence_files(args.sequence)
    if not files:
        raise UsageError(f"{args.sequence}: no sequence files (*.yaml, *.yml) in this folder")
    invalid = 0
    for path in files:
        try:
            prepared = prepare(RunOptions(path, args.station, args.sim, allow_mismatch=args.allow_mismatch))
        except InputError as exc:
            invalid += 1
            print(str(exc), file=sys.stderr)
            continue
        except HarnessError as exc:
            invalid += 1
            print(f"{path}: {exc}", file=sys.stderr)
            continue
        print(f"{path}: valid against {_bay_name(prepared)} ({len(prepared.sequence.steps)} steps)")
    print(f"{len(files) - invalid} of {len(files)} sequences valid; nothing was energised")
    return 2 if invalid else 0


def cmd_evaluate(args: argparse.Namespace) -> int:
    from harness.calc import evaluate, load_record
    record = load_record(args.record)
    try:
        results = evaluate(record, loads=args.load, power_factors=args.pf)
    except ValueError as exc:
        raise UsageError(f"--load/--pf: {exc}") from exc
    if args.html:
        from harness.runner.reporting import write_evaluation_report
        write_evaluation_report(args.record, record, results, args.html)
    if args.json:
        _emit(results.to_dict())
    else:
        from rich.console import Console
        from harness.calc.table import render_results
        render_results(results, Console())
    return 0


def cmd_report(args: argparse.Namespace) -> int:
    from harness.runner.reporting import write_run_reports
    from harness.store.database import store_url
    from harness.store.reader import open_reader
    # a SQLite store is read without SQLAlchemy (see harness.store.reader); any other opens as Store
    store = open_reader(store_url(args.store)) or _open_store(args)
    try:
        run_id = store.resolve(Path(args.run).name if Path(args.run).is_dir() else args.run)
        journal = store.journal(run_id)
        if journal is not None:
            print(f"harness: the store failed during run {run_id}; this report lacks what is in {journal}",
                  file=sys.stderr)
        path = write_run_reports(store, run_id)
    finally:
        store.close()
    print(path)
    if args.pdf:
        from harness.report.pdf import print_pdf
        print(print_pdf(path))
    return 0


def cmd_approve(args: argparse.Namespace) -> int:
    store = _open_store(args)
    try:
        run_id = store.resolve(args.run)
        row = store.approve(run_id, name=args.by, role=args.role, note=args.note)
    finally:
        store.close()
    print(f"run {run_id}: {row['role']} by {row['name']} at {row['approved']} "
          f"(results sha256 {row['results_sha256'][:16]}...); `harness report {run_id}` shows it")
    return 0


def cmd_runs(args: argparse.Namespace) -> int:
    store = _open_store(args)
    try:
        rows = store.runs(station=args.station, unit=args.unit, status=args.status, sequence=args.sequence,
                          since=args.since, until=args.until)
    finally:
        store.close()
    if args.json:
        _emit(rows)
        return 0
    from rich.console import Console
    from rich.table import Table
    table = Table()
    for column in ("run_id", "status", "exit", "samples", "started (UTC)", "station", "unit"):
        table.add_column(column, no_wrap=True)
    for r in rows:
        started = str(r["started"] or "")[:19].replace("T", " ")
        exit_code = "" if r.get("exit_code") is None else str(r["exit_code"])
        table.add_row(r["run_id"], r["status"], exit_code, str(r["samples"]), started, str(r.get("station_id") or ""),
                      str(r.get("unit") or ""))
    console = Console()
    if not console.is_terminal:
        console = Console(width=120)  # a pipe or a file: no terminal width to fit
    console.print(table)
    for r in rows:
        if r.get("journal"):
            console.print(f"run {r['run_id']}: the store failed during this run; what it could not take "
                          f"is in {r['journal']}", soft_wrap=True)
    return 0


def cmd_sync(args: argparse.Namespace) -> int:
    from harness.store import Store
    from harness.store.sync import sync
    with contextlib.ExitStack() as stores:
        source = stores.enter_context(_open_store(args))
        target = stores.enter_context(Store(source.folder, url=args.to)) if args.to else None
        if target is not None and target.url == source.url:
            raise UsageError("--to names the store sync reads from; give the lab database")
        done = sync(source, target)
    if args.json:
        _emit(done)
        return 0
    for line in done:
        samples = "" if line.get("samples") is None else f" ({line['samples']} samples)"
        print(f"{line['run_id']}: {line['action']}{samples}")
    print(f"sync: {len(done)} run(s) touched" + (f"; {target.path} is up to date" if target is not None else ""))
    return 0


def cmd_web(args: argparse.Namespace) -> int:
    from harness.web.server import WebServer
    with _open_store(args) as store:
        try:
            server = WebServer(store, args.host, args.port, args.token)
        except OSError as exc:
            raise UsageError(f"harness web: cannot listen on {args.host}:{args.port}: {exc.strerror or exc}") from exc
        print(f"harness web: {server.address} (read-only; Ctrl-C stops it)", flush=True)
        try:
            server.serve_forever()
        except KeyboardInterrupt:
            pass
        finally:
            server.server_close()
    return 0


def cmd_schema(args: argparse.Namespace) -> int:
    from harness.config.schema import schema
    _emit(schema(args.which))
    return 0


def cmd_sim(args: argparse.Namespace) -> int:
    if args.sim_command == "scenario":
        sys.stdout.write(_nameplate_scenario(args.sequence).text)
        return 0
    if args.sim_command == "truth":
        from harness.sim.scenario import load_scenario
        from harness.sim.truth import truth
        name, sequence = args.scenario, args.sequence
        if args.sim_option is not None:
            # harness sim truth --sim nameplate SEQUENCE: the positional is then the sequence
            if sequence is not None:
                raise UsageError("sim truth: give the scenario once (as SCENARIO or --sim)")
            name, sequence = args.sim_option, None if args.scenario == "default" else Path(args.scenario)
        if name == "nameplate":
            if sequence is None:
                raise UsageError("sim truth nameplate: give the sequence, e.g. harness sim truth nameplate SEQUENCE")
            scenario = _nameplate_scenario(sequence).scenario
        elif sequence is not None:
            raise UsageError("sim truth: a sequence is only read with 'nameplate'")
        else:
            scenario = load_scenario(name)
        document = truth(scenario)
        if args.json:
            _emit(document)
        else:
            print(json.dumps(document, indent=2))
        return 0
    from harness.runner.simserve import serve
    return serve(args.scenario, args.time_scale, tuple(args.fault))


def _nameplate_scenario(path: Path) -> Any:
    from harness.common.yamlio import load_file, validate
    from harness.config.sequence import Sequence
    from harness.runner.rehearsal import nameplate_scenario
    loaded = load_file(path)
    return nameplate_scenario(validate(Sequence, loaded), loaded)


def cmd_bench(args: argparse.Namespace) -> int:
    from harness.runner.bench import run_benchmark
    if args.which == "sequence" and args.sequence is None:
        raise UsageError("bench sequence: give the sequence file, e.g. sequences/routine_single_phase.yaml")
    if args.sequence is not None and args.which != "sequence":
        raise UsageError(f"bench {args.which} takes no sequence file")
    if args.samples is not None and args.which != "report":
        raise UsageError("--samples is for bench report")
    if args.store is not None and args.which != "store":
        raise UsageError("--store is for bench store")
    if args.time_scale is not None and args.which not in ("sequence", "ramp"):
        raise UsageError("--time-scale is for bench sequence and bench ramp")
    figures = run_benchmark(args.which, samples=args.samples, sequence=args.sequence, store=args.store,
                            time_scale=args.time_scale)
    if args.json:
        _emit(figures)
    else:
        for key, value in figures.items():
            print(f"{key:>28}: {value}")
    return 0


_COMMANDS: dict[str, Callable[[argparse.Namespace], int]] = {
    "run": cmd_run, "check": cmd_check, "evaluate": cmd_evaluate, "report": cmd_report, "approve": cmd_approve,
    "runs": cmd_runs, "sync": cmd_sync, "web": cmd_web, "schema": cmd_schema, "sim": cmd_sim, "bench": cmd_bench,
}

if __name__ == "__main__":
    sys.exit(main())
