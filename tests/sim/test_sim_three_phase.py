"""The three-phase unit: its circuit against hand calculations, the analyser's connections, the
clock number from the solved phasors, line-to-line resistances, phase faults, the scenario checks.

Unit-level on the model (no sockets); each check names where its expected value comes from.
"""

from __future__ import annotations

import cmath
import math
from pathlib import Path

import pytest

from harness.common.errors import InputError
from harness.sim import connections
from harness.sim.analyser import elements
from harness.sim.scenario import SIM_CONFIGS, Scenario, load_scenario
from harness.sim.three_phase import BayFaults, ThreePhaseTransformer, phase_emfs, solve
from harness.sim.transformer import SourceImpedance, Wiring
from harness.sim.truth import truth

SMALL = load_scenario("three-phase")
LARGE = load_scenario("large-three-phase")
IDEAL = SourceImpedance(0.0, 0.0)
SQRT3 = math.sqrt(3.0)


def _variant(scenario: Scenario, **transformer) -> Scenario:
    """The scenario with transformer fields replaced, validated again."""
    data = scenario.model_dump()
    for key, value in transformer.items():
        if isinstance(value, dict):
            data["transformer"][key].update(value)
        else:
            data["transformer"][key] = value
    return Scenario.model_validate(data)


def _balanced(scenario: Scenario) -> Scenario:
    """No phase spread, equal limbs and no knee: a balanced linear unit, for the textbook balanced
    relations (the knee's 15th power would magnify the mean-rectified value's small dependence on
    the phase angle, sampled at 512 points a period, into differences of 1e-5)."""
    flat = {"phase_spread": (0.0, 0.0, 0.0)}
    return _variant(scenario, hv=flat, lv=flat, core={"middle_limb_magnetising": 1.0, "middle_limb_loss": 1.0,
                                                      "knee_share": 0.0})


def _no_load(scenario: Scenario, fed: str = "lv", volts_ll: float | None = None, faults: BayFaults = BayFaults()):
    spec = scenario.transformer
    u = (volts_ll or spec.winding(fed).rated_voltage) / SQRT3
    return solve(ThreePhaseTransformer(spec), Wiring(fed, "open"), phase_emfs((complex(u),), (1,)), (1,),
                 spec.frequency, 20.0, IDEAL, faults)


def _short_circuit(scenario: Scenario, volts_ln: float, faults: BayFaults = BayFaults()):
    spec = scenario.transformer
    return solve(ThreePhaseTransformer(spec), Wiring("hv", "short"), phase_emfs((complex(volts_ln),), (1,)), (1,),
                 spec.frequency, spec.reference_temperature, IDEAL, faults)


# ---------------------------------------------------------------- star and delta relations

def test_star_fed_line_to_line_is_root3_times_line_to_neutral():
    # Balanced star: |U_LL| = sqrt(3) |U_LN| (common knowledge of three-phase circuits).
    op = _no_load(_balanced(SMALL))
    u_ln = abs(op.terminal[0][0])
    assert abs(op.line_to_line(0, 1)[0]) == pytest.approx(SQRT3 * u_ln, rel=1e-9)
    assert u_ln == pytest.approx(420.0 / SQRT3, rel=1e-9)


def test_delta_fed_line_current_is_root3_times_the_phase_current():
    # Balanced delta: |I_line| = sqrt(3) |I_phase| (common knowledge of three-phase circuits).
    op = _no_load(_balanced(LARGE))   # LARGE is YNd1, no-load on the 11 kV delta
    for p in range(3):
        # (the model's tiny conductances to earth keep the floating parts defined: 1e-5)
        assert abs(op.current[p][0]) == pytest.approx(SQRT3 * abs(op.winding_current[p][0]), rel=1e-5)


def test_a_star_source_on_a_delta_winding_puts_root3_times_the_setpoint_across_each_phase():
    op = _no_load(LARGE)
    assert abs(op.line_to_line(0, 1)[0]) == pytest.approx(11000.0, rel=1e-9)


# ---------------------------------------------------------------- the three-limb core

@pytest.mark.parametrize("scenario", [SMALL, LARGE], ids=["Dyn11-from-star", "YNd1-from-delta"])
def test_the_middle_limb_draws_visibly_less(scenario):
    currents = truth(scenario)["phases"]["no_load_line_current_A"]
    if scenario.transformer.connection("lv") == "star":
        # fed in star: the middle line carries the middle limb's current
        assert currents[1] < 0.9 * min(currents[0], currents[2])
    else:
        # fed in delta: each line carries the difference of two limbs' currents, so the two lines
        # that touch the middle phase winding read lower than the one that does not
        assert max(currents[1], currents[2]) < 0.9 * currents[0]


def test_equal_limbs_give_equal_no_load_currents_and_the_stated_loss():
    op = _no_load(_balanced(SMALL))
    i = op.phase_currents
    assert max(i) == pytest.approx(min(i), rel=2e-5)   # the hysteresis term's 512-point mean
    assert op.power == pytest.approx(SMALL.transformer.core.loss, rel=2e-3)


def test_the_core_loss_splits_per_limb_with_the_middle_one_lower():
    spec = SMALL.transformer
    weights = spec.core.loss_weights
    assert sum(weights) == pytest.approx(3.0)
    assert weights[1] == pytest.approx(spec.core.middle_limb_loss * weights[0])
    tf = ThreePhaseTransformer(spec)
    losses = [tf.limb_shunt((1 + 0j,), (1,), 1.0, k)[2] for k in range(3)]
    assert sum(losses) == pytest.approx(spec.core.loss, rel=1e-4)   # 512-point mean-rectified value
    assert losses[1] < losses[0] == pytest.approx(losses[2])


# ---------------------------------------------------------------- star-equivalent series branch

@pytest.mark.parametrize("scenario", [SMALL, LARGE], ids=["Dyn11", "YNd1"])
def test_short_circuit_matches_the_star_equivalent_hand_calculation(scenario):
    spec = scenario.transformer
    a2 = (spec.hv.rated_voltage / spec.lv.rated_voltage) ** 2
    c = 235.0   # copper, IEC 60076-1 (reference notes)
    to_ref = (c + spec.reference_temperature) / (c + spec.resistance_temperature)
    # Star equivalent per phase (textbook): a delta phase impedance over 3, a star one as it is.
    k = {w: (1 / 3 if spec.connection(w) == "delta" else 1.0) for w in ("hv", "lv")}
    mean = {w: sum(spec.winding(w).phase_factor(p) for p in range(3)) / 3 for w in ("hv", "lv")}
    i_r = spec.rated_power / (SQRT3 * spec.hv.rated_voltage)
    r_dc = sum(spec.winding(w).resistance * k[w] * mean[w] * (1 if w == "hv" else a2) for w in ("hv", "lv")) * to_ref
    # The stray loss at rated current, half in each winding, as a resistance with its phase's spread.
    r_stray = sum(mean[w] for w in ("hv", "lv")) * spec.additional_loss / 2 / (3 * i_r ** 2)
    req = r_dc + r_stray
    xeq = sum(spec.winding(w).leakage_reactance * k[w] * mean[w] * (1 if w == "hv" else a2) for w in ("hv", "lv"))
    got = truth(scenario)
    assert got["equivalent_circuit"]["hv"]["Req_ohm"] == pytest.approx(req, rel=1e-6)
    assert got["equivalent_circuit"]["hv"]["Xeq_ohm"] == pytest.approx(xeq, rel=1e-6)
    assert got["load"]["loss_ref_W"] == pytest.approx(3 * i_r ** 2 * req, rel=1e-6)
    # The solved circuit at rated current (link legs and the shunt add well under 1 %).
    z_pct = got["load"]["impedance_ref_pct"]
    u_ln = z_pct / 100 * spec.hv.rated_voltage / SQRT3
    op = _short_circuit(scenario, u_ln)
    assert sum(op.phase_currents) / 3 == pytest.approx(i_r, rel=5e-3)
    assert op.power == pytest.approx(got["load"]["loss_ref_W"], rel=1e-2)


def test_the_scenarios_have_the_stated_figures():
    small, large = truth(SMALL), truth(LARGE)
    assert small["load"]["impedance_ref_pct"] == pytest.approx(4.0, abs=0.1)
    assert 4000 < small["load"]["loss_ref_W"] < 5000
    assert 0.8 < small["no_load"]["current_pct"] < 1.3
    assert small["rated_current_A"]["hv"] == pytest.approx(400e3 / (SQRT3 * 11e3))
    assert 6.0 < large["load"]["impedance_ref_pct"] < 7.0
    r, x = large["equivalent_circuit"]["hv"]["Req_ohm"], large["equivalent_circuit"]["hv"]["Xeq_ohm"]
    assert 14 < x / r < 16


def test_the_bay_sources_reach_the_rated_tests():
    for s in (SMALL, LARGE):
        got, spec = truth(s), s.transformer
        # no-load to 110 % of the LV line voltage, line-to-neutral setpoint; load loss at rated
        # HV current and the impedance voltage
        assert 1.1 * spec.lv.rated_voltage / SQRT3 < s.source.max_voltage
        assert 3 * max(got["phases"]["no_load_line_current_A"]) < s.source.max_current
        assert 1.1 * spec.rated_current("hv") < s.source.max_current
        assert 1.1 * got["load"]["impedance_ref_pct"] / 100 * spec.hv.rated_voltage / SQRT3 < s.source.max_voltage
        an = s.analyser
        assert 1.1 * spec.lv.rated_voltage / an.vt_ratio < an.voltage_ranges[-1]
        assert 1.1 * spec.rated_current("hv") / an.ct_ratio < an.current_ranges[-1]


# ---------------------------------------------------------------- the analyser's connections

def test_three_wattmeter_elements_sum_to_the_total_power():
    op = _no_load(SMALL)
    seen = elements(op, "three-wattmeter", 3)
    assert sum(e.p for e in seen) == pytest.approx(op.power, rel=1e-9)
    for k, e in enumerate(seen):
        assert e.u_rms == pytest.approx(abs(op.line_to_line(k, (k + 1) % 3)[0]), rel=1e-12)
        assert e.i_rms == pytest.approx(op.phase_currents[k], rel=1e-12)


def test_two_wattmeter_sum_is_the_total_and_one_element_reads_negative_below_pf_half():
    # Two-wattmeter method (common knowledge): P1 + P2 is the total power of a three-wire
    # circuit; on a balanced load P1 = U I cos(30 deg + phi), P2 = U I cos(30 deg - phi), so one
    # element reads negative once the power factor is below 0.5.
    op = _no_load(_balanced(SMALL))
    seen = elements(op, "two-wattmeter", 3)
    u, i = abs(op.line_to_line(0, 1)[0]), op.phase_currents[0]
    pf = op.power / (SQRT3 * u * i)
    assert pf < 0.5
    phi = math.acos(pf)
    assert seen[0].p + seen[1].p == pytest.approx(op.power, rel=1e-9)
    assert sorted((seen[0].p, seen[1].p)) == pytest.approx(
        sorted((u * i * math.cos(math.radians(30) + phi), u * i * math.cos(math.radians(30) - phi))), rel=1e-5)
    assert min(seen[0].p, seen[1].p) < 0
    assert seen[2].p == 0.0
    assert seen[2].i_rms == pytest.approx(op.phase_currents[2], rel=1e-9)   # |-(I1 + I2)| = |I3|


# ---------------------------------------------------------------- clock numbers

@pytest.mark.parametrize("group", ["Dyn11", "Dyn1", "YNd1", "YNd11", "Yzn5", "Yzn11", "Yy0", "Dd0", "Yy6"])
def test_the_clock_number_follows_from_the_solved_phasors(group):
    # IEC 60076-1 Annex D (recalled): the clock number is the lag of the LV line-to-neutral
    # voltage behind the HV one in 30 degree steps, phase U, positive sequence.
    vg = connections.parse_vector_group(group)
    scenario = _variant(SMALL, vector_group=group,
                        hv={"connection": vg.hv, "neutral": vg.hv_neutral},
                        lv={"connection": vg.lv, "neutral": vg.lv_neutral})
    op = _no_load(scenario, fed="hv")
    hv = op.to_centroid(0)[0]
    lv = op.other_terminal[0][0]
    lag = math.degrees(cmath.phase(hv) - cmath.phase(lv)) % 360
    assert lag == pytest.approx(30 * vg.clock, abs=0.5) or (vg.clock == 0 and lag == pytest.approx(360, abs=0.5))
    # and the ratio of line voltages is the rated ratio (open circuit: the no-load current's drop
    # in the HV leakage impedance moves it by a few tenths of a per cent at most)
    ratio = abs(op.line_to_line(0, 1)[0]) / abs(op.other_terminal[0][0] - op.other_terminal[1][0])
    assert ratio == pytest.approx(11000 / 420, rel=5e-3)


def test_a_clock_the_connections_cannot_give_is_refused():
    with pytest.raises(ValueError, match="cannot give clock 1"):
        _variant(SMALL, vector_group=None, clock=1, hv={"connection": "star"}, lv={"connection": "star"})


# ---------------------------------------------------------------- resistances

def test_line_to_line_resistance_of_star_and_delta():
    # Between two line terminals (circuit theory): star 2 R_ph; delta R_ph || 2 R_ph = 2/3 R_ph.
    tf = ThreePhaseTransformer(_balanced(SMALL).transformer)
    theta = SMALL.transformer.resistance_temperature
    hv, lv = tf.line_resistances("hv", theta), tf.line_resistances("lv", theta)
    assert hv == pytest.approx((2 / 3 * 3.83,) * 3, rel=1e-9)
    assert lv == pytest.approx((2 * 1.86e-3,) * 3, rel=1e-9)


def test_line_to_line_resistance_follows_the_spread_phases():
    tf = ThreePhaseTransformer(SMALL.transformer)
    r = [tf.r_phase("hv", 20.0, p) for p in range(3)]
    # delta, pair U-V across phase U (Dyn11 arrangement puts phase U between U and V)
    pairs = tf.line_resistances("hv", 20.0)
    expected = {r[p] * (sum(r) - r[p]) / sum(r) for p in range(3)}
    assert sorted(pairs) == pytest.approx(sorted(expected), rel=1e-9)


# ---------------------------------------------------------------- faults on one phase

def test_shorted_turn_on_one_limb_raises_that_phase_most():
    healthy = _no_load(SMALL)
    spec = SMALL.transformer
    i0 = math.hypot(spec.core.magnetising_current / 100, spec.core.loss / spec.rated_power)
    faulty = _no_load(SMALL, faults=BayFaults(shorted_limb=0, shorted_admittance_pu=10 * i0 * cmath.exp(-0.25j * math.pi)))
    rise = [f / h for f, h in zip(faulty.phase_currents, healthy.phase_currents)]
    assert rise[0] > 3 and rise[0] == max(rise)
    assert faulty.power > 3 * healthy.power


def test_open_link_phase_unbalances_the_short_circuit():
    healthy = _short_circuit(SMALL, 250.0)
    faulty = _short_circuit(SMALL, 250.0, BayFaults(open_link_phase=0))
    assert max(healthy.phase_currents) == pytest.approx(min(healthy.phase_currents), rel=0.01)
    assert min(faulty.phase_currents) < 0.8 * min(healthy.phase_currents)
    assert max(faulty.phase_currents) / min(faulty.phase_currents) > 1.5


def test_dead_source_phase_gives_nothing_on_that_phase():
    spec = SMALL.transformer
    emf = phase_emfs((complex(242.5),), (1,), dead_phase=1)
    assert emf[1] == (0j,)
    op = solve(ThreePhaseTransformer(spec), Wiring("lv", "open"), emf, (1,), 50.0, 20.0, IDEAL)
    healthy = _no_load(SMALL)
    assert op.power < 0.6 * healthy.power


# ---------------------------------------------------------------- scenario checks with places

def _scenario_file(tmp_path: Path, old: str, new: str) -> Path:
    text = (SIM_CONFIGS / "three-phase.yaml").read_text(encoding="utf-8")
    assert old in text
    path = tmp_path / "bad.yaml"
    path.write_text(text.replace(old, new), encoding="utf-8")
    return path


@pytest.mark.parametrize("old, new, message", [
    ("vector_group: Dyn11", "vector_group: Yyn0", "does not match the windings"),
    ("vector_group: Dyn11", "vector_group: Dyn4", "its clock number is odd, not 4"),
    ("vector_group: Dyn11", "vector_group: Dxn11", "not a vector group"),
    ("  phases: 3\n", "", "three-phase units"),
    ("{hv: [1, 2, 3], lv: [4, 5, 6]}", "{hv: 1, lv: 2}", "three channels per winding"),
    ("connection: delta,", "connection: delta, neutral: true,", "delta winding has no neutral"),
])
def test_bad_three_phase_scenarios_are_refused_with_their_place(tmp_path, old, new, message):
    with pytest.raises(InputError, match=message) as err:
        load_scenario(_scenario_file(tmp_path, old, new))
    assert "bad.yaml:" in str(err.value) and str(err.value).split(":")[1].isdigit()


def test_a_phase_fault_in_a_single_phase_scenario_is_refused_with_its_place(tmp_path):
    text = (SIM_CONFIGS / "default.yaml").read_text(encoding="utf-8")
    path = tmp_path / "bad.yaml"
    path.write_text(text + "faults:\n  - {name: dead-source-phase}\n", encoding="utf-8")
    with pytest.raises(InputError, match="needs a three-phase unit"):
        load_scenario(path)
