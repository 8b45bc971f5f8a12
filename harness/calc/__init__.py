"""The calculation core: the test record, its evaluation and the results (pure, no I/O).

Imports nothing of the product but ``harness.common``. The names below are imported on first
use, so reading a record's model (``harness check``) does not load the whole evaluation.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from harness.common.lazy import lazy_names

_LAZY = {"evaluate": "harness.calc.evaluate", "Record": "harness.calc.record",
         "load_record": "harness.calc.record", "Results": "harness.calc.results"}

if TYPE_CHECKING:
    from harness.calc.evaluate import evaluate
    from harness.calc.record import Record, load_record
    from harness.calc.results import Results


__getattr__ = lazy_names("harness.calc", _LAZY, globals())


__all__ = ["Record", "Results", "evaluate", "load_record"]
