"""Vector groups: the notation and the clock numbers that can exist.

Source: IEC 60076-1 Annex D (recalled, not re-read): HV letter in capitals, LV in lower case,
N/n for a neutral brought out, clock number = LV lag behind HV in multiples of 30 degrees. The
parity rule (star against delta or zigzag: odd; like against like: even) follows from the phasor
geometry and is checked here against phasors computed with numpy.
"""

from __future__ import annotations

import numpy as np
import pytest

from harness.common.vector_group import mismatches, parse_vector_group


@pytest.mark.parametrize("text, hv, lv, hvn, lvn, clock", [
    ("Dyn11", "delta", "star", False, True, 11),
    ("YNd1", "star", "delta", True, False, 1),
    ("Yzn5", "star", "zigzag", False, True, 5),
    ("Yyn0", "star", "star", False, True, 0),
    ("Dd0", "delta", "delta", False, False, 0),
    ("Dzn0", "delta", "zigzag", False, True, 0),
])
def test_common_groups_parse(text: str, hv: str, lv: str, hvn: bool, lvn: bool, clock: int) -> None:
    g = parse_vector_group(text)
    assert (g.hv, g.lv, g.hv_neutral, g.lv_neutral, g.clock) == (hv, lv, hvn, lvn, clock)


@pytest.mark.parametrize("text, reason", [
    ("Dyn12", "0 to 11"), ("Yyn1", "even"), ("Dyn6", "odd"), ("DNyn11", "no neutral"),
    ("dyn11", "not a vector group"), ("Dx11", "not a vector group"), ("", "not a vector group"),
])
def test_impossible_groups_are_refused(text: str, reason: str) -> None:
    with pytest.raises(ValueError, match=reason):
        parse_vector_group(text)


def _lag_deg(hv: complex, lv: complex) -> float:
    return float(np.degrees(np.angle(hv / lv)) % 360)


def test_dy_phasors_give_an_odd_clock_number() -> None:
    """Delta HV phase A across lines A-B, LV star phase a on the same limb: the LV line voltage
    a-b is the star phasor difference. Computed, not assumed: Dyn11 gives LV leading by 30 deg."""
    a = np.exp(-2j * np.pi / 3)
    hv_line_ab = 1.0 + 0j  # the delta winding on limb 1 carries the line voltage A-B
    lv_a, lv_b = 1.0 * hv_line_ab, 1.0 * hv_line_ab * a  # limb 1 and limb 2 star phases ...
    # ... whose phase voltages follow the delta windings A-B (limb 1), B-C (limb 2)
    lv_line_ab = lv_a - lv_b
    lag = _lag_deg(hv_line_ab, lv_line_ab)
    assert lag == pytest.approx(330.0)  # -30 degrees: LV leads by 30, clock 11
    assert int(round(lag / 30)) % 12 == parse_vector_group("Dyn11").clock


def test_connections_that_contradict_the_group_are_named() -> None:
    g = parse_vector_group("Dyn11")
    assert mismatches(g, "delta", "star", False, True) == []
    assert [w for w, _ in mismatches(g, "star", "star", False, True)] == ["hv"]
    assert [w for w, _ in mismatches(g, "delta", "star", False, False)] == ["lv"]
