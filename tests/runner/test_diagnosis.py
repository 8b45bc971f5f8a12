"""The likely cause a ramp's trip names, from the physics of the test: an open short-circuit
circuit draws far less than the impedance predicts, a shorted turn far more than the magnetising
current; without the guarantee that predicts it, nothing is said."""

from __future__ import annotations

from types import SimpleNamespace

from harness.common.reading import Phase, combine
from harness.runner.steps.diagnosis import excess_magnetising, open_circuit

# The invented NTW-50: 50 kVA, 6.6 kV / 415 V, single-phase. Rated currents S / U.
S, HV, LV = 50e3, 6600.0, 415.0


class FakeRun:
    def __init__(self, fed: str, impedance: float | None = 4.0, no_load_current: float | None = 2.0):
        self.sequence = SimpleNamespace(guarantees=SimpleNamespace(impedance=impedance, no_load_current=no_load_current))
        self._voltage = HV if fed == "hv" else LV

    def rated(self, quantity: str) -> float:
        return self._voltage if quantity == "voltage" else S / self._voltage


def sample(u: float, i: float):
    return combine(0, 0.0, (Phase(u_rms=u, u_mean=u, i_rms=i, p=0.0),), 50.0, u)


def test_short_circuit_current_as_the_impedance_predicts_is_no_fault():
    # At the impedance voltage (4 % of 6.6 kV = 264 V) a shorted 4 % unit draws its rated current,
    # S / U = 7.576 A (the definition of the short-circuit impedance, IEC 60076-1, 3.7.1; recalled).
    run = FakeRun("hv")
    assert open_circuit(run, sample(264.0, 7.576)) is None
    # A unit at the edge of the tolerance (+10 %) draws 91 % of the prediction: no fault either.
    assert open_circuit(run, sample(264.0, 7.576 / 1.1)) is None


def test_an_open_short_circuit_link_is_named_with_the_share_of_the_predicted_current():
    text = open_circuit(FakeRun("hv"), sample(13.2, 0.0037))  # 5 % of the impedance voltage, magnetising only
    assert text is not None
    assert "at 13.2 V the current is 0.0037 A, only 0.98 % of the 0.3788 A" in text
    assert "short-circuit link fitted" in text


def test_no_judgement_below_the_noise_or_without_the_guarantee():
    assert open_circuit(FakeRun("hv"), sample(3.0, 0.0)) is None  # predicted 0.086 A: 1.1 % of rated
    assert open_circuit(FakeRun("hv", impedance=None), sample(264.0, 0.001)) is None


def test_a_no_load_current_far_above_the_magnetising_current_names_a_shorted_turn():
    run = FakeRun("lv")  # 2 % of 120.5 A at rated voltage, in proportion below it
    assert excess_magnetising(run, sample(207.5, 1.3), 1.3) is None  # about 1.1 x the 1.205 A predicted
    text = excess_magnetising(run, sample(207.5, 9.6), 9.6)
    assert text is not None and "8 times the 1.2 A" in text and "shorted turn" in text
    assert excess_magnetising(FakeRun("lv", no_load_current=None), sample(207.5, 9.6), 9.6) is None
    assert excess_magnetising(run, sample(450.0, 40.0), 40.0) is None  # over-excited: the knee, not a judgement
