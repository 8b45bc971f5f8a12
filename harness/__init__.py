"""Transformer test harness: no-load and load-loss tests on SCPI instruments, evaluated and reported.

The few things a script needs::

    from harness import Record, evaluate, load_record
    results = evaluate(load_record("readings.yaml")).to_dict()

The names are imported on first use: a command that never evaluates (``harness --help``,
``harness runs``) does not pay for the calculation core, pydantic or pint at start-up.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from harness.common.lazy import lazy_names

__version__ = "0.1.0"

_LAZY = {"Record": "harness.calc", "Results": "harness.calc", "evaluate": "harness.calc",
         "load_record": "harness.calc", "HarnessError": "harness.common.errors", "InputError": "harness.common.errors"}

if TYPE_CHECKING:
    from harness.calc import Record, Results, evaluate, load_record
    from harness.common.errors import HarnessError, InputError


__getattr__ = lazy_names("harness", _LAZY, globals())


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})


__all__ = ["HarnessError", "InputError", "Record", "Results", "__version__", "evaluate", "load_record"]
