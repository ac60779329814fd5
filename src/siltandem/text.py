"""Text that reaches a terminal, an error message or a spreadsheet: escaped, short, never raw.

* :func:`printable` escapes control characters (terminal escape codes, bidirectional overrides)
  in names and messages, keeping line breaks where a caller asks for them;
* :func:`excerpt` quotes at most a short, escaped piece of what a file holds: an error message
  names the file and shows a little of it, never its contents;
* :func:`number` formats a value, or a plain word where there is none (None, NaN, inf);
* :func:`csv_safe` makes a table safe to open in a spreadsheet: a text cell (or a column
  name) that would start a formula gets a leading single quote, numbers are untouched
  (OWASP, "CSV Injection", https://owasp.org/www-community/attacks/CSV_Injection).
"""
import math
import re

#: what a missing value reads as in text (its reason is in a warning)
MISSING = "none"
#: characters that make a spreadsheet read a cell as a formula (OWASP CSV-injection guidance)
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
#: control characters: C0 and C1 controls and DEL (Unicode category Cc), the line and paragraph
#: separators (Zl, Zp) and the bidirectional controls that can reorder what a terminal shows
#: (Unicode TR9)
_UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u061c\u200e\u200f\u202a-\u202e"
                     "\u2066-\u2069]")
_UNSAFE_IN_LINES = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029\u061c\u200e"
                              "\u200f\u202a-\u202e\u2066-\u2069]")


def _escape(match):
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text, *, keep_newlines=False):
    """``text`` with every control character written as an escape (``\\x1b``, ``\\u202e``).

    Letters of any script, symbols and spaces pass unchanged; C0 and C1 controls (ESC, BEL, CR,
    DEL, CSI...), line and paragraph separators and bidirectional overrides do not. With
    ``keep_newlines`` a line break and a tab stay as they are (the layout of a report).
    """
    return (_UNSAFE_IN_LINES if keep_newlines else _UNSAFE).sub(_escape, str(text))


def shorten(text, limit):
    """``text`` cut to ``limit`` characters, saying how much was cut (a backstop for messages
    that quote a long value whole)."""
    text = str(text)
    return text if len(text) <= limit else f"{text[:limit]}... ({len(text) - limit} characters cut)"


def excerpt(value, limit=60):
    """A short, escaped quotation of ``value`` for an error message (at most ``limit`` characters
    of it, then ``...`` and how long it was); text is quoted like ``repr``."""
    if isinstance(value, (bytes, bytearray)):
        value = bytes(value).decode("utf-8", errors="backslashreplace")
    if isinstance(value, str):
        shown = repr(value[:limit])
        return shown if len(value) <= limit else f"{shown}... ({len(value)} characters)"
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) >= 10 ** 20:
        digits = len(str(abs(value)))
        return f"{str(value)[:12]}... (a whole number of {digits} digits)"
    shown = repr(value)
    return printable(shown if len(shown) <= limit else shown[:limit] + "...")


def number(value, spec, missing=MISSING):
    """``format(value, spec)``, or ``missing`` for None, NaN and inf (the text never says nan)."""
    if value is None or isinstance(value, bool):
        return missing if value is None else str(value)
    try:
        value = float(value)
    except (TypeError, ValueError):
        return missing
    return format(value, spec) if math.isfinite(value) else missing


def csv_cell(value):
    """A text cell with control characters escaped and, where it would start a formula, a
    leading single quote; anything that is not text unchanged."""
    if not isinstance(value, str):
        return value
    if value.startswith(FORMULA_STARTS):
        value = "'" + value
    return printable(value)


def csv_safe(frame):
    """A copy of a DataFrame ready for a CSV file: no cell starts a formula, none says inf.

    Column names and text cells (object or string columns) that would start a formula get a
    leading single quote, and their control characters are escaped; numeric values are
    untouched (a negative number is a number, not a formula), except that an infinite one
    becomes an empty cell like NaN.
    """
    import numpy as np
    import pandas as pd

    columns = {}
    for k in range(frame.shape[1]):
        series = frame.iloc[:, k]
        if pd.api.types.is_bool_dtype(series):
            pass
        elif pd.api.types.is_numeric_dtype(series):
            if pd.api.types.is_float_dtype(series):
                series = series.where(np.isfinite(series.to_numpy(dtype=float)))
        else:
            series = series.map(csv_cell).astype(object)
        columns[k] = series.reset_index(drop=True)
    out = pd.DataFrame(columns)
    out.columns = [csv_cell(str(c)) for c in frame.columns]
    return out
