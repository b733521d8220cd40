"""Spreadsheet layout shared by every XLSX the tool writes: frozen header, number formats, widths.

Values are stored at full precision; only their display is formatted. Each
numeric column gets one format, chosen from its largest magnitude so that its
numbers show about four significant figures with the same number of decimals
(``#,##0.0`` for masses in the thousands, ``0.0000`` for ratios below one);
whole-number columns (case ids, ranks, counts) show no decimals.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any, Sequence

from .formats import significant_decimals

__all__ = ["column_format", "format_sheet", "write_frames_xlsx"]


def column_format(values: Sequence[Any]) -> str | None:
    """Excel number format for a column of values (None when it holds no numbers).

    Examples
    --------
    >>> column_format([8108.2, 1700.0])
    '#,##0.0'
    >>> column_format([0.0755, 0.16])
    '0.0000'
    >>> column_format([1, 2, 3])
    '0'
    """
    nums = [float(v) for v in values if isinstance(v, (int, float)) and not isinstance(v, bool)
            and math.isfinite(float(v))]
    if not nums:
        return None
    whole = all(v.is_integer() for v in nums) and max(abs(v) for v in nums) < 1e12
    if whole:  # ids, ranks, counts, stage counts and round levels show no decimals
        return "#,##0" if max(abs(v) for v in nums) >= 10_000 else "0"
    big = max(abs(v) for v in nums)
    if big == 0:
        return "0"
    if big >= 1e9 or big < 1e-4:
        return "0.000E+00"
    decimals = min(6, significant_decimals(big))
    head = "#,##0" if big >= 1000 else "0"
    return head + ("." + "0" * decimals if decimals else "")


def format_sheet(ws, *, header_row: int = 1, last_row: int | None = None,
                 per_cell: tuple[int, ...] = ()) -> None:
    """Freeze the header row, bold it, format each numeric column and size the columns.

    Parameters
    ----------
    ws : openpyxl worksheet
    header_row : int
        Row of the column headers (1-based); rows below it are data.
    last_row : int, optional
        Last data row formatted (default: the sheet's last row).
    per_cell : tuple of int
        Columns (1-based) whose rows hold different quantities (a value column of
        quantity / value / unit rows): each cell gets its own format.
    """
    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    last = last_row or ws.max_row
    ws.freeze_panes = ws.cell(row=header_row + 1, column=1)
    for cell in ws[header_row]:
        cell.font = Font(bold=True)
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    for col in range(1, ws.max_column + 1):
        cells = [ws.cell(row=r, column=col) for r in range(header_row + 1, last + 1)]
        if col in per_cell:
            for c in cells:
                f = column_format([c.value])
                if f is not None:
                    c.number_format = f
            fmt = None
        else:
            fmt = column_format([c.value for c in cells])
        if fmt is not None:
            for c in cells:
                if isinstance(c.value, (int, float)) and not isinstance(c.value, bool):
                    c.number_format = fmt
        head = str(ws.cell(row=header_row, column=col).value or "")
        longest = max([len(head) * 0.6] + [len(str(c.value)) if isinstance(c.value, str) else 12
                                          for c in cells[:200]])
        ws.column_dimensions[get_column_letter(col)].width = max(10.0, min(60.0, longest + 2))


def write_frames_xlsx(path: str | Path, sheets: Sequence[tuple[str, Any]]) -> Path:
    """Write DataFrames to one workbook, one sheet each, laid out by `format_sheet`."""
    import pandas as pd

    p = Path(path)
    with pd.ExcelWriter(p, engine="openpyxl") as xw:
        for name, frame in sheets:
            frame.to_excel(xw, index=False, sheet_name=name)
            format_sheet(xw.sheets[name])
    return p
