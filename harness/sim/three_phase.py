"""The three-phase unit on a three-limb core: a phasor circuit per harmonic, solved by nodal analysis.

Every winding phase is a series impedance (its d.c. resistance at the winding temperature, half
the additional load loss as a resistance falling with temperature, its leakage reactance, each
with the phase's spread) in series with an ideal coupling to the limbs it sits on (see
``connections``). Each limb has its own nonlinear shunt, linearised at its present flux with the
single-phase core characteristic (``Transformer.core_loss`` and ``magnetising_current_pu``) and
weighted per limb: the middle limb draws less magnetising current and has slightly less loss.

Modified nodal analysis (numpy complex) puts it together per harmonic order: node voltages of the
fed and the other winding's terminals and neutrals, the source's star point and the link's star
point; branch currents of the three source phases and six winding phases; the three limb emfs
(per unit of rated flux). The source is a star source with three wires to the fed terminals:
no neutral is connected and no zero-sequence flux path is modelled (a three-limb core's zero-
sequence flux returns through air and tank; the tests here never need it). Every node has a
tiny conductance to earth so floating windings and star points stay defined. A few fixed-point
passes settle the shunts, as in the single-phase model.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from harness.sim import connections, waveform
from harness.sim.connections import Arrangement
from harness.sim.scenario import TransformerSpec
from harness.sim.transformer import SHUNT_PASSES, SourceImpedance, Transformer, Wiring, fault_at, other_side

EARTH_LEAK = 1e-9          # S from every node to earth: keeps floating parts defined
PHASES = (0, 1, 2)
# Node and unknown layout of the nodal equations.
FED, FED_N, OTHER, OTHER_N, SOURCE_N, LINK = 0, 3, 4, 7, 8, 9
NODES = 10
I_SOURCE, I_FED, I_OTHER, E_LIMB = 10, 13, 16, 19
UNKNOWNS = 22

PhaseWaves = tuple[tuple[complex, ...], tuple[complex, ...], tuple[complex, ...]]  # [phase][order]


@dataclass(frozen=True)
class BayFaults:
    """What the faults do to the three-phase circuit (indices 0..2; None = healthy)."""

    shorted_limb: int | None = None
    shorted_admittance_pu: complex = 0j
    open_link_phase: int | None = None
    dead_source_phase: int | None = None


@dataclass(frozen=True)
class ThreePhasePoint:
    """Steady state at the fed terminals, per phase and harmonic, with what heats the windings."""

    orders: tuple[int, ...]
    terminal: PhaseWaves       # line terminal voltages about the source's star point
    current: PhaseWaves        # line currents into the fed terminals
    other_terminal: PhaseWaves # the other winding's terminal voltages about their centroid
    winding_current: PhaseWaves  # the fed winding's phase currents (a delta's differ from the line's)
    limb_emf: PhaseWaves       # per unit of rated flux
    winding_loss: float
    core_loss: float

    @staticmethod
    def zero(orders: tuple[int, ...]) -> "ThreePhasePoint":
        z = tuple(tuple(0j for _ in orders) for _ in PHASES)
        return ThreePhasePoint(orders, z, z, z, z, z, 0.0, 0.0)  # type: ignore[arg-type]

    # The source's own view: each phase's voltage to its star point and its line current.
    @cached_property
    def phase_voltages(self) -> tuple[float, float, float]:
        return tuple(waveform.rms(v) for v in self.terminal)  # type: ignore[return-value]

    @cached_property
    def phase_currents(self) -> tuple[float, float, float]:
        return tuple(waveform.rms(i) for i in self.current)  # type: ignore[return-value]

    @property
    def u_rms(self) -> float:
        """The largest phase voltage (what a single-value probe of the source reports)."""
        return max(self.phase_voltages)

    @property
    def i_rms(self) -> float:
        """The largest line current (what the source's current protection acts on)."""
        return max(self.phase_currents)

    @property
    def power(self) -> float:
        return sum((v * i.conjugate()).real for vp, ip in zip(self.terminal, self.current) for v, i in zip(vp, ip))

    def line_to_line(self, a: int, b: int) -> tuple[complex, ...]:
        return tuple(x - y for x, y in zip(self.terminal[a], self.terminal[b]))

    def to_centroid(self, a: int) -> tuple[complex, ...]:
        """Voltage of terminal ``a`` about the centroid of the three (an artificial star point)."""
        return tuple(self.terminal[a][n] - sum(self.terminal[q][n] for q in PHASES) / 3.0
                     for n in range(len(self.orders)))


class ThreePhaseTransformer(Transformer):
    """Parameters per winding phase and limb; ``solve`` gives the steady state."""

    def __init__(self, spec: TransformerSpec):
        super().__init__(spec)
        self.arrangement: dict[str, Arrangement] = dict(zip(
            ("hv", "lv"), connections.arrangements(spec.connection("hv"), spec.connection("lv"), spec.clock_number)))
        self.turns = {side: connections.coil_voltage(spec.connection(side), spec.winding(side).rated_voltage)
                      for side in ("hv", "lv")}
        self.declared_arrangement = dict(self.arrangement)

    def connect_for_another_clock(self, wrong: bool) -> None:
        """``wrong``: the windings connected as the same letters give another clock number (a
        delta closed the other way, a zigzag wound the other way); else as the nameplate says."""
        spec = self.spec
        self.arrangement = dict(self.declared_arrangement)
        if wrong:
            self.arrangement = dict(zip(("hv", "lv"), connections.another_clock(
                spec.connection("hv"), spec.connection("lv"), spec.clock_number)))

    def coil_turns(self, side: str) -> float:
        """One limb coil's voltage at rated flux, at the present tap."""
        return self.turns[side] * self.turns_factor[side]

    def r_phase(self, side: str, theta: float, phase: int) -> float:
        """D.c. resistance of one winding phase at ``theta`` degC."""
        return self.r_dc(side, theta) * self.spec.winding(side).phase_factor(phase)

    def phase_impedance(self, side: str, theta: float, h: int, phase: int, freq_pu: float) -> complex:
        w = self.spec.winding(side)
        f = w.phase_factor(phase)
        return complex((self.r_dc(side, theta) + self.r_additional(side, theta)) * f,
                       h * freq_pu * w.leakage_reactance * f)

    def line_resistances(self, side: str, theta: float) -> tuple[float, float, float]:
        """D.c. resistance between U-V, V-W, W-U of ``side`` at ``theta`` degC."""
        phases = tuple(self.r_phase(side, theta, p) for p in PHASES)
        return tuple(connections.pair_resistance(self.arrangement[side], phases, k)  # type: ignore[return-value]
                     for k in PHASES)

    def limb_shunt(self, e_pu: tuple[complex, ...], orders: tuple[int, ...], freq_pu: float,
                   limb: int) -> tuple[float, float, float]:
        """(G, B at the fundamental, core loss) of one limb, in VA per unit flux squared."""
        e_rms = waveform.rms(e_pu)
        if e_rms <= 0.0:
            return 0.0, 0.0, 0.0
        flux_pu = waveform.mean_rectified_scaled(orders, e_pu) / freq_pu
        core = self.spec.core
        loss = self.core_loss(flux_pu, e_rms, freq_pu) * core.loss_weights[limb] / 3.0
        mmf = self.magnetising_current_pu(flux_pu) * self.spec.rated_power / 3.0 * core.magnetising_weights[limb]
        return loss / e_rms ** 2, mmf / e_rms, loss

    def rated_shunt(self, limb: int) -> tuple[float, float, float]:
        """The limb's shunt at rated sinusoidal flux (the first estimate of the fixed point)."""
        return self.limb_shunt((1 + 0j,), (1,), 1.0, limb)


def phase_emfs(emf: tuple[complex, ...], orders: tuple[int, ...], dead_phase: int | None = None) -> PhaseWaves:
    """A balanced positive-sequence star source from phase U's harmonic phasors: phase p of
    order h lags by h x 120 degrees x p. A dead phase gives nothing."""
    return tuple(tuple(0j if p == dead_phase else e * cmath.exp(-2j * math.pi * h * p / 3.0)
                       for e, h in zip(emf, orders)) for p in PHASES)  # type: ignore[return-value]


def solve(tf: ThreePhaseTransformer, wiring: Wiring, emf: PhaseWaves, orders: tuple[int, ...], freq: float,
          theta: float, zs: SourceImpedance, faults: BayFaults = BayFaults()) -> ThreePhasePoint:
    """Steady state for source emf phasors ``emf[phase][order]`` (line-to-neutral)."""
    if all(e == 0 for wave in emf for e in wave):
        return ThreePhasePoint.zero(orders)
    freq_pu = freq / tf.spec.frequency
    # The network is fixed for this solve; only the limb shunts change between passes, so the
    # matrices are stamped once and every pass solves all orders in one batched call.
    fixed = np.array([_network(tf, wiring, h, freq_pu, theta, zs, faults) for h in orders])
    b = np.zeros((len(orders), UNKNOWNS), complex)
    b[:, I_SOURCE:I_SOURCE + 3] = np.array(emf, complex).T
    shunts = [tf.rated_shunt(k) for k in PHASES]
    for _ in range(SHUNT_PASSES + 1):
        x = _solve_with_shunts(fixed, b, orders, shunts)
        shunts = [tf.limb_shunt(tuple(complex(v) for v in x[:, E_LIMB + k]), orders, freq_pu, k) for k in PHASES]
    x = _solve_with_shunts(fixed, b, orders, shunts)
    return _point(tf, wiring, orders, list(x), theta, freq_pu, sum(s[2] for s in shunts))


def _solve_with_shunts(fixed: np.ndarray, b: np.ndarray, orders: tuple[int, ...], shunts) -> np.ndarray:
    a = fixed.copy()
    for n, h in enumerate(orders):
        for k in PHASES:
            g, bm, _ = shunts[k]
            a[n, E_LIMB + k, E_LIMB + k] -= complex(g, -bm / h)
    return np.linalg.solve(a, b[..., None])[..., 0]


def _network(tf: ThreePhaseTransformer, wiring: Wiring, h: int, freq_pu: float, theta: float,
             zs: SourceImpedance, faults: BayFaults) -> np.ndarray:
    """The nodal matrix of order ``h`` without the limbs' own shunts."""
    a = np.zeros((UNKNOWNS, UNKNOWNS), complex)
    a[range(NODES), range(NODES)] = EARTH_LEAK
    z_source = zs.at(h, freq_pu)
    for p in PHASES:  # source phase p: from its star point to fed terminal p
        row = I_SOURCE + p
        a[SOURCE_N, row] += 1.0
        a[FED + p, row] -= 1.0
        a[row, FED + p], a[row, SOURCE_N], a[row, row] = 1.0, -1.0, z_source
    fed, other = wiring.fed, other_side(wiring.fed)
    for side, node0, neutral, first in ((fed, FED, FED_N, I_FED), (other, OTHER, OTHER_N, I_OTHER)):
        arr, n = tf.arrangement[side], tf.coil_turns(side)
        for p in PHASES:
            start, end = arr.ends(p)
            i_row, end_node = first + p, neutral if end is None else node0 + end
            a[node0 + start, i_row] += 1.0
            a[end_node, i_row] -= 1.0
            a[i_row, node0 + start] += 1.0
            a[i_row, end_node] -= 1.0
            a[i_row, i_row] = -tf.phase_impedance(side, theta, h, p, freq_pu)
            for k, c in enumerate(arr.coil(p)):
                if c:
                    a[i_row, E_LIMB + k] -= n * c
                    a[E_LIMB + k, i_row] += n * c
    if faults.shorted_limb is not None:
        k = faults.shorted_limb
        a[E_LIMB + k, E_LIMB + k] -= fault_at(faults.shorted_admittance_pu * tf.spec.rated_power / 3.0, h, freq_pu)
    if wiring.other == "short":
        g_link = 1.0 / tf.spec.link_resistance
        for p in PHASES:
            if p != faults.open_link_phase:
                _conductance(a, OTHER + p, LINK, g_link)
    return a


def _conductance(a: np.ndarray, i: int, j: int, g: float) -> None:
    a[i, i] += g
    a[j, j] += g
    a[i, j] -= g
    a[j, i] -= g


def _point(tf: ThreePhaseTransformer, wiring: Wiring, orders, x: list[np.ndarray], theta: float,
           freq_pu: float, core_loss: float) -> ThreePhasePoint:
    def wave(index: int) -> tuple[complex, ...]:
        return tuple(complex(xn[index]) for xn in x)

    terminal = tuple(tuple(complex(xn[FED + p] - xn[SOURCE_N]) for xn in x) for p in PHASES)
    current = tuple(wave(I_SOURCE + p) for p in PHASES)
    winding_loss = 0.0
    for side, first in ((wiring.fed, I_FED), (other_side(wiring.fed), I_OTHER)):
        for p in PHASES:
            for n, h in enumerate(orders):
                r = tf.phase_impedance(side, theta, h, p, freq_pu).real
                winding_loss += abs(x[n][first + p]) ** 2 * r
    other_terminal = tuple(tuple(complex(xn[OTHER + p] - xn[OTHER:OTHER + 3].mean()) for xn in x) for p in PHASES)
    return ThreePhasePoint(orders, terminal, current, other_terminal,  # type: ignore[arg-type]
                           tuple(wave(I_FED + p) for p in PHASES),  # type: ignore[arg-type]
                           tuple(wave(E_LIMB + k) for k in PHASES), winding_loss, core_loss)  # type: ignore[arg-type]
