"""text.py: what reaches a terminal, an error message or a spreadsheet.

Checks against outside definitions: the Unicode character database (``unicodedata``: categories
Cc, Zl, Zp; Unicode TR9 for the bidirectional controls) and the OWASP CSV-injection guidance
(https://owasp.org/www-community/attacks/CSV_Injection: cells starting with = + - @ tab or CR).
"""
import math
import unicodedata

import numpy as np
import pandas as pd
import pytest

from siltandem import StackError
from siltandem.text import MISSING, csv_cell, csv_safe, excerpt, number, printable

BIDI_CONTROLS = ["\u061c", "\u200e", "\u200f", *map(chr, range(0x202A, 0x202F)),
                 *map(chr, range(0x2066, 0x206A))]


def test_every_control_character_is_escaped():
    controls = [chr(c) for c in range(0x110000)
                if unicodedata.category(chr(c)) in ("Cc", "Zl", "Zp")] + BIDI_CONTROLS
    assert len(controls) == 65 + 2 + len(BIDI_CONTROLS)
    for c in controls:
        shown = printable(f"a{c}b")
        assert c not in shown and shown.startswith("a\\") and shown.endswith("b"), repr(c)


def test_letters_symbols_and_layout_pass():
    text = "Ga0.51In0.49P — ÅngstrÖm 中文 ✓ µm"
    assert printable(text) == text
    assert printable("a\tb\nc", keep_newlines=True) == "a\tb\nc"
    assert printable("a\tb\nc") == "a\\x09b\\x0ac"
    assert printable("\x1b[2J\x9b31m\r", keep_newlines=True) == "\\x1b[2J\\x9b31m\\x0d"


def test_an_excerpt_is_short_and_escaped():
    long = "SECRET=" + "x" * 5000
    shown = excerpt(long)
    assert len(shown) < 100 and shown.endswith("... (5007 characters)")
    assert excerpt("a\x1bb") == "'a\\x1bb'"
    assert excerpt(int("9" * 400)) == "999999999999... (a whole number of 400 digits)"
    assert excerpt([1, 2]) == "[1, 2]"
    assert len(excerpt(list(range(10_000)))) <= 63


def test_number_says_none_where_there_is_no_value():
    assert number(1.23456, ".3f") == "1.235"
    for missing in (None, math.nan, math.inf, -math.inf, np.float64("nan")):
        assert number(missing, ".3f") == MISSING
    assert number(math.nan, ".3f", "-") == "-"


@pytest.mark.parametrize("cell", ["=1+1", "+1", "-cmd", "@SUM(A1)", "\tx", "\rx"])
def test_a_formula_cell_gets_a_leading_quote(cell):
    shown = csv_cell(cell)
    assert shown == "'" + printable(cell)
    assert csv_cell("top") == "top" and csv_cell(-1.5) == -1.5


def test_csv_safe_leaves_numbers_alone():
    frame = pd.DataFrame({"=name": ["=a", "b", None], "voltage_V": [-1.5, 2.0, math.inf],
                          "ok": [True, False, True], "n": [1, 2, 3]})
    out = csv_safe(frame)
    assert list(out.columns) == ["'=name", "voltage_V", "ok", "n"]
    assert out["'=name"].tolist()[:2] == ["'=a", "b"]
    assert out["voltage_V"].tolist()[:2] == [-1.5, 2.0] and math.isnan(out["voltage_V"][2])
    assert out["ok"].tolist() == [True, False, True] and out["n"].tolist() == [1, 2, 3]
    text = out.to_csv(index=False)
    assert "inf" not in text and "\n'=a," in text and "-1.5" in text
    assert list(frame.columns)[0] == "=name"        # the input is not changed


def test_stack_error_fields_are_printable():
    error = StackError("bad \x1b[31mname", file="f\x07.toml", where="element 1 'x\r'",
                       fix="rename\u202e")
    assert error.problem == "bad \\x1b[31mname" and error.file == "f\\x07.toml"
    assert error.where == "element 1 'x\\x0d'" and error.fix == "rename\\u202e"
    assert not any(c in str(error) for c in "\x1b\x07\r\u202e")
