"""The calculation core: the test record, its evaluation and the results (pure, no I/O).

Imports nothing of the product but ``harness.common``.
"""

from harness.calc.evaluate import evaluate
from harness.calc.record import Record, load_record
from harness.calc.results import Results

__all__ = ["Record", "Results", "evaluate", "load_record"]
