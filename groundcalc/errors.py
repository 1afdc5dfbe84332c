"""The one exception type for problems in the user's input."""

from __future__ import annotations

__all__ = ["InputError"]


class InputError(Exception):
    """A problem in the user's input, located and explained.

    Parameters
    ----------
    problem : str
        What is wrong, in plain words.
    sheet : str, optional
        Worksheet name.
    row : int, optional
        Spreadsheet row number (1-based, as the spreadsheet program shows it).
    column : str, optional
        Column header (and letter) or quantity name.
    fix : str, optional
        What would be valid.
    quantity : str, optional
        Model quantity the problem is in, e.g. ``"fault.split_factor"`` (set
        by checks below the workbook reader, which maps it to a cell).
    item : str, optional
        Where the conductor, rod or grid came from, e.g. ``"Conductors row 4"``.
    """

    def __init__(
        self,
        problem: str,
        *,
        sheet: str | None = None,
        row: int | None = None,
        column: str | None = None,
        fix: str | None = None,
        quantity: str | None = None,
        item: str | None = None,
    ) -> None:
        self.problem = problem
        self.quantity = quantity
        self.item = item
        self.sheet = sheet
        self.row = row
        self.column = column
        self.fix = fix
        super().__init__(str(self))

    def where(self) -> str:
        """Location prefix, e.g. ``sheet 'Rods', row 4, column 'X [m]' (B)``."""
        parts = []
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column:
            parts.append(f"column {self.column}")
        if not parts and self.item:
            parts.append(self.item)
        if not parts and self.quantity:
            parts.append(self.quantity)
        return ", ".join(parts)

    def __str__(self) -> str:
        where = self.where()
        text = f"{where}: {self.problem}" if where else self.problem
        if self.fix:
            text += f". {self.fix}"
        return text
