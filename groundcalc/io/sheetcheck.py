"""Checks of a workbook's layout before any value is read.

Nothing in a workbook is dropped silently:

- two sheets whose names differ only in capitals or spaces (one may be
  hidden) are refused, naming both;
- a sheet or column whose name is close to a known one ("Conductor",
  "Materail") is refused with the known name; any other unknown sheet or
  column is read past with a warning that travels to the terminal, the JSON
  and the report; a hidden sheet that is read gets a warning;
- a header that appears twice on a sheet is refused;
- text numbers with a comma that could be a thousands separator are refused
  (see :func:`parse_text_number`).
"""

from __future__ import annotations

import difflib
import re

from openpyxl.utils import get_column_letter

from ..errors import InputError
from ..model import Notice
from .schema import ALL_SHEETS, SheetSpec
from .units import normalise_name, split_header

__all__ = ["check_layout", "parse_text_number"]

#: Sheets groundcalc writes that carry no design data.
OTHER_SHEETS = ("Instructions", "Drawing")
#: Headers read past without a warning: annotations, not data.
ANNOTATION_HEADERS = {"notes", "note", "comment", "comments", "remarks", "remark", "description"}
#: Similarity (difflib ratio) above which an unknown name is taken as a misspelt known one.
CLOSE_RATIO = 0.8


def _close(name: str, known: list[str]) -> str | None:
    hit = difflib.get_close_matches(name, known, n=1, cutoff=CLOSE_RATIO)
    return hit[0] if hit else None


def _col(header: str, col: int) -> str:
    return f"'{header}' ({get_column_letter(col + 1)})"


def _check_sheet_names(wb, notices: list[Notice]) -> None:
    known = {normalise_name(s.name): s.name for s in ALL_SHEETS}
    known.update({normalise_name(n): n for n in OTHER_SHEETS})
    seen: dict[str, str] = {}
    for title in wb.sheetnames:
        key = normalise_name(title)
        state = getattr(wb[title], "sheet_state", "visible")
        if key in seen:
            first = seen[key]
            raise InputError(
                f"the sheets '{first}' and '{title}'{' (hidden)' if state != 'visible' else ''} have the same "
                "name apart from capitals and spaces, so it is not clear which one holds the data",
                sheet=title,
                fix="Delete or rename one of them (groundcalc reads sheet names without regard to capitals "
                "and spaces); unhide hidden sheets to see them",
            )
        seen[key] = title
        if key in known:
            if state != "visible" and known[key] not in OTHER_SHEETS:
                notices.append(
                    Notice(
                        "hidden-sheet",
                        f"Sheet '{title}' is hidden but is read like the others (hiding a sheet does not remove "
                        "it from the design).",
                    )
                )
            continue
        close = _close(key, list(known))
        if close is not None:
            raise InputError(
                f"the sheet '{title}' is not a sheet groundcalc reads, but its name is close to '{known[close]}'",
                sheet=title,
                fix=f"Rename it '{known[close]}' if it holds that data, or delete it; the known sheets are "
                + ", ".join(f"'{s.name}'" for s in ALL_SHEETS),
            )
        notices.append(
            Notice(
                "ignored-sheet",
                f"Sheet '{title}' is not a sheet groundcalc reads and was ignored"
                + (" (it is hidden)" if state != "visible" else "")
                + ". Known sheets: "
                + ", ".join(s.name for s in ALL_SHEETS)
                + ".",
            )
        )


def _header_row(ws) -> tuple:
    for row in ws.iter_rows(min_row=1, max_row=1, values_only=True):
        return tuple(row)
    return ()


def _check_table_headers(ws, spec: SheetSpec, notices: list[Notice]) -> None:
    known = [f.key for f in spec.fields]
    seen: dict[str, int] = {}
    ignored = []
    for col, h in enumerate(_header_row(ws)):
        if h is None or (isinstance(h, str) and not h.strip()):
            continue
        name, _unit = split_header(str(h))
        if name in seen:
            raise InputError(
                f"the header '{h}' appears twice (first in column {get_column_letter(seen[name] + 1)})",
                sheet=ws.title,
                row=1,
                column=_col(str(h), col),
                fix="Keep one column per quantity; delete or rename the other",
            )
        seen[name] = col
        if name in known or name in ANNOTATION_HEADERS:
            continue
        close = _close(name, known)
        if close is not None:
            header = spec.field(close).header()
            raise InputError(
                f"the column '{h}' is not a column of this sheet, but its name is close to '{header}'",
                sheet=ws.title,
                row=1,
                column=_col(str(h), col),
                fix=f"Rename it '{header}' if it holds that quantity, or delete it; the columns are "
                + ", ".join(f"'{f.header()}'" for f in spec.fields),
            )
        ignored.append(_col(str(h), col))
    if ignored:
        notices.append(
            Notice(
                "ignored-column",
                f"Sheet '{ws.title}': column(s) {', '.join(ignored[:10])} are not columns groundcalc reads and "
                "were ignored. Columns read: " + ", ".join(f.header() for f in spec.fields) + ".",
            )
        )


def _check_keyvalue_headers(ws, spec: SheetSpec, notices: list[Notice]) -> None:
    seen: dict[str, int] = {}
    ignored = []
    allowed = {normalise_name(spec.key_header), "quantity", "field", "item", "value"} | ANNOTATION_HEADERS
    for col, h in enumerate(_header_row(ws)):
        if h is None or (isinstance(h, str) and not h.strip()):
            continue
        name = normalise_name(str(h))
        if name in seen:
            raise InputError(
                f"the header '{h}' appears twice (first in column {get_column_letter(seen[name] + 1)}), so it "
                "is not clear which column holds the values",
                sheet=ws.title,
                row=1,
                column=_col(str(h), col),
                fix=f"Keep one '{spec.key_header}' and one 'Value' column",
            )
        seen[name] = col
        if name not in allowed:
            if _close(name, ["value", normalise_name(spec.key_header)]) is not None:
                raise InputError(
                    f"the header '{h}' is close to 'Value' or '{spec.key_header}' but is neither",
                    sheet=ws.title,
                    row=1,
                    column=_col(str(h), col),
                    fix=f"Write '{spec.key_header}' in A1 and 'Value' in B1, as in the template",
                )
            ignored.append(_col(str(h), col))
    if ignored:
        notices.append(
            Notice(
                "ignored-column",
                f"Sheet '{ws.title}': column(s) {', '.join(ignored[:10])} were ignored (only "
                f"'{spec.key_header}' and 'Value' are read).",
            )
        )


def find_sheet(wb, name: str):
    """The sheet of ``wb`` whose name normalises to ``name`` (capitals and spaces ignored), or None."""
    for actual in wb.sheetnames:
        if normalise_name(actual) == normalise_name(name):
            return wb[actual]
    return None


def check_layout(wb, notices: list[Notice]) -> None:
    """Refuse ambiguous sheet and column names; warn about ignored ones (see the module docstring)."""
    _find_sheet = find_sheet
    _check_sheet_names(wb, notices)
    for spec in ALL_SHEETS:
        ws = _find_sheet(wb, spec.name)
        if ws is None or spec.name == "Variants":  # the Variants reader refuses every unknown column
            continue
        if spec.layout == "table":
            _check_table_headers(ws, spec, notices)
        else:
            _check_keyvalue_headers(ws, spec, notices)


_THOUSANDS = re.compile(r"^[+-]?[1-9]\d{0,2}([,.])\d{3}$")
_GROUPED = re.compile(r"^[+-]?\d{1,3}([,.]\d{3}){2,}$")
_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+([eE][+-]?\d+)?$")


def parse_text_number(text: str) -> float:
    """A number typed as text (spaces already removed).

    A comma is a decimal comma only where it cannot be a thousands separator
    ("0,5", "20,0", "1234,5"). "25,000" or "1.500" could be either (25 000 or
    25.0; 1500 or 1.5) and "1,000,000" or "1,234.5" carry thousands
    separators: all are refused, naming both readings.

    Raises
    ------
    ValueError
        With a message naming the readings when the text is ambiguous or not a number.
    """
    m = _THOUSANDS.match(text)
    if m:
        sep = m.group(1)
        whole = float(text.replace(sep, ""))
        dec = float(text.replace(",", ".")) if sep == "," else float(text)
        raise ValueError(
            f"the text '{text}' could be {whole:g} (with '{sep}' as a thousands separator) or {dec:g} (with "
            f"'{sep}' as the decimal mark)"
        )
    if _GROUPED.match(text) or ("," in text and "." in text):
        raise ValueError(f"the text '{text}' has thousands separators, which are read differently in each locale")
    if _DECIMAL_COMMA.match(text):
        return float(text.replace(",", "."))
    return float(text)
