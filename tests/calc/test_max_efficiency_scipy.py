"""The closed-form maximum-efficiency load n = sqrt(P0/Pk) against scipy's bounded optimiser."""

from __future__ import annotations

from pathlib import Path

import pytest
from scipy.optimize import minimize_scalar

from harness.calc import evaluate, load_record
from harness.calc.performance import efficiency, max_efficiency_load

RECORDS = sorted((Path(__file__).resolve().parents[2] / "sequences" / "records").glob("*.yaml"))


@pytest.mark.parametrize("path", RECORDS, ids=lambda p: p.stem)
def test_closed_form_maximum_matches_the_optimiser(path):
    results = evaluate(load_record(path))
    s = load_record(path).transformer.rated_power
    p0, pk = results.no_load.loss_W, results.load.loss_ref_W
    found = minimize_scalar(lambda n: -efficiency(n, 1.0, s, p0, pk), bounds=(0.01, 3.0), method="bounded",
                            options={"xatol": 1e-10})
    assert found.success
    # The optimum is flat: the load is located to about sqrt(xatol) relative, the value far better.
    assert results.max_efficiency.load_pu == pytest.approx(found.x, rel=1e-4)
    assert results.max_efficiency.efficiency_pct == pytest.approx(-100 * found.fun, abs=1e-9)


@pytest.mark.parametrize(("p0", "pk"), [(60.0, 60.0), (100.0, 1000.0), (950.0, 6050.0), (2.0, 8000.0)])
def test_closed_form_for_chosen_losses(p0, pk):
    found = minimize_scalar(lambda n: -efficiency(n, 1.0, 100e3, p0, pk), bounds=(1e-3, 3.0), method="bounded",
                            options={"xatol": 1e-12})
    assert max_efficiency_load(p0, pk) == pytest.approx(found.x, rel=1e-4)
