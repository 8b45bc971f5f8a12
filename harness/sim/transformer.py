"""The single-phase transformer: T equivalent circuit with a nonlinear shunt, and its thermal state.

Referred to the energised ("fed") winding, at each harmonic order h:

    source emf -- Zs(h) -- [terminals] -- Z1(h) --+-- Z2'(h) -- link (or open)
                                                  |
                                             shunt Y(h)

Z1, Z2' hold each winding's d.c. resistance at the winding temperature, half the additional
(stray) load loss as a resistance falling with temperature, and the leakage reactance. The
shunt is linearised at the present flux: core loss (hysteresis following peak flux, that is the
mean-rectified voltage over frequency, plus eddy following rms voltage squared) as a
conductance, magnetising current from a saturating characteristic as a susceptance. A few
fixed-point passes settle it; everything is phasor algebra, no waveform simulation.

The three-phase unit (``three_phase``) builds on this class: the same resistances, core
characteristic and thermal nodes, per winding phase and per limb.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from functools import cached_property

from harness.sim import waveform
from harness.sim.scenario import TransformerSpec

Side = str  # "hv" | "lv"
SHUNT_PASSES = 4


def other_side(side: Side) -> Side:
    return "lv" if side == "hv" else "hv"


def _sin_power_mean(k: int) -> float:
    """Mean of sin(x)**k over a period, k even: C(k, k/2) / 2**k."""
    return math.comb(k, k // 2) / 2.0 ** k


@dataclass(frozen=True)
class OperatingPoint:
    """Steady state at the fed terminals, with what heats the windings."""

    orders: tuple[int, ...]
    voltage: tuple[complex, ...]   # terminal voltage per harmonic (rms phasors)
    current: tuple[complex, ...]   # fed-winding current per harmonic
    u_rms: float
    u_mean: float                  # mean-rectified, rms-scaled
    i_rms: float
    power: float
    winding_loss: float            # I^2 R (d.c. + additional) of both windings
    core_loss: float
    other_current: float           # rms current in the other winding, its own side
    other_voltage: tuple[complex, ...] = ()  # the other winding's terminal voltage per harmonic, its own side

    @staticmethod
    def zero(orders: tuple[int, ...]) -> "OperatingPoint":
        z = tuple(0j for _ in orders)
        return OperatingPoint(orders, z, z, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, z)


class Transformer:
    """Model parameters from the scenario and the circuit solution for a wiring state."""

    def __init__(self, spec: TransformerSpec):
        self.spec = spec
        self.turns_factor = {"hv": 1.0, "lv": 1.0}
        self.polarity = 1.0
        self.ratio = spec.hv.rated_voltage / spec.lv.rated_voltage

    def set_turns(self, tap: int, polarity: float = 1.0) -> None:
        """The tapped winding's turns at ``tap`` (taps change turns, nothing else); ``polarity`` -1
        reverses the other winding's voltage (a single-phase winding connected the wrong way round)."""
        taps = self.spec.taps
        self.turns_factor = {"hv": 1.0, "lv": 1.0}
        if taps is not None:
            self.turns_factor[taps.winding] = taps.factor(tap)
        self.polarity = polarity
        self.ratio = (self.spec.hv.rated_voltage * self.turns_factor["hv"]
                      / (self.spec.lv.rated_voltage * self.turns_factor["lv"]))

    # -- resistances and temperature
    def r_dc(self, side: Side, theta: float) -> float:
        """D.c. winding resistance at ``theta`` degC (R2 = R1 (C + t2)/(C + t1))."""
        c = self.spec.material_constant
        return self.spec.winding(side).resistance * (c + theta) / (c + self.spec.resistance_temperature)

    def r_additional(self, side: Side, theta: float) -> float:
        """Half the additional load loss as a resistance on ``side`` (per winding phase of a
        three-phase unit), falling with temperature."""
        c, ref = self.spec.material_constant, self.spec.reference_temperature
        at_ref = 0.5 * self.spec.additional_loss / self.spec.phases / self.spec.rated_phase_current(side) ** 2
        return at_ref * (c + ref) / (c + theta)

    def referral(self, fed: Side) -> float:
        """Impedance factor from the other winding's side to the fed side."""
        return self.ratio ** 2 if fed == "hv" else 1.0 / self.ratio ** 2

    def winding_impedance(self, side: Side, theta: float, h: int) -> complex:
        w = self.spec.winding(side)
        return complex(self.r_dc(side, theta) + self.r_additional(side, theta), h * w.leakage_reactance)

    # -- the core
    @cached_property
    def _knee(self) -> tuple[float, float, int, float]:
        s, n = self.spec.core.knee_share, self.spec.core.knee_exponent
        k1, k2 = 1.0 - s, s
        return k1, k2, n, self._magnetising_shape(1.0, k1, k2, n)

    @staticmethod
    def _magnetising_shape(x: float, k1: float, k2: float, n: int) -> float:
        """Rms of k1 x sin + k2 (x sin)**n over a period (sinusoidal flux of peak x pu)."""
        m2, mc, mn = _sin_power_mean(2), _sin_power_mean(n + 1), _sin_power_mean(2 * n)
        return math.sqrt(k1 * k1 * x * x * m2 + 2 * k1 * k2 * x ** (n + 1) * mc + k2 * k2 * x ** (2 * n) * mn)

    def magnetising_current_pu(self, flux_pu: float) -> float:
        """Magnetising current in per unit of rated current, at peak flux ``flux_pu``."""
        k1, k2, n, at_rated = self._knee
        pct = self.spec.core.magnetising_current / 100.0
        return pct * self._magnetising_shape(flux_pu, k1, k2, n) / at_rated

    def core_loss(self, flux_pu: float, rms_pu: float, freq_pu: float) -> float:
        """Hysteresis ~ f B^x (B from the mean-rectified voltage) + eddy ~ Urms^2."""
        core = self.spec.core
        hysteresis = core.hysteresis_fraction * freq_pu * flux_pu ** core.steinmetz_exponent
        eddy = (1.0 - core.hysteresis_fraction) * rms_pu ** 2
        return core.loss * (hysteresis + eddy)

    def shunt(self, fed: Side, e: tuple[complex, ...], orders: tuple[int, ...], freq: float) -> tuple[float, float, float]:
        """(G, B at the fundamental, core loss) for shunt voltage phasors ``e``."""
        e_rms = waveform.rms(e)
        if e_rms <= 0.0:
            return 0.0, 0.0, 0.0
        u_r, f_r = self.spec.winding(fed).rated_voltage * self.turns_factor[fed], self.spec.frequency
        freq_pu = freq / f_r
        flux_pu = waveform.mean_rectified_scaled(orders, e) / u_r / freq_pu
        loss = self.core_loss(flux_pu, e_rms / u_r, freq_pu)
        i_m = self.magnetising_current_pu(flux_pu) * self.spec.rated_current(fed)
        return loss / e_rms ** 2, i_m / e_rms, loss


@dataclass(frozen=True)
class Wiring:
    fed: Side = "lv"
    other: str = "open"   # "open" | "short"


@dataclass(frozen=True)
class SourceImpedance:
    resistance: float
    reactance: float      # at the unit's rated frequency

    def at(self, h: int, freq_pu: float) -> complex:
        return complex(self.resistance, self.reactance * h * freq_pu)


def solve(tf: Transformer, wiring: Wiring, emf: tuple[complex, ...], orders: tuple[int, ...],
          freq: float, theta: float, zs: SourceImpedance, fault_admittance_pu: complex = 0j) -> OperatingPoint:
    """Steady state of the bay for source emf phasors ``emf`` (one per order)."""
    if all(e == 0 for e in emf):
        return OperatingPoint.zero(orders)
    fed, other = wiring.fed, other_side(wiring.fed)
    freq_pu = freq / tf.spec.frequency
    k = tf.referral(fed)
    y_fault = fault_admittance_pu * tf.spec.rated_current(fed) / tf.spec.winding(fed).rated_voltage
    z1 = [_at_freq(tf.winding_impedance(fed, theta, h), h, freq_pu) for h in orders]
    z2 = [_at_freq(tf.winding_impedance(other, theta, h), h, freq_pu) * k for h in orders]
    z_link = tf.spec.link_resistance * k if wiring.other == "short" else None
    g, b, loss = tf.shunt(fed, emf, orders, freq)
    for _ in range(SHUNT_PASSES):
        v, i, e, i2 = _branch_currents(emf, orders, z1, z2, z_link, g, b, y_fault, zs, freq_pu)
        g, b, loss = tf.shunt(fed, e, orders, freq)
    v, i, e, i2 = _branch_currents(emf, orders, z1, z2, z_link, g, b, y_fault, zs, freq_pu)
    op = _operating_point(orders, v, i, i2, z1, z2, loss, k)
    other = tuple(tf.polarity * (en - i2n * z2n) / math.sqrt(k) for en, i2n, z2n in zip(e, i2, z2))
    return dataclasses.replace(op, other_voltage=other)


def _at_freq(z_rated: complex, h: int, freq_pu: float) -> complex:
    """Scale the reactive part from the rated frequency to this one (resistance unchanged)."""
    return complex(z_rated.real, z_rated.imag * freq_pu)


def _branch_currents(emf, orders, z1, z2, z_link, g, b, y_fault, zs: SourceImpedance, freq_pu: float):
    v_out, i_out, e_out, i2_out = [], [], [], []
    for idx, h in enumerate(orders):
        y_shunt = complex(g, -b / h) + fault_at(y_fault, h, freq_pu)
        y_other = 0j if z_link is None else 1.0 / (z2[idx] + z_link)
        y_mid = y_shunt + y_other
        i = 0j if y_mid == 0 else emf[idx] / (zs.at(h, freq_pu) + z1[idx] + 1.0 / y_mid)
        v = emf[idx] - zs.at(h, freq_pu) * i
        e = v - z1[idx] * i
        v_out.append(v)
        i_out.append(i)
        e_out.append(e)
        i2_out.append(e * y_other)
    return tuple(v_out), tuple(i_out), tuple(e_out), tuple(i2_out)


def fault_at(y_fault: complex, h: int, freq_pu: float) -> complex:
    """The shorted-turn loop as a series R + jX whose reactance scales with frequency."""
    if y_fault == 0:
        return 0j
    z = 1.0 / y_fault
    return 1.0 / complex(z.real, z.imag * h * freq_pu)


def _operating_point(orders, v, i, i2, z1, z2, core_loss: float, k: float) -> OperatingPoint:
    u_rms = waveform.rms(v)
    power = sum((vh * ih.conjugate()).real for vh, ih in zip(v, i))
    winding_loss = sum(abs(a) ** 2 * za.real + abs(c) ** 2 * zc.real for a, za, c, zc in zip(i, z1, i2, z2))
    return OperatingPoint(
        orders=orders, voltage=v, current=i, u_rms=u_rms,
        u_mean=waveform.mean_rectified_scaled(orders, v), i_rms=waveform.rms(i), power=power,
        winding_loss=winding_loss, core_loss=core_loss,
        other_current=waveform.rms(i2) * math.sqrt(k),
    )


class FirstOrder:
    """A thermal node: C dT/dt = P - (T - T_amb)/R_th, stepped exactly for constant P."""

    def __init__(self, heat_capacity: float, time_constant: float, temperature: float):
        self.heat_capacity = heat_capacity
        self.time_constant = time_constant
        self.temperature = temperature

    def step(self, dt: float, power: float, ambient: float) -> None:
        final = ambient + power * self.time_constant / self.heat_capacity
        self.temperature = final + (self.temperature - final) * math.exp(-dt / self.time_constant)
