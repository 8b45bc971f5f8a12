"""Errors of the store; each says what is wrong and where, so the CLI prints it without a traceback."""

from __future__ import annotations

from harness.common.errors import HarnessError


class StoreError(HarnessError):
    """The store cannot do what was asked (bad input, unreadable file, closed store, ...)."""


class UnknownRunError(StoreError):
    """No stored run has the given id or id prefix."""


class AmbiguousRunError(StoreError):
    """An id prefix matches more than one stored run."""
