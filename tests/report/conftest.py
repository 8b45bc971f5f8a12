"""Shared fixtures of the report tests: the demo bundles and their pages."""

from __future__ import annotations

import pytest

from harness.report import render_html
from harness.report.demo import demo_bundle, demo_tripped_bundle


@pytest.fixture(scope="module")
def demo():
    return demo_bundle()


@pytest.fixture(scope="module")
def demo_html(demo) -> str:
    return render_html(demo)


@pytest.fixture(scope="module")
def tripped_html() -> str:
    return render_html(demo_tripped_bundle())
