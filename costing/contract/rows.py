"""What the read stage hands to the check stage: the cells of each input sheet with their
addresses, as plain records. Nothing here opens a file or needs a spreadsheet library, so the
check stage (costing.check) stays free of openpyxl."""

from __future__ import annotations

from dataclasses import dataclass, field

from costing.model import Problem


def column_letter(index: int) -> str:
    """Spreadsheet column letters of a 1-based column index (1 -> A, 27 -> AA, 16384 -> XFD).

    Parameters
    ----------
    index : int
        1-based column number.

    Returns
    -------
    str
        The column's letters, as the spreadsheet shows them.
    """
    if index < 1:
        raise ValueError(f"column index must be 1 or more, not {index}")
    out = ""
    while index:
        index, rem = divmod(index - 1, 26)
        out = chr(65 + rem) + out
    return out


@dataclass
class RawRow:
    row: int  # 1-based spreadsheet row
    values: dict[str, object]  # column name -> cached cell value
    formulas: set[str] = field(default_factory=set)  # columns holding a formula with no cached value


@dataclass
class RawSheet:
    name: str  # contract name
    title: str  # title in the file
    columns: dict[str, int]  # contract column name -> 1-based column index
    rows: list[RawRow]

    def letters(self) -> dict[str, str]:
        """Contract column name -> the column letters it has in this file."""
        return {c: column_letter(i) for c, i in self.columns.items()}

    def cell(self, column: str, row: int) -> str:
        """The address (``B7``) of `column` in spreadsheet row `row`; ``row 7`` when the column is absent."""
        idx = self.columns.get(column)
        return f"{column_letter(idx)}{row}" if idx else f"row {row}"


@dataclass
class RawWorkbook:
    path: str
    sha256: str
    sheets: dict[str, RawSheet]
    problems: list[Problem]
