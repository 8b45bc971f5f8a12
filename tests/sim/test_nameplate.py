"""The unit built from a nameplate: its model's own truth meets the guarantees, the split of
losses and impedance is the stated one and physically consistent, the bay suits the unit."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from harness.sim import connections
from harness.sim.nameplate import BayNeeds, Nameplate, Winding, build, step_up
from harness.sim.scenario import load_scenario
from harness.sim.truth import truth

# Invented units (Northfield Transformer Works, invented) of ratings unlike the demo's 50 kVA.
UNITS = {
    "3 kVA 230/115 V": Nameplate("NTW-3", 3e3, 1, 50.0, Winding(230.0), Winding(115.0), None, 75.0, None,
                                 30.0, 80.0, 3.5, 4.0),
    "10 kVA 11 kV/250 V": Nameplate("NTW-10", 10e3, 1, 50.0, Winding(11e3), Winding(250.0), "copper", 75.0, None,
                                    60.0, 250.0, 4.0, 2.5),
    "2.5 MVA 33/6.6 kV": Nameplate("NTW-2500", 2.5e6, 1, 50.0, Winding(33e3), Winding(6.6e3), "copper", 75.0, None,
                                   2.6e3, 20e3, 7.0, 0.5),
    "25 kVA 60 Hz aluminium": Nameplate("NTW-25", 25e3, 1, 60.0, Winding(7.2e3), Winding(240.0), "aluminium", 85.0,
                                        None, 90.0, 400.0, 2.5, 1.5),
    "400 kVA Dyn11": Nameplate("NTW-400", 400e3, 3, 50.0, Winding(11e3, "delta"), Winding(420.0, "star", True),
                               "copper", 75.0, "Dyn11", 650.0, 4.6e3, 4.0, 1.2),
    "2.5 MVA YNd1": Nameplate("NTW-2500/3", 2.5e6, 3, 50.0, Winding(33e3, "star", True), Winding(11e3, "delta"),
                              "copper", 75.0, "YNd1", 2.4e3, 21e3, 6.5, 0.6),
}


@pytest.fixture(scope="module", params=list(UNITS), ids=list(UNITS))
def built(request):
    unit = UNITS[request.param]
    b = build(unit)
    return unit, b.scenario, truth(b.scenario)


def test_truth_meets_the_guarantees(built) -> None:
    unit, scenario, t = built
    i_rated = scenario.transformer.rated_current("lv")
    assert t["no_load"]["loss_W"] == pytest.approx(unit.no_load_loss, rel=1e-4)
    assert 100.0 * t["no_load"]["current_A"] / i_rated == pytest.approx(unit.no_load_current, rel=1e-3)
    assert t["load"]["loss_ref_W"] == pytest.approx(unit.load_loss, rel=1e-6)
    assert t["load"]["impedance_ref_pct"] == pytest.approx(unit.impedance, rel=1e-6)


def test_the_impedance_splits_into_its_resistive_and_reactive_parts(built) -> None:
    # IEC 60076-1 (definitions of the short-circuit impedance and its resistive component, recalled):
    # uk^2 = ur^2 + ux^2 with ur = load loss / rated power.
    unit, scenario, t = built
    spec = scenario.transformer
    line = math.sqrt(3.0) if unit.phases == 3 else 1.0
    z_base = (spec.hv.rated_voltage / line) / spec.rated_current("hv")
    circuit = t["equivalent_circuit"]["hv"]
    ur, ux = 100.0 * circuit["Req_ohm"] / z_base, 100.0 * circuit["Xeq_ohm"] / z_base
    assert ur == pytest.approx(100.0 * unit.load_loss / unit.rated_power, rel=1e-6)
    assert math.hypot(ur, ux) == pytest.approx(unit.impedance, rel=1e-6)


def test_the_i2r_loss_is_split_equally_and_the_additional_loss_is_a_tenth(built) -> None:
    """Each winding carries half the I2R loss at the reference temperature; the additional loss is
    10 % of the load loss (both common practice, no source). The I2R loss of a three-phase winding
    from its line-to-line resistance: 1.5 I^2 R_line-to-line, star or delta (textbook relation,
    recalled from memory)."""
    unit, scenario, t = built
    spec = scenario.transformer
    assert spec.additional_loss == pytest.approx(0.1 * unit.load_loss)
    c = {"copper": 235.0, "aluminium": 225.0}[spec.winding_material]   # IEC 60076-1 material constants
    to_ref = (c + spec.reference_temperature) / (c + spec.resistance_temperature)
    for side in ("hv", "lv"):
        i = spec.rated_current(side)
        if unit.phases == 3:
            r_ll = sum(t["phases"]["resistance_ohm"][side]["line_to_line"]) / 3.0
            i2r = 1.5 * i * i * r_ll * to_ref
        else:
            i2r = i * i * spec.winding(side).resistance * to_ref
        assert i2r == pytest.approx(0.45 * unit.load_loss, rel=1e-6), side


def test_the_leakage_reactance_is_split_equally(built) -> None:
    unit, scenario, _ = built
    spec = scenario.transformer
    ratio = spec.hv.rated_voltage / spec.lv.rated_voltage
    star = {s: (connections.star_equivalent_factor(spec.connection(s)) if unit.phases == 3 else 1.0) for s in ("hv", "lv")}
    x_hv = spec.hv.leakage_reactance * star["hv"]
    x_lv_referred = spec.lv.leakage_reactance * star["lv"] * ratio ** 2
    assert x_hv == pytest.approx(x_lv_referred, rel=1e-6)   # the file keeps 7 digits


def test_the_core_has_a_knee(built) -> None:
    _, scenario, _ = built
    from harness.sim.transformer import Transformer
    tf = Transformer(scenario.transformer)
    # well below the knee proportional to the flux, above it steep: about doubled from 100 % to 110 %
    assert tf.magnetising_current_pu(0.5) / tf.magnetising_current_pu(0.25) == pytest.approx(2.0, rel=0.01)
    assert 1.4 < tf.magnetising_current_pu(1.1) / tf.magnetising_current_pu(1.0) < 2.2


def test_the_bay_suits_the_unit(built) -> None:
    unit, scenario, _ = built
    src, an = scenario.source, scenario.analyser
    line = math.sqrt(3.0) if unit.phases == 3 else 1.0
    assert src.max_voltage * line >= 1.1 * unit.lv.rated_voltage          # the no-load test to 110 %
    assert src.max_voltage * line >= unit.impedance / 100 * unit.hv.rated_voltage
    assert src.max_current >= scenario.transformer.rated_current("hv")     # the load-loss test from the HV
    behind = (an.vt_ratio, an.ct_ratio) != (1.0, 1.0)
    assert behind == (unit.rated_power >= 1e6)
    # what the analyser sees at the source's rating fits its top range
    assert src.max_voltage * line / an.vt_ratio <= an.voltage_ranges[-1]
    assert src.max_current / an.ct_ratio <= an.current_ranges[-1]


def test_the_written_file_is_the_unit(built, tmp_path: Path) -> None:
    unit, scenario, _ = built
    path = tmp_path / "unit.yaml"
    path.write_text(build(unit).text, encoding="utf-8")
    assert load_scenario(path) == scenario


def test_the_source_covers_the_sequence_limits() -> None:
    unit = UNITS["10 kVA 11 kV/250 V"]
    scenario = build(unit, BayNeeds(voltage=900.0, current=7.0, power=9e3)).scenario
    assert (scenario.source.max_voltage, scenario.source.max_current) == (1000.0, 10.0)
    assert scenario.source.max_voltage * scenario.source.max_current >= 9e3


@pytest.mark.parametrize("change, words", [
    ({"impedance": 1.0, "load_loss": 200.0}, "not above the resistive part"),
    ({"no_load_current": 0.2, "no_load_loss": 90.0}, "not above its loss component"),
])
def test_guarantees_no_unit_can_have_are_refused(change, words) -> None:
    from dataclasses import replace
    with pytest.raises(ValueError, match=words):
        build(replace(UNITS["10 kVA 11 kV/250 V"], **change))


def test_missing_guarantees_take_typical_values_and_say_so() -> None:
    from dataclasses import replace
    unit = replace(UNITS["3 kVA 230/115 V"], no_load_loss=None, load_loss=None, impedance=None, no_load_current=None)
    b = build(unit)
    assert sum("typical, not guaranteed" in a for a in b.assumed) == 4
    assert "copper windings (no material on the nameplate)" in b.assumed
    assert "typical, not guaranteed" in b.scenario.description
    assert truth(b.scenario)["load"]["impedance_ref_pct"] == pytest.approx(4.0)


def test_steps() -> None:
    assert [step_up(v) for v in (1.0, 1.01, 115.0, 506.0, 7590.0, 9.5)] == [1.0, 1.2, 120.0, 600.0, 8000.0, 10.0]


def test_the_contributor_guide_example_is_the_10_kva_unit() -> None:
    """DEVELOPERS.md's commented scenario is valid and its truth is the 10 kVA unit's guarantees."""
    from harness.common.yamlio import load_text, validate
    from harness.sim.scenario import Scenario
    guide = (Path(__file__).resolve().parents[2] / "DEVELOPERS.md").read_text(encoding="utf-8")
    block = guide.split("The format, commented")[1].split("```yaml\n", 1)[1].split("```", 1)[0]
    t = truth(validate(Scenario, load_text(block, "DEVELOPERS.md")))
    assert t["no_load"]["loss_W"] == pytest.approx(60.0, rel=0.002)
    assert t["load"]["loss_ref_W"] == pytest.approx(250.0, rel=0.002)
    assert t["load"]["impedance_ref_pct"] == pytest.approx(4.0, rel=0.002)


def test_a_bay_beyond_the_plausible_bounds_is_refused_plainly() -> None:
    from harness.sim.nameplate import Unbuildable
    # a 90 MW power limit on a 150 V source would take a 600 kA source
    with pytest.raises(Unbuildable, match="source.max_current"):
        build(UNITS["3 kVA 230/115 V"], BayNeeds(power=9e7))
