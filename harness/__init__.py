"""Transformer test harness: no-load and load-loss tests on SCPI instruments, evaluated and reported.

The few things a script needs::

    from harness import Record, evaluate, load_record
    results = evaluate(load_record("readings.yaml")).to_dict()
"""

__version__ = "0.1.0"

from harness.calc import Record, Results, evaluate, load_record  # noqa: E402
from harness.common.errors import HarnessError, InputError  # noqa: E402

__all__ = sorted(["HarnessError", "InputError", "Record", "Results", "__version__", "evaluate", "load_record"])
