"""Vector groups of three-phase units: ``Dyn11``, ``YNd1``, ``Yzn5``, ``Yyn0``, ...

The notation (IEC 60076-1 Annex D, recalled): the HV connection in capitals (``Y`` star, ``D``
delta, ``Z`` zigzag) with ``N`` when its neutral is brought out, then the LV connection in lower
case with ``n``, then the clock number: the LV phasor's lag behind the HV phasor in multiples of
30 degrees. A star/delta or star/zigzag pair shifts by an odd multiple of 30 degrees and a pair
of like connections (or delta/zigzag) by an even one: that follows from the phasor geometry (a
delta's or a zigzag's line voltage is the difference of two phase voltages, 30 degrees from
either), so ``Dyn12`` or ``Yyn1`` cannot exist.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

_CONNECTIONS = {"y": "star", "d": "delta", "z": "zigzag"}
_PATTERN = re.compile(r"(?P<hv>[YDZ])(?P<hvn>N?)(?P<lv>[ydz])(?P<lvn>n?)(?P<clock>\d{1,2})")


@dataclass(frozen=True)
class VectorGroup:
    hv: str
    lv: str
    hv_neutral: bool
    lv_neutral: bool
    clock: int

    @property
    def displacement_deg(self) -> float:
        """The LV lag behind the HV in degrees (0 to 330)."""
        return 30.0 * self.clock


def parse_vector_group(text: str) -> VectorGroup:
    """Parse and check a vector group; ValueError with the reason when it cannot exist."""
    found = _PATTERN.fullmatch(text.strip())
    if found is None:
        raise ValueError(f"'{text}' is not a vector group (e.g. Dyn11, YNd1, Yzn5, Yyn0)")
    hv, lv = _CONNECTIONS[found["hv"].lower()], _CONNECTIONS[found["lv"]]
    clock = int(found["clock"])
    if clock > 11:
        raise ValueError(f"'{text}': the clock number is 0 to 11, not {clock}")
    if found["hvn"] and hv == "delta" or found["lvn"] and lv == "delta":
        raise ValueError(f"'{text}': a delta winding has no neutral to bring out")
    odd = (hv == "star") != (lv == "star")  # delta and zigzag both sit 30 degrees from star
    if (clock % 2 == 1) != odd:
        kind = "odd" if odd else "even"
        raise ValueError(f"'{text}': a {hv}/{lv} pair shifts by an {kind} multiple of 30 degrees, "
                         f"so its clock number is {kind}, not {clock}")
    return VectorGroup(hv, lv, bool(found["hvn"]), bool(found["lvn"]), clock)


def mismatches(group: VectorGroup, hv: str | None, lv: str | None, hv_neutral: bool, lv_neutral: bool
               ) -> list[tuple[str, str]]:
    """(winding, reason) for each place the nameplate's connections contradict the vector group."""
    found = []
    for name, connection, neutral, wanted, wanted_n in (("hv", hv, hv_neutral, group.hv, group.hv_neutral),
                                                        ("lv", lv, lv_neutral, group.lv, group.lv_neutral)):
        if connection is not None and connection != wanted:
            found.append((name, f"the vector group says {wanted}, the {name} connection says {connection}"))
        elif neutral != wanted_n:
            said = "a neutral brought out" if wanted_n else "no neutral brought out"
            found.append((name, f"the vector group says {said} on the {name} winding, its 'neutral' says otherwise"))
    return found
