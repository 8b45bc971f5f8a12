"""Three-phase winding connections: star, delta and zigzag, their terminals and the clock number.

A three-limb core carries limbs 0, 1, 2 (phases U, V, W). Each winding has three phases; phase
p of a winding runs between two nodes (line terminal p and the neutral for star and zigzag; line
terminals p and p+s for delta) and links the limbs through a coil vector: star and delta put the
whole phase on limb p; zigzag puts one half on limb p and the other half, reversed, on limb p+s.
``polarity`` -1 reverses a whole winding (adds six hours to the clock).

The clock number of a vector group (IEC 60076-1, Annex D, recalled) is the angle, in steps of
30 degrees, by which the LV line-to-neutral voltage of phase U lags the HV one with a
positive-sequence supply. The model does not take the phase labelling from the scenario: it
picks the arrangement of each winding (delta lead or lag, zigzag direction, polarity) that
gives the stated clock, and refuses combinations that none gives (Yy1, Dy0, ...).
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from functools import lru_cache
from itertools import product

import numpy as np

from harness.common.vector_group import VectorGroup, parse_vector_group  # noqa: F401 - the notation, shared with the calculation core

Connection = str  # "star" | "delta" | "zigzag"
CONNECTIONS = ("star", "delta", "zigzag")
LETTERS = {"star": "Y", "delta": "D", "zigzag": "Z"}
POSITIVE_SEQUENCE = tuple(cmath.exp(-2j * math.pi * k / 3) for k in range(3))


@dataclass(frozen=True)
class Arrangement:
    """How one winding's phases sit on the limbs and the terminals."""

    connection: Connection
    shift: int = 1        # delta: phase p ends at terminal p+shift; zigzag: second half on limb p+shift
    polarity: int = 1

    @property
    def has_neutral_node(self) -> bool:
        return self.connection != "delta"

    def ends(self, p: int) -> tuple[int, int | None]:
        """(start terminal, end terminal or None for the neutral) of phase ``p``."""
        if self.connection == "delta":
            return p, (p + self.shift) % 3
        return p, None

    def coil(self, p: int) -> tuple[float, float, float]:
        """Turns of phase ``p`` on each limb, in units of the winding's coil turns."""
        c = [0.0, 0.0, 0.0]
        c[p] += self.polarity
        if self.connection == "zigzag":
            c[(p + self.shift) % 3] -= self.polarity
        return c[0], c[1], c[2]


def coil_voltage(connection: Connection, line_voltage: float) -> float:
    """Voltage across one limb's coil at rated flux for a winding of rated line-to-line voltage."""
    return {"star": line_voltage / math.sqrt(3.0), "delta": line_voltage,
            "zigzag": line_voltage / 3.0}[connection]


def phase_current(connection: Connection, rated_power: float, line_voltage: float) -> float:
    """Rated current of one winding phase (a delta phase carries the line current over root 3)."""
    line = rated_power / (math.sqrt(3.0) * line_voltage)
    return line / math.sqrt(3.0) if connection == "delta" else line


def star_equivalent_factor(connection: Connection) -> float:
    """Phase impedance times this = the star-equivalent (line-to-neutral) impedance."""
    return 1.0 / 3.0 if connection == "delta" else 1.0


def open_circuit_voltages(arr: Arrangement, emf: tuple[complex, ...] = POSITIVE_SEQUENCE) -> np.ndarray:
    """Line terminal voltages about their centroid for limb emfs ``emf`` (coil voltage 1)."""
    rows, rhs = [], []
    n = 4 if arr.has_neutral_node else 3
    for p in range(3):
        a, b = arr.ends(p)
        row = np.zeros(n, complex)
        row[a] += 1.0
        row[3 if b is None else b] -= 1.0
        rows.append(row)
        rhs.append(sum(c * e for c, e in zip(arr.coil(p), emf)))
    centroid = np.zeros(n, complex)
    centroid[:3] = 1.0
    rows.append(centroid)
    rhs.append(0.0)
    solution = np.linalg.lstsq(np.array(rows), np.array(rhs), rcond=None)[0]
    return solution[:3]


def clock_of(hv: Arrangement, lv: Arrangement) -> int:
    """Hours (30 degree steps) by which LV terminal U lags HV terminal U."""
    u_hv, u_lv = open_circuit_voltages(hv)[0], open_circuit_voltages(lv)[0]
    lag = math.degrees(cmath.phase(u_hv) - cmath.phase(u_lv)) % 360.0
    return int(round(lag / 30.0)) % 12


def _options(connection: Connection, polarities: tuple[int, ...]) -> list[Arrangement]:
    shifts = (1, 2) if connection != "star" else (1,)
    return [Arrangement(connection, s, pol) for pol, s in product(polarities, shifts)]


@lru_cache(maxsize=64)
def arrangements(hv: Connection, lv: Connection, clock: int) -> tuple[Arrangement, Arrangement]:
    """The windings' arrangements giving ``clock``; ValueError when no arrangement does."""
    for a_hv in _options(hv, (1,)):
        for a_lv in _options(lv, (1, -1)):
            if clock_of(a_hv, a_lv) == clock:
                return a_hv, a_lv
    possible = sorted({clock_of(a, b) for a in _options(hv, (1,)) for b in _options(lv, (1, -1))})
    raise ValueError(f"a {hv} HV and {lv} LV winding cannot give clock {clock}; "
                     f"possible: {', '.join(map(str, possible))}")


def another_clock(hv: Connection, lv: Connection, clock: int) -> tuple[Arrangement, Arrangement]:
    """The same connections wired for another clock number, the polarity kept (a delta closed on
    the other pair of terminals, a zigzag's halves swapped): the wrong-vector-group fault. A star/star
    unit can only be reversed (six hours on)."""
    declared = arrangements(hv, lv, clock)[1].polarity
    for polarity in (declared, -declared):
        for a_hv in _options(hv, (1,)):
            for a_lv in _options(lv, (polarity,)):
                if clock_of(a_hv, a_lv) != clock:
                    return a_hv, a_lv
    raise ValueError(f"a {hv}/{lv} unit has no other clock")


def vector_group_name(hv: Connection, hv_neutral: bool, lv: Connection, lv_neutral: bool, clock: int) -> str:
    return (LETTERS[hv] + ("N" if hv_neutral else "") + LETTERS[lv].lower()
            + ("n" if lv_neutral else "") + str(clock))


def terminal_pairs() -> tuple[tuple[int, int], ...]:
    """The line-to-line pairs of a three-phase winding: (U,V), (V,W), (W,U)."""
    return ((0, 1), (1, 2), (2, 0))


def pair_resistance(arr: Arrangement, phase_ohms: tuple[float, float, float], pair: int) -> float:
    """D.c. resistance between the terminals of ``pair`` through the winding's network."""
    n = 4 if arr.has_neutral_node else 3
    laplacian = np.zeros((n, n))
    for p in range(3):
        a, b = arr.ends(p)
        b = 3 if b is None else b
        g = 1.0 / phase_ohms[p]
        laplacian[a, a] += g
        laplacian[b, b] += g
        laplacian[a, b] -= g
        laplacian[b, a] -= g
    x, y = terminal_pairs()[pair]
    inject = np.zeros(n)
    inject[x], inject[y] = 1.0, -1.0
    v = np.linalg.pinv(laplacian) @ inject
    return float(v[x] - v[y])
