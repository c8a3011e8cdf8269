"""The report's tidy tables as files: Parquet beside CSV, formula-like text neutralised."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _safe_cell(value):
    """Neutralise text a spreadsheet would read as a formula (prefix a quote)."""
    if isinstance(value, str) and value.startswith(_FORMULA_START):
        try:
            float(value)
            return value
        except ValueError:
            return "'" + value
    return value


def neutralised(column: pd.Series) -> pd.Series:
    """The column with formula-like text neutralised; each distinct value is checked once (a
    plot table repeats 500 pump ids 750 000 times)."""
    try:
        distinct = pd.unique(column)
    except TypeError:  # unhashable cells: check each
        return column.map(_safe_cell)
    changed = {v: _safe_cell(v) for v in distinct if isinstance(v, str)}
    changed = {k: v for k, v in changed.items() if v != k}
    return column.replace(changed) if changed else column


#: Tables longer than this are written as Parquet only: the plot data of a 500-pump month
#: (750 000 rows) would make a 200 MB CSV that no spreadsheet opens, its daily hours (250 000
#: rows) a 12 MB one.
CSV_MAX_ROWS = 100_000


def write_table(
    frame: pd.DataFrame,
    folder: Path,
    name: str,
    csv_max_rows: int | None = None,
    float32: bool = False,
):
    """Write a table as ``name.parquet`` and ``name.csv``; formula-like text in the CSV is
    neutralised (a quote in front), so a spreadsheet shows it as text. With ``csv_max_rows``,
    a longer table gets no CSV (the Parquet file holds every row). With ``float32`` the
    Parquet file keeps floats in 32 bits (7 significant digits; for the plot tables, whose
    pages show less) and is compressed with zstd."""
    if float32:
        floats = [c for c in frame.columns if frame[c].dtype == "float64"]
        small = frame.astype(dict.fromkeys(floats, "float32"))
        # dictionary encoding only where values repeat (pump ids, times): tried on a float
        # column it is given up after each page, at three times the cost of the whole write
        dictionary = [c for c in frame.columns if frame[c].dtype.kind not in "fc"]
        small.to_parquet(folder / f"{name}.parquet", index=False, compression="zstd",
                         use_dictionary=dictionary)  # fmt: skip
    else:
        frame.to_parquet(folder / f"{name}.parquet", index=False)
    if csv_max_rows is not None and len(frame) > csv_max_rows:
        return
    text = frame.copy()
    for col in text.columns:
        if text[col].dtype == object or pd.api.types.is_string_dtype(text[col]):
            text[col] = neutralised(text[col])
    try:
        # Arrow's CSV writer: ten times faster than pandas on the large plot tables; times
        # keep their offset (2026-10-25 02:00:00.000000+0200)
        pa_csv.write_csv(pa.Table.from_pandas(text, preserve_index=False),
                         folder / f"{name}.csv")  # fmt: skip
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        text.to_csv(folder / f"{name}.csv", index=False)  # a column of mixed Python objects


def as_text(column: pd.Series) -> pd.Series:
    """``column.astype("string")``, each distinct value turned to text once (a 500-pump
    month's daily table repeats 31 dates 279 000 times)."""
    codes, uniques = pd.factorize(column)
    if (codes < 0).any():  # missing values: pandas' own way
        return column.astype("string")
    text = np.array([str(u) for u in uniques], dtype=object)[codes]
    return pd.Series(text, index=column.index, name=column.name).astype("string")
