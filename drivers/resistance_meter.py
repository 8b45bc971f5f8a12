"""A d.c. resistance meter (four-wire) for winding resistance, with its test current."""

from __future__ import annotations

from drivers.numbers import reply_number
from drivers.profile import ResistanceMeterProfile
from drivers.scpi import ScpiInstrument, channel_list


class ResistanceMeter(ScpiInstrument):
    KIND = "resistance_meter"
    profile: ResistanceMeterProfile

    def resistance(self, channel: int) -> float:
        """Ohms between the leads of ``channel`` (as the station wires them: e.g. 1 hv, 2 lv).
        Open leads answer the overload value, which raises :class:`OverRange`."""
        command = self._template("measure").format(channels=channel_list((channel,)))
        return reply_number(self._query(command), f"resistance of channel {channel}", self.name, command)

    def test_current(self) -> float | None:
        """The d.c. test current (A), None when the profile cannot ask for it."""
        command = self._cmd["test_current"]
        return None if command is None else self._query_number(command, "test current")

    def measure(self, channel: int) -> tuple[float, float | None]:
        """(ohm, test current in A) of one channel."""
        return self.resistance(channel), self.test_current()
