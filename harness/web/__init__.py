"""``harness web``: a read-only view of a store (a station's, or the lab database) in a browser.

Pages: the run list with filters, a run (its summary, results and report), a live run (the
latest readings and the trace, updated every second), and a design (every unit of one
nameplate: mean, spread, control limits, trends and histograms). See :mod:`harness.web.server`.
"""
