"""Public names of a package imported on first use (PEP 562 module ``__getattr__``)."""

from __future__ import annotations

import importlib
from typing import Any, Callable


def lazy_names(package: str, names: dict[str, str], namespace: dict[str, Any]) -> Callable[[str], Any]:
    """A module ``__getattr__`` for ``package``: each of ``names`` (name -> module) is imported
    when first asked for and then kept in ``namespace`` (the package's globals)."""
    def __getattr__(name: str) -> Any:
        if name not in names:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(names[name]), name)
        namespace[name] = value
        return value
    return __getattr__
