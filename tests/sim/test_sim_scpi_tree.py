"""The instrument-side SCPI command tree.

Conventions checked against SCPI-1999 vol. 1 ch. 6-7 (mnemonics, optional nodes, compound
headers) and IEEE 488.2 ch. 10-11 (common commands, ESR/STB bits); error codes from SCPI-1999
vol. 2 ch. 21 (recalled from the standard, as listed in the project's pyvisa notes).
"""

from __future__ import annotations

import math

import pytest

from harness.sim.scpi_tree import (
    CommandTree, ScpiError, compile_pattern, format_number, match_nodes, parse_channels, parse_number,
    split_units,
)


def make_tree() -> tuple[CommandTree, dict]:
    state: dict = {"volt": 0.0, "out": False}
    tree = CommandTree("Harness Sim,TEST,0,1.0")

    def set_volt(p):
        value = parse_number(p[0], "V", {"MAXIMUM": 100.0})
        if not 0 <= value <= 100:
            raise ScpiError(-222)
        state["volt"] = value

    tree.add("[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]", set_volt, lambda p: format_number(state["volt"]))
    tree.add("[SOURce:]FREQuency[:CW]", lambda p: state.update(freq=parse_number(p[0])), lambda p: "50")
    tree.add("OUTPut[:STATe]", lambda p: state.update(out=p[0].upper() in ("ON", "1")), lambda p: str(int(state["out"])))
    tree.add("MEASure[:SCALar]:VOLTage[:AC]", getter=lambda p: "1.0")
    tree.add("MEASure[:SCALar]:VOLTage:MEAN", getter=lambda p: "2.0")
    tree.add("SYSTem:ERRor[:NEXT]", getter=lambda p: tree.status.pop())
    return tree, state


@pytest.mark.parametrize("header", [
    "VOLT 12.5", "volt 12.5", "VOLTage 12.5", "voltage 12.5", "SOUR:VOLT 12.5", "source:voltage:level 12.5",
    ":SOURce:VOLTage:LEVel:IMMediate:AMPLitude 12.5", "sour:volt:imm 12.5", "VOLT:AMPL 12.5",
    "SOUR1:VOLT 12.5", "VOLT 1.25E1", "VOLT +12.5", "VOLT 12500 mV",
])
def test_short_long_case_and_optional_nodes_all_reach_the_setpoint(header):
    tree, state = make_tree()
    assert tree.execute(header) is None
    assert state["volt"] == pytest.approx(12.5)
    assert tree.execute("SYST:ERR?") == '0,"No error"'


@pytest.mark.parametrize("header", ["VOLTA 1", "VOL 1", "SOURC:VOLT 1", "VOLT:LEV:LEV 1", "LEV 1"])
def test_misspelt_or_misplaced_mnemonics_are_undefined_headers(header):
    tree, state = make_tree()
    tree.execute(header)
    assert tree.execute("SYST:ERR?").startswith("-113,")
    assert state["volt"] == 0.0


def test_compound_message_with_root_reset_answers_each_query_joined_by_semicolons():
    tree, _ = make_tree()
    assert tree.execute("MEAS:VOLT:AC?;:MEAS:VOLT:MEAN?;:VOLT 3;VOLT?") == "1.0;2.0;3.0000000E+00"


def test_a_unit_without_colon_continues_from_the_previous_path():
    tree, _ = make_tree()
    # After SOUR:VOLT the path is SOUR:, so FREQ means SOUR:FREQ (SCPI-1999 vol. 1, 6.2.4).
    tree.execute("SOUR:VOLT 4;FREQ 55")
    assert tree.execute("SYST:ERR?") == '0,"No error"'


def test_numeric_keywords_and_out_of_range_data():
    tree, state = make_tree()
    tree.execute("VOLT MAX")
    assert state["volt"] == 100.0
    tree.execute("VOLT 101")
    assert tree.execute("SYST:ERR?") == '-222,"Data out of range"'
    tree.execute("VOLT abc")
    assert tree.execute("SYST:ERR?").startswith("-104,")
    assert state["volt"] == 100.0


def test_common_commands_and_status_bits():
    tree, _ = make_tree()
    assert tree.execute("*IDN?") == "Harness Sim,TEST,0,1.0"
    assert tree.execute("*OPC?") == "1"
    assert int(tree.execute("*ESR?")) & 128  # power-on bit, then cleared by the read
    assert tree.execute("*ESR?") == "0"
    tree.execute("BOGUS")
    assert int(tree.execute("*STB?")) & 4    # error/event queue not empty
    assert int(tree.execute("*ESR?")) == 32  # command error
    tree.execute("VOLT 1000")
    assert int(tree.execute("*ESR?")) == 16  # execution error
    tree.execute("*CLS")
    assert tree.execute("*STB?") == "0"
    assert tree.execute("SYST:ERR?") == '0,"No error"'


def test_error_queue_is_fifo_and_overflow_replaces_the_last_entry():
    tree, _ = make_tree()
    for _ in range(12):
        tree.execute("NOPE")
    codes = [int(tree.execute("SYST:ERR?").split(",")[0]) for _ in range(11)]
    assert codes[:9] == [-113] * 9
    assert codes[9] == -350
    assert codes[10] == 0


def test_command_error_stops_the_rest_of_the_message():
    tree, state = make_tree()
    assert tree.execute("NOPE;VOLT 5") is None
    assert state["volt"] == 0.0


def test_parameter_count_errors_on_common_commands():
    tree, _ = make_tree()
    tree.execute("*IDN? 3")
    assert tree.execute("SYST:ERR?").startswith("-108,")
    tree.execute("*ESE")
    assert tree.execute("SYST:ERR?").startswith("-109,")


def test_query_of_a_set_only_common_command_is_undefined():
    tree, _ = make_tree()
    tree.execute("*RST?")
    assert tree.execute("SYST:ERR?").startswith("-113,")


def test_channel_lists():
    assert parse_channels("(@1)", range(1, 4)) == [1]
    assert parse_channels("(@1,2,3)", range(1, 4)) == [1, 2, 3]
    assert parse_channels("(@1:3)", range(1, 4)) == [1, 2, 3]
    with pytest.raises(ScpiError) as err:
        parse_channels("(@4)", range(1, 4))
    assert err.value.code == -222
    with pytest.raises(ScpiError):
        parse_channels("1", range(1, 4))


def test_overload_and_nan_are_formatted_as_the_scpi_values():
    assert float(format_number(math.inf)) == 9.9e37
    assert float(format_number(-math.inf)) == -9.9e37
    assert float(format_number(math.nan)) == 9.91e37


def test_split_keeps_channel_lists_and_quotes_together():
    assert split_units('A? (@1,2);:B "x;y";C') == ["A? (@1,2)", ':B "x;y"', "C"]


def test_pattern_compilation_and_matching():
    nodes = compile_pattern("MEASure[:SCALar]:VOLTage[:AC]")
    assert [n.short for n in nodes] == ["MEAS", "SCAL", "VOLT", "AC"]
    assert match_nodes(["MEAS", "VOLT"], nodes)
    assert match_nodes(["MEASURE", "SCALAR", "VOLTAGE", "AC"], nodes)
    assert not match_nodes(["MEAS", "AC"], nodes)


def test_numeric_suffix_other_than_one_is_out_of_range():
    tree, _ = make_tree()
    tree.execute("SOUR2:VOLT 1")
    assert tree.execute("SYST:ERR?").startswith("-114,")
