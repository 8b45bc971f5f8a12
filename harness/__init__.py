"""Transformer test harness: no-load and load-loss tests on SCPI instruments, evaluated and reported."""

__version__ = "0.1.0"
