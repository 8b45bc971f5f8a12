"""A multi-channel thermometer (ambient, oil/top, winding ... as the station names them)."""

from __future__ import annotations

from drivers.numbers import reply_number, reply_numbers
from drivers.profile import ThermometerProfile
from drivers.scpi import ScpiInstrument, channel_list


class Thermometer(ScpiInstrument):
    KIND = "thermometer"
    profile: ThermometerProfile

    def read(self, channel: int) -> float:
        """Temperature of one channel in degC; an open sensor raises :class:`OverRange`."""
        command = self._template("measure").format(channels=channel_list((channel,)))
        return reply_number(self._query(command), f"temperature of channel {channel}", self.name, command)

    def read_channels(self, channels: tuple[int, ...]) -> tuple[float, ...]:
        """Several channels in one query (a SCPI channel list); degC in the order given."""
        command = self._template("measure").format(channels=channel_list(tuple(channels)))
        values = reply_numbers(self._query(command), len(channels), "temperature", self.name, command)
        return tuple(values)
