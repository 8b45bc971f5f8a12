"""What a person sees at the end of ``harness run`` (without --json)."""

from __future__ import annotations

from rich.console import Console

from harness.runner.run import RunOutcome

_VERDICT = {
    "passed": "[bold green]PASSED[/] - completed, every check within tolerance",
    "failed": "[bold yellow]FAILED[/] - completed, the unit is outside a tolerance",
    "tripped": "[bold red]TRIPPED[/] - stopped on a limit or fault; safe state confirmed",
    "aborted": "[bold yellow]ABORTED[/] - stopped by the operator; safe state confirmed",
    "unsafe": "[bold red on white]UNSAFE[/] - DE-ENERGISATION NOT CONFIRMED: THE BAY MAY STILL BE LIVE",
}


def print_outcome(outcome: RunOutcome) -> None:
    console = Console(highlight=False)
    console.print(f"\nrun {outcome.run_id}: {_VERDICT[outcome.status]}")
    if outcome.trip:
        console.print(f"  trip: {outcome.trip['text']} (step: {outcome.trip.get('step')})")
    for sentence in failed_checks(outcome.results):
        console.print(f"  [bold]failed:[/] {sentence}")
    if outcome.results:
        from harness.calc.table import render_results_dict
        render_results_dict(outcome.results, console)
    for note in outcome.notes:
        console.print(f"  [yellow]note:[/] {note}")
    console.print(f"  samples kept: {outcome.samples}")
    if outcome.journal:
        console.print(f"  [bold]journal:[/] {outcome.journal}  (what the store could not take)")
    if outcome.report:
        console.print(f"  report: {outcome.report}")
    console.print(f"  store:  {outcome.database}")


def failed_checks(results: dict | None) -> list[str]:
    """One sentence per failed check: what, and the check's own note (where and by how much)."""
    found = [c for c in (results or {}).get("checks", []) + (results or {}).get("compliance", []) if not c.get("passed")]
    return [f"{str(c.get('quantity', 'check')).replace('_', ' ')} outside its tolerance"
            + (f": {c['note']}" if c.get("note") else "") for c in found]
