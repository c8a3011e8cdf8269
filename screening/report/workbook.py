"""The report's workbook: one spreadsheet gathering the summary tables."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from screening.engine.scan import ScanResult
from screening.report.tablefiles import neutralised


def write_workbook(path: Path, result: ScanResult, changes) -> None:
    """One spreadsheet gathering the summary tables (formula-like text neutralised)."""
    sheets = {
        "summary": result.summary,
        "hours": result.hours,
        "data_quality": result.quality,
        "not_screened": result.problems,
    }
    if changes is not None:
        sheets["changes"] = changes
    # XlsxWriter: three times faster than openpyxl on a 500-pump plant; text is never read
    # as a formula or a link
    options = {"strings_to_formulas": False, "strings_to_urls": False}
    with pd.ExcelWriter(path, engine="xlsxwriter", engine_kwargs={"options": options}) as xl:
        for name, frame in sheets.items():
            f = frame.copy()
            for col in f.columns:
                if isinstance(f[col].dtype, pd.DatetimeTZDtype):
                    f[col] = f[col].astype("string")
                elif f[col].dtype == object or pd.api.types.is_string_dtype(f[col]):
                    f[col] = neutralised(f[col])
            columns = [_excel_cells(f[c]) for c in f.columns]
            if any(c is None for c in columns):  # a kind of value not handled below
                f.to_excel(xl, sheet_name=name, index=False)
                continue
            sheet = xl.book.add_worksheet(name)
            for j, head in enumerate(f.columns):  # pandas' order: the header, then by column
                sheet.write(0, j, str(head), None)
            for j, cells in enumerate(columns):
                _write_column(sheet, j, cells)


def _write_column(sheet, j: int, cells: list) -> None:
    """Cells of :func:`_excel_cells` into column ``j`` from the second row, each by the method
    ``sheet.write`` would pick for it (an unformatted blank "" is no cell at all), without
    ``write``'s dispatch per cell; any other kind of value through ``write`` itself."""
    by_kind = {float: sheet.write_number, int: sheet.write_number, bool: sheet.write_boolean}
    write_string, write = sheet.write_string, sheet.write
    for i, value in enumerate(cells, start=1):
        kind = value.__class__
        if kind is str:
            if value:
                write_string(i, j, value, None)
        else:
            by_kind.get(kind, write)(i, j, value, None)


def _excel_cells(column: pd.Series) -> list | None:
    """A column's cells as pandas' ``to_excel`` writes them (without its per-cell objects,
    two thirds of the workbook's time): missing -> "" (a blank), ±inf -> "inf"/"-inf",
    numbers, booleans and text as Python values; None for anything else (datetimes, long
    text), which is then left to pandas."""
    out = []
    for v in column.tolist():
        if v is None or v is pd.NA or v is pd.NaT:
            out.append("")
        elif isinstance(v, bool | np.bool_):
            out.append(bool(v))
        elif isinstance(v, int | np.integer):
            out.append(int(v))
        elif isinstance(v, float | np.floating):
            v = float(v)
            out.append("" if v != v else "inf" if v == np.inf else "-inf" if v == -np.inf else v)
        elif isinstance(v, str) and len(v) <= 32767:
            out.append(v)
        else:
            return None
    return out
