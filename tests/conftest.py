"""Suite-wide settings.

Under CI (the CI variable set, as `.ci/run` is run) hypothesis draws its examples from a fixed
seed derived from each test, so a submission's result does not depend on the luck of the draw;
local runs keep exploring new examples every time. Neither times an example.
"""

from __future__ import annotations

import os

from hypothesis import HealthCheck, settings

# No example is timed: hypothesis's per-example deadline and its too-slow health check are
# wall-clock assertions, which a loaded host fails at random.
UNTIMED = {"deadline": None, "suppress_health_check": [HealthCheck.too_slow]}
settings.register_profile("untimed", **UNTIMED)
settings.register_profile("ci", derandomize=True, **UNTIMED)
settings.load_profile("ci" if os.environ.get("CI") else "untimed")
