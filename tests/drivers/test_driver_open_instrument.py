"""The factory: kind, resource, profile and name in; an instrument (or a clear error) out."""

from __future__ import annotations

import drivers
import pytest

from drivers import INSTRUMENT_CLASSES, KINDS, PowerAnalyser, open_instrument
from harness.common.errors import InputError


def test_every_kind_has_a_class_and_a_generic_profile() -> None:
    assert set(INSTRUMENT_CLASSES) == set(KINDS)
    for kind, cls in INSTRUMENT_CLASSES.items():
        assert cls.KIND == kind


def test_options_reach_the_class(sim_rm) -> None:
    rm = sim_rm("generic-power-analyser")
    analyser = open_instrument("power_analyser", "TCPIP0::sim-analyser::5025::SOCKET", "generic", "pa",
                               rm=rm, channels=(1, 2, 3))
    try:
        assert isinstance(analyser, PowerAnalyser) and analyser.channels == (1, 2, 3)
        assert "(@1,2,3)" in analyser.snapshot_command
    finally:
        analyser.close()


def test_unknown_kind() -> None:
    with pytest.raises(ValueError, match="unknown instrument kind 'scope'"):
        open_instrument("scope", "TCPIP0::127.0.0.1::5025::SOCKET", "generic", "x")


def test_bad_profile_fails_before_any_link_is_opened(tmp_path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: 1\nname: bad\nkind: thermometer\ncommands: {}\n")
    with pytest.raises(InputError, match="bad.yaml:4:11: 'commands.measure' is required"):
        open_instrument("thermometer", "no such resource", bad, "t")


def test_bad_class_option_closes_the_link(sim_rm) -> None:
    rm = sim_rm("generic-power-analyser")
    with pytest.raises(ValueError, match="positive whole number"):
        open_instrument("power_analyser", "TCPIP0::sim-analyser::5025::SOCKET", "generic", "pa", rm=rm, channels=(0,))
    assert rm.list_opened_resources() == []


def test_public_surface_is_sorted_and_importable() -> None:
    assert drivers.__all__ == sorted(drivers.__all__)
    for name in drivers.__all__:
        assert hasattr(drivers, name)
