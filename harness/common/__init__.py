"""The bottom layer: errors, units and YAML loading with line marks.

Everything else in the product may import from here; this package imports nothing of the
product. ``harness.calc`` imports only this package.
"""
