"""Text cells of the CSV tables and the workbook: read as text, never as formulas.

Model and scenario names, reasons and titles are the user's text, and they reach cells of
the CSV tables and the workbook. A spreadsheet reads a cell that begins with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return as a formula, so ``=HYPERLINK("http://...")`` as a
model name would become a live link on the reader's machine (formula or "CSV" injection).
The OWASP guidance on CSV injection names those six leading characters and has such a cell
prefixed with a single quote, which spreadsheets take as "this is text"; fields holding a
separator or a quote are quoted and their quotes doubled, as the ``csv`` module does
(OWASP, "CSV Injection", owasp.org/www-community/attacks/CSV_Injection, recalled from
memory; the same characters in OWASP ASVS 5.0, requirement 1.2.10).

Numbers stay numbers: a float or int is written as it is, and so is text that is a plain
number (``-0.25``, ``1e-3``): a spreadsheet reads it as that number, never as a formula. In
the workbook the text is kept as written, stored as a string cell (never a formula) and
marked with the quote prefix, so editing the cell keeps it text.
"""

from __future__ import annotations

import re

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def formula_like(text: str) -> bool:
    """True when a spreadsheet would read ``text`` as a formula (and it is no plain number).

    >>> [formula_like(t) for t in ("=1+2", "@SUM(A1)", "-0.25", "model a", "-x")]
    [True, True, False, False, True]
    """
    return text.startswith(FORMULA_STARTS) and _PLAIN_NUMBER.fullmatch(text) is None


def csv_value(value: object) -> object:
    """A CSV cell's value: text a spreadsheet would take for a formula gets a leading
    single quote; everything else (numbers above all) is returned unchanged.

    >>> csv_value("=HYPERLINK(1)"), csv_value(-0.5), csv_value("-0.5")
    ("'=HYPERLINK(1)", -0.5, '-0.5')
    """
    if isinstance(value, str) and formula_like(value):
        return "'" + value
    return value
