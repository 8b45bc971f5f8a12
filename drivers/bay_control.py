"""Wiring of the simulated bay (our own command profile): which winding is fed, and whether the
other is open or short-circuited by the link. A real bay changes wiring by hand, at an operator
prompt with the output off; only the simulated bay takes these commands. The same holds for
the off-circuit tap changer's position (``set_tap``)."""

from __future__ import annotations

from typing import Literal

from drivers.errors import ProtocolError
from drivers.profile import BayControlProfile
from drivers.scpi import ScpiInstrument, matches_word

Winding = Literal["hv", "lv"]
OtherWinding = Literal["open", "short"]


class BayControl(ScpiInstrument):
    KIND = "bay_control"
    profile: BayControlProfile

    def set_wiring(self, fed: Winding, other: OtherWinding) -> None:
        words = self.profile.words
        if fed not in ("hv", "lv"):
            raise ValueError(f"the fed winding is 'hv' or 'lv', got {fed!r}")
        if other not in ("open", "short"):
            raise ValueError(f"the other winding is 'open' or 'short', got {other!r}")
        self.configure(self._template("set_fed").format(fed=getattr(words, fed)))
        self.configure(self._template("set_other").format(other=getattr(words, other)))

    def wiring(self) -> tuple[Winding, OtherWinding]:
        """(fed winding, state of the other) as the bay reports them."""
        fed = self._choose(self._template("fed"), ("hv", "lv"))
        other = self._choose(self._template("other"), ("open", "short"))
        return fed, other  # type: ignore[return-value]

    def set_tap(self, tap: int) -> None:
        if isinstance(tap, bool) or not isinstance(tap, int):
            raise ValueError(f"a tap is a whole number, got {tap!r}")
        self.configure(self._template("set_tap").format(value=tap))

    def tap(self) -> int:
        return int(self._query_number(self._template("tap"), "tap position"))

    def _choose(self, command: str, names: tuple[str, str]) -> str:
        reply = self._query(command)
        for name in names:
            if matches_word(reply, getattr(self.profile.words, name)):
                return name
        raise ProtocolError(f"expected one of {', '.join(names)}, got '{reply}'", self.name, command)
