"""CSV as the service answers it: safe to open in a spreadsheet, and readable back by the csv
module and by the service's own upload.

Every CSV writer of the service (forecast series, stored readings, comparisons, the US-unit
conversion) goes through :class:`SafeCsvWriter`.
"""

import csv
import re
from collections.abc import Iterable
from typing import Any, TextIO

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
"""First characters that make a spreadsheet read a cell as a formula (OWASP, "CSV Injection")."""
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def spreadsheet_safe(cell: Any) -> Any:
    """A CSV cell that a spreadsheet will not evaluate: text starting with ``= + - @``, a tab or
    a CR gets a leading ``'`` (OWASP's CSV injection guidance); numbers, and text that is only a
    number (``-4.5``), are left as they are, so numeric cells stay numeric."""
    if isinstance(cell, str) and cell.startswith(FORMULA_TRIGGERS) and not _NUMBER.fullmatch(cell):
        return "'" + cell
    return cell


class SafeCsvWriter:
    """``csv.writer`` for every CSV the service answers: rows end in ``\n``, cells go through
    :func:`spreadsheet_safe`, and a row with a CR inside a cell (which the csv module leaves
    unquoted when rows end in ``\n``) is written with every cell quoted."""

    def __init__(self, out: TextIO) -> None:
        self._minimal = csv.writer(out, lineterminator="\n")
        self._quoted = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_ALL)

    def writerow(self, row: Iterable[Any]) -> None:
        cells = [spreadsheet_safe(cell) for cell in row]
        has_cr = any(isinstance(cell, str) and "\r" in cell for cell in cells)
        (self._quoted if has_cr else self._minimal).writerow(cells)

    def writerows(self, rows: Iterable[Iterable[Any]]) -> None:
        for row in rows:
            self.writerow(row)
