"""One place that keeps text from turning into formulas in spreadsheet exports.

A text cell whose first character is ``=``, ``+``, ``-``, ``@``, a tab or a carriage
return is taken by spreadsheet programs as a formula (CSV injection; the OWASP
guidance, common practice, no standard). Text written by contactplan stays text:

- in a CSV file it gets a leading single quote (``'=1+2``), as that guidance recommends;
- in an XLSX workbook it is stored as a string cell (never a formula cell).

Numbers stay numbers: only ``str`` values are touched.
"""

from __future__ import annotations

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def risky(value) -> bool:
    """True for text a spreadsheet would read as a formula."""
    return isinstance(value, str) and value.startswith(FORMULA_START)


def csv_text(value):
    """A CSV cell value: risky text prefixed with a single quote; anything else unchanged."""
    return "'" + value if risky(value) else value


def keep_text(cells) -> None:
    """Make every openpyxl cell holding risky text a string cell (openpyxl makes ``=...`` a formula)."""
    for cell in cells:
        if risky(cell.value):
            cell.data_type = "s"
