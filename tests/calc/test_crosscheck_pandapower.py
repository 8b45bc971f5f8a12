"""Cross-check with pandapower, a general-purpose power-systems library from PyPI.

Its two-winding transformer is built from our evaluated z %, ur %, no-load loss and no-load
current (``vk_percent``, ``vkr_percent``, ``pfe_kw``, ``i0_percent``), loaded in a power flow,
and its branch losses and voltages compared with our losses, regulation and efficiency.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import pandapower as pp
import pytest
from scipy.optimize import newton

from harness.calc import evaluate, load_record

RECORD = Path(__file__).resolve().parents[2] / "sequences" / "records" / "three_phase_ground_mount.yaml"
CASES = [(0.5, 1.0, True), (1.0, 1.0, True), (1.0, 0.8, True), (1.0, 0.8, False), (1.25, 0.9, True)]


@pytest.fixture(scope="module")
def results():
    return evaluate(load_record(RECORD), loads=[0.5, 1.0, 1.25], power_factors=[1.0, 0.9, 0.8])


def _network(results, core: bool):
    """HV slack bus, the unit, a PQ load on the LV bus. ``core`` False leaves out the shunt branch."""
    rated = load_record(RECORD).transformer
    net = pp.create_empty_network(f_hz=rated.frequency)
    hv = pp.create_bus(net, vn_kv=rated.hv.rated_voltage / 1e3)
    lv = pp.create_bus(net, vn_kv=rated.lv.rated_voltage / 1e3)
    pp.create_ext_grid(net, hv, vm_pu=1.0)
    nl, ld = results.no_load, results.load
    pp.create_transformer_from_parameters(
        net, hv, lv, sn_mva=rated.rated_power / 1e6, vn_hv_kv=rated.hv.rated_voltage / 1e3,
        vn_lv_kv=rated.lv.rated_voltage / 1e3, vk_percent=ld.impedance_ref_pct, vkr_percent=ld.resistance_ref_pct,
        pfe_kw=nl.loss_W / 1e3 if core else 0.0, i0_percent=nl.current_pct if core else 0.0, shift_degree=0.0)
    pp.create_load(net, lv, p_mw=0.0, q_mvar=0.0)
    return net, lv, rated.rated_power


def _run(net) -> None:
    pp.runpp(net, trafo_model="t", calculate_voltage_angles=True, numba=False, tolerance_mva=1e-12)


def _loaded_at_rated_output_voltage(net, lv: int, s_rated: float, n: float, pf: float, lagging: bool) -> float:
    """Load the LV bus with n pu at pf; raise the HV source until the LV bus sits at 1.0 pu.

    That is the textbook definition of regulation: output held at rated voltage. Returns the HV
    voltage in pu.
    """
    q_sign = 1.0 if lagging else -1.0
    net.load.loc[0, "p_mw"] = n * s_rated * pf / 1e6
    net.load.loc[0, "q_mvar"] = q_sign * n * s_rated * math.sqrt(1 - pf * pf) / 1e6

    def lv_error(v_hv: float) -> float:
        net.ext_grid.loc[0, "vm_pu"] = v_hv
        _run(net)
        return float(net.res_bus.vm_pu[lv]) - 1.0

    # Secant steps from 1.0 and 1.05 pu: the LV voltage is nearly linear in the HV voltage.
    return float(newton(lv_error, 1.0, x1=1.05, tol=1e-13, maxiter=50))


def _row(rows, **match):
    return next(r for r in rows if all(getattr(r, k) == v for k, v in match.items()))


def test_pandapower_imports_without_warnings():
    # A fresh interpreter, so the import itself (not a cached module) runs with warnings as errors.
    done = subprocess.run([sys.executable, "-W", "error", "-c", "import pandapower"], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_open_circuit_loss_and_reactive_power(results):
    net, _lv, s_rated = _network(results, core=True)
    _run(net)
    nl = results.no_load
    q0 = math.sqrt((nl.current_pct / 100 * s_rated) ** 2 - nl.loss_W**2)
    # In pandapower's T model the core branch sits behind half the series impedance, so the
    # no-load current drops i0 * z / 2 = 0.005 * 0.04 / 2 of the voltage: 1e-3 covers it.
    assert net.res_trafo.pl_mw[0] * 1e6 == pytest.approx(nl.loss_W, rel=1e-3)
    assert net.res_trafo.ql_mvar[0] * 1e6 == pytest.approx(q0, rel=1e-3)


@pytest.mark.parametrize(("n", "pf", "lagging"), CASES)
def test_series_branch_losses_and_regulation(results, n, pf, lagging):
    # Without the core branch both models are the same series impedance: agreement to the
    # solver tolerance.
    net, lv, s_rated = _network(results, core=False)
    v_hv = _loaded_at_rated_output_voltage(net, lv, s_rated, n, pf, lagging)
    assert net.res_trafo.pl_mw[0] * 1e6 == pytest.approx(n * n * results.load.loss_ref_W, rel=1e-6)
    regulation = _row(results.regulation, load_pu=n, power_factor=pf, lagging=lagging).regulation_pct
    assert 100 * (v_hv - 1) == pytest.approx(regulation, abs=1e-6)


@pytest.mark.parametrize(("n", "pf", "lagging"), [c for c in CASES if c[2]])
def test_efficiency_of_the_loaded_unit(results, n, pf, lagging):
    # With the core branch, pandapower's losses differ from P0 + n^2 Pk (the test codes'
    # convention: P0 at rated voltage, load loss at rated current) because its core branch sees
    # the voltage between the half impedances and its HV half carries the no-load current too.
    # Both effects are of order P0 * regulation and i0 * Pk: within 1 % of the losses.
    net, lv, s_rated = _network(results, core=True)
    _loaded_at_rated_output_voltage(net, lv, s_rated, n, pf, lagging)
    losses_pp = net.res_trafo.pl_mw[0] * 1e6
    row = _row(results.efficiency, load_pu=n, power_factor=pf)
    assert losses_pp == pytest.approx(row.losses_W, rel=0.01)
    efficiency_pp = -100 * net.res_trafo.p_lv_mw[0] / net.res_trafo.p_hv_mw[0]
    # The same 1 % of the losses, expressed in efficiency points.
    bound = 100 * 0.01 * row.losses_W / (row.output_W + row.losses_W)
    assert efficiency_pp == pytest.approx(row.efficiency_pct, abs=bound)
