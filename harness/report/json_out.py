"""``results.json``: the results of a run with the metadata needed to file them."""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import Any

from harness.report.bundle import ReportBundle

FORMAT = "transformer-test-results"
FORMAT_VERSION = 1


def results_document(bundle: ReportBundle) -> dict[str, Any]:
    """The JSON document: run metadata, unit, instruments, trip, warnings and the results."""
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "run": dict(bundle.run),
        "unit": dict(bundle.unit),
        "instruments": [dict(i) for i in bundle.instruments],
        "trip": None if bundle.trip is None else dict(bundle.trip),
        "warnings": bundle.all_warnings(),
        "results": dict(bundle.results),
    }


def results_json(bundle: ReportBundle) -> str:
    # Strict JSON: a NaN or an infinity (an unfinished quantity) is written as null.
    return json.dumps(_finite(results_document(bundle)), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _finite(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, Mapping):
        return {str(k): _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    return value
