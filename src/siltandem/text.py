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
import unicodedata

#: what a missing value reads as in text (its reason is in a warning)
MISSING = "none"
#: characters that make a spreadsheet read a cell as a formula (OWASP CSV-injection guidance)
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
#: bidirectional controls that can reorder what a terminal shows (Unicode TR9)
_BIDI = {"\u061c", "\u200e", "\u200f", *map(chr, range(0x202A, 0x202F)),
         *map(chr, range(0x2066, 0x206A))}


def _escape(character):
    code = ord(character)
    if code < 0x100:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def _unsafe(character):
    return (unicodedata.category(character) in ("Cc", "Zl", "Zp") or character in _BIDI)


def printable(text, *, keep_newlines=False):
    """``text`` with every control character written as an escape (``\\x1b``, ``\\u202e``).

    Letters of any script, symbols and spaces pass unchanged; C0 and C1 controls (ESC, BEL, CR,
    DEL, CSI...), line and paragraph separators and bidirectional overrides do not. With
    ``keep_newlines`` a ``\\n`` stays a line break (for multi-line reports).
    """
    text = str(text)
    if not any(_unsafe(c) for c in text):
        return text
    return "".join(c if not _unsafe(c) or (keep_newlines and c == "\n") else _escape(c)
                   for c in text)


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
    """A text cell that would start a formula, with a leading single quote; others unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def csv_safe(frame):
    """A copy of a DataFrame whose column names and text cells cannot start a formula.

    Numeric columns are untouched (a negative number is a number, not a formula); text
    columns (object or string dtype) are escaped cell by cell.
    """
    import pandas as pd

    out = frame.copy()
    out.columns = [csv_cell(str(c)) for c in out.columns]
    for k, column in enumerate(out.columns):
        series = out.iloc[:, k]
        if pd.api.types.is_numeric_dtype(series) or pd.api.types.is_bool_dtype(series):
            continue
        out.iloc[:, k] = series.map(csv_cell).astype(object)
    return out
