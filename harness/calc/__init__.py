"""The calculation core: the test record, its evaluation and the results (pure, no I/O).

Imports nothing of the product but ``harness.common``. The names below are imported on first
use, so reading a record's model (``harness check``) does not load the whole evaluation.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

_LAZY = {"evaluate": "harness.calc.evaluate", "Record": "harness.calc.record",
         "load_record": "harness.calc.record", "Results": "harness.calc.results"}

if TYPE_CHECKING:
    from harness.calc.evaluate import evaluate
    from harness.calc.record import Record, load_record
    from harness.calc.results import Results


def __getattr__(name: str) -> Any:
    if name not in _LAZY:
        raise AttributeError(f"module 'harness.calc' has no attribute {name!r}")
    value = getattr(importlib.import_module(_LAZY[name]), name)
    globals()[name] = value
    return value


__all__ = ["Record", "Results", "evaluate", "load_record"]
