"""Properties of the evaluation over many synthesised units (hypothesis).

Readings are synthesised from a known equivalent circuit with the circuit laws alone (no code of
the product), so evaluating them must give the circuit back.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harness.calc import Record, evaluate
from harness.calc.performance import regulation, voltage_drop
from harness.calc.temperature import correct_split, split

SQRT3 = math.sqrt(3)
PROPERTY_SETTINGS = settings(max_examples=60, deadline=None)


@dataclass(frozen=True)
class Unit:
    """A unit in per unit: series r, x; shunt rc, xm; and the test conditions."""
    s: float
    u_hv: float
    ratio: float
    r: float
    x: float
    rc: float
    xm: float
    n_test: float
    no_load_on: str
    load_on: str

    def u(self, winding: str) -> float:
        return self.u_hv if winding == "hv" else self.u_hv / self.ratio

    def z_base(self, winding: str) -> float:
        return self.u(winding) ** 2 / self.s


units = st.builds(
    Unit,
    s=st.floats(1e3, 5e8), u_hv=st.floats(1e3, 5e5), ratio=st.floats(1.5, 100.0),
    r=st.floats(0.002, 0.03), x=st.floats(0.02, 0.15), rc=st.floats(50.0, 3000.0), xm=st.floats(10.0, 5000.0),
    n_test=st.floats(0.5, 1.1), no_load_on=st.sampled_from(["hv", "lv"]), load_on=st.sampled_from(["hv", "lv"]),
)


def _transformer(unit: Unit, phases: int, hv_connection: str = "delta") -> dict:
    t = {"rated_power": unit.s, "phases": phases, "frequency": 50.0,
         "hv": {"rated_voltage": unit.u_hv}, "lv": {"rated_voltage": unit.u("lv")}}
    if phases == 3:
        t["hv"]["connection"], t["lv"]["connection"] = hv_connection, "star"
    return t


def single_phase_readings(unit: Unit) -> dict:
    w0, w1 = unit.no_load_on, unit.load_on
    u0, rc, xm = unit.u(w0), unit.rc * unit.z_base(w0), unit.xm * unit.z_base(w0)
    i_t = unit.n_test * unit.s / unit.u(w1)
    r, x = unit.r * unit.z_base(w1), unit.x * unit.z_base(w1)
    return {"no_load": {"winding": w0, "voltage": u0, "current": u0 * math.hypot(1 / rc, 1 / xm), "power": u0**2 / rc},
            "load": {"winding": w1, "voltage": i_t * math.hypot(r, x), "current": i_t, "power": i_t**2 * r}}


def star_readings(unit: Unit) -> dict:
    """Three-phase readings from star phases: phase voltage U_LL/sqrt(3), phase current = line current."""
    w0, w1 = unit.no_load_on, unit.load_on
    u_ph0 = unit.u(w0) / SQRT3
    rc, xm = unit.rc * unit.z_base(w0), unit.xm * unit.z_base(w0)
    i_line = unit.n_test * unit.s / (SQRT3 * unit.u(w1))
    r, x = unit.r * unit.z_base(w1), unit.x * unit.z_base(w1)
    return {"no_load": {"winding": w0, "voltage": unit.u(w0), "current": u_ph0 * math.hypot(1 / rc, 1 / xm),
                        "power": 3 * u_ph0**2 / rc},
            "load": {"winding": w1, "voltage": SQRT3 * i_line * math.hypot(r, x), "current": i_line,
                     "power": 3 * i_line**2 * r}}


def delta_readings(unit: Unit) -> dict:
    """The same unit with delta phases: phase voltage = U_LL, phase impedances three times the star's."""
    w0, w1 = unit.no_load_on, unit.load_on
    u_ph0 = unit.u(w0)
    rc, xm = 3 * unit.rc * unit.z_base(w0), 3 * unit.xm * unit.z_base(w0)
    i_line = unit.n_test * unit.s / (SQRT3 * unit.u(w1))
    i_ph = i_line / SQRT3
    r, x = 3 * unit.r * unit.z_base(w1), 3 * unit.x * unit.z_base(w1)
    i_phase_no_load = u_ph0 * math.hypot(1 / rc, 1 / xm)
    return {"no_load": {"winding": w0, "voltage": u_ph0, "current": SQRT3 * i_phase_no_load,
                        "power": 3 * u_ph0**2 / rc},
            "load": {"winding": w1, "voltage": i_ph * math.hypot(r, x), "current": i_line, "power": 3 * i_ph**2 * r}}


def _record(unit: Unit, phases: int, readings: dict, hv_connection: str = "delta") -> Record:
    return Record.model_validate({"transformer": _transformer(unit, phases, hv_connection), **readings})


def _expected_circuit(unit: Unit, winding: str) -> tuple[float, float, float, float]:
    zb = unit.z_base(winding)
    return unit.rc * zb, unit.xm * zb, unit.r * zb, unit.x * zb


@PROPERTY_SETTINGS
@given(units)
def test_readings_from_a_known_circuit_evaluate_back_to_it(unit):
    results = evaluate(_record(unit, 1, single_phase_readings(unit)))
    for winding in ("hv", "lv"):
        b = results.equivalent_circuit[winding]
        assert (b.Rc_ohm, b.Xm_ohm, b.Req_ohm, b.Xeq_ohm) == pytest.approx(_expected_circuit(unit, winding), rel=1e-9)
    assert results.load.impedance_pct == pytest.approx(100 * math.hypot(unit.r, unit.x), rel=1e-9)


@PROPERTY_SETTINGS
@given(units)
def test_three_phase_readings_evaluate_back_to_the_star_equivalent_circuit(unit):
    results = evaluate(_record(unit, 3, star_readings(unit)))
    for winding in ("hv", "lv"):
        b = results.equivalent_circuit[winding]
        assert (b.Rc_ohm, b.Xm_ohm, b.Req_ohm, b.Xeq_ohm) == pytest.approx(_expected_circuit(unit, winding), rel=1e-9)


def _per_unit(results) -> list[float]:
    nl, ld = results.no_load, results.load
    figures = [nl.current_pct, nl.power_factor, ld.impedance_pct, ld.resistance_pct, ld.reactance_pct,
               ld.test_current_pu, results.max_efficiency.load_pu, results.max_efficiency.efficiency_pct]
    figures += [row.efficiency_pct for row in results.efficiency]
    return figures + [row.regulation_pct for row in results.regulation]


@PROPERTY_SETTINGS
@given(units)
def test_star_delta_and_single_phase_equivalent_give_the_same_per_unit_results(unit):
    star = evaluate(_record(unit, 3, star_readings(unit), "star"))
    delta = evaluate(_record(unit, 3, delta_readings(unit), "delta"))
    # The single-phase unit of one phase: S/3 at the phase voltage.
    phase = Unit(unit.s / 3, unit.u_hv / SQRT3, unit.ratio, unit.r, unit.x, unit.rc, unit.xm, unit.n_test,
                 unit.no_load_on, unit.load_on)
    single = evaluate(_record(phase, 1, single_phase_readings(phase)))
    assert _per_unit(delta) == pytest.approx(_per_unit(star), rel=1e-9)
    assert _per_unit(single) == pytest.approx(_per_unit(star), rel=1e-9)


@PROPERTY_SETTINGS
@given(units, st.floats(0.5, 1.2))
def test_loss_and_impedance_scale_with_the_square_and_the_first_power_of_current(unit, k):
    readings = single_phase_readings(unit)
    resistances = {w: {"resistance": 0.3 * unit.r * unit.z_base(w), "temperature": 20.0} for w in ("hv", "lv")}
    base = evaluate(_record(unit, 1, {**readings, "winding_resistance": resistances}))
    load = dict(readings["load"], current=k * readings["load"]["current"], voltage=k * readings["load"]["voltage"],
                power=k * k * readings["load"]["power"], temperature=20.0)
    scaled = evaluate(_record(unit, 1, {**readings, "load": load, "winding_resistance": resistances}))
    for name in ("loss_W", "impedance_voltage_V", "impedance_pct", "reactance_pct"):
        assert getattr(scaled.load, name) == pytest.approx(getattr(base.load, name), rel=1e-9)
    assert scaled.load.loss_ref_W is not None


@PROPERTY_SETTINGS
@given(units, st.lists(st.floats(0.01, 3.0), min_size=1, max_size=6), st.lists(st.floats(0.05, 1.0), min_size=1, max_size=4))
def test_efficiency_below_100_pct_and_the_maximum_bounds_every_unity_pf_row(unit, loads, pfs):
    results = evaluate(_record(unit, 1, single_phase_readings(unit)), loads=loads, power_factors=pfs)
    assert all(0 < row.efficiency_pct < 100 for row in results.efficiency)
    best = results.max_efficiency.efficiency_pct
    assert all(row.efficiency_pct <= best + 1e-9 for row in results.efficiency)


@PROPERTY_SETTINGS
@given(st.floats(1e-3, 1e3), st.floats(0.0, 1.0), st.floats(-20, 120), st.floats(-20, 180), st.sampled_from([225.0, 234.5, 235.0]))
def test_temperature_correction_there_and_back_is_identity(total, i2r_share, t1, t2, c):
    loss = split(total, i2r_share * total)
    back = correct_split(correct_split(loss, t1, t2, c), t2, t1, c)
    assert (back.i2r_W, back.additional_W) == pytest.approx((loss.i2r_W, loss.additional_W), rel=1e-9, abs=1e-12)


@PROPERTY_SETTINGS
@given(st.floats(0.0, 1.5), st.floats(0.1, 1.0), st.booleans(), st.floats(0.1, 3.0), st.floats(1.0, 12.0))
def test_approximate_drop_stays_close_to_the_exact_regulation(n, pf, lagging, ur, ux):
    # The IEC 60076-8 form keeps the second-order term; the rest is of third order in n z
    # (plus double-precision rounding of a 1 pu voltage, 1e-14 %).
    z = math.hypot(ur, ux) * n / 100
    exact = regulation(n, pf, lagging, ur, ux)
    assert voltage_drop(n, pf, lagging, ur, ux) == pytest.approx(exact, abs=100 * z**3 + 1e-14)
