"""Compound messages (IEEE 488.2 7.1, SCPI-99 6.2.4 path rule) and the command tree's error codes."""

from __future__ import annotations

import pytest
from hypothesis import given, strategies as st

from benchlog.scpi.errors import ScpiError, ScpiSyntaxError
from benchlog.scpi.messages import ProgramUnit, split_message
from benchlog.scpi.tree import CommandError, CommandTree, bool_param, choice_param, number_param


def test_compound_message_keeps_the_path():
    units = split_message("SOUR:VOLT 12;CURR 1.5;*RST;:OUTP ON;SYST:ERR?")
    assert units == [
        ProgramUnit("SOUR:VOLT", False, ("12",)),
        ProgramUnit("SOUR:CURR", False, ("1.5",)),  # continues SOUR: after ';'
        ProgramUnit("*RST", False, ()),  # common command: does not change the path
        ProgramUnit("OUTP", False, ("ON",)),  # leading ':' returns to the root
        ProgramUnit("SYST:ERR", True, ()),
    ]


def test_parameters_and_quoted_strings():
    assert split_message("CONF:VOLT:DC 0.1, 1e-6")[0].params == ("0.1", "1e-6")
    assert split_message('DISP:TEXT "a;b,c"')[0].params == ('"a;b,c"',)
    assert split_message("  ") == []


@pytest.mark.parametrize("text, code", [('VOLT "x', -102), ("VOLT 1;;CURR 1", -100), ("VOLT$ 1", -102),
                                        ("VOLT 1,,2", -102), ("VOLT::LEV 1", -102), ("1VOLT", -102)])
def test_malformed_messages(text, code):
    with pytest.raises(ScpiSyntaxError) as info:
        split_message(text)
    assert info.value.code == code


@given(st.text(max_size=60))
def test_split_message_raises_only_its_own_error(text):
    try:
        units = split_message(text)
    except ScpiError:
        return
    for unit in units:
        assert ";" not in unit.header


@pytest.fixture
def tree():
    state = {"v": 0.0, "pol": "NORMal"}
    t = CommandTree()
    t.command("[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]",
              lambda v: state.update(v=number_param(v, lo=0, hi=30, name="voltage")), 1)
    t.query("[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]", lambda: f"{state['v']:+.6E}")
    t.command("OUTPut:POLarity", lambda p: state.update(pol=choice_param(p, ("NORMal", "INVerted"))), 1)
    t.query("OUTPut:POLarity?", lambda: state["pol"].upper()[:4])
    t.command("OUTPut[:STATe]", lambda s: bool_param(s) and None, 1)
    t.command("CONFigure:VOLTage", lambda *a: None, (0, 2))
    t.command("FAIL", lambda: (_ for _ in ()).throw(CommandError(-221, "busy")))
    return t


@pytest.mark.parametrize(
    "message, response, codes",
    [
        ("VOLT 12;VOLT?", "+1.200000E+01", []),
        ("SOUR:VOLT 5;VOLT?", "+5.000000E+00", []),
        ("VOLT 40", None, [-222]),
        ("VOLT abc", None, [-224]),
        ("VOLT MAX;VOLT?", "+3.000000E+01", []),
        ("VOL 1", None, [-113]),
        ("VOLTA 1", None, [-113]),
        ("*RST?", None, [-113]),
        ("VOLT", None, [-109]),
        ("VOLT 1,2", None, [-108]),
        ("OUTP MAYBE", None, [-224]),
        ("OUTP:POL INV;POL?", "INVE", []),
        ("CONF:VOLT;:CONF:VOLT 1;:CONF:VOLT 1,2", None, []),
        ("CONF:VOLT;CONF:VOLT 1", None, [-113]),  # path rule: the second header is CONF:CONF:VOLT
        ("CONF:VOLT 1,2,3", None, [-108]),
        ("FAIL;VOLT?", "+0.000000E+00", [-221]),  # execution error: the rest still runs
        ("VOLT 1 2;VOLT?", "+0.000000E+00", [-224]),  # "1 2" is one bad value, not two
        ("NOPE;VOLT?", None, [-113]),  # command error: the parser stops
        ("VOLT?;VOLT?", "+0.000000E+00;+0.000000E+00", []),
    ],
)
def test_tree_codes(tree, message, response, codes):
    outcome = tree.execute(message)
    assert outcome.response == response
    assert [c for c, _ in outcome.errors] == codes


def test_error_texts_start_with_the_standard_text(tree):
    outcome = tree.execute("VOLT 40")
    assert outcome.errors[0][1].startswith("Data out of range")
