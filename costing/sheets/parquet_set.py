"""Past the spreadsheet's row limit: the long tables as a Parquet set beside a summary workbook.

``costing run ... --parquet`` (and any run whose shipments do not fit on one Summary sheet)
writes the Summary shipment rows, the Legs, the Vehicle runs and, when carriers priced any
shipment, the Carrier charges as one Parquet file each (``summary.parquet``, ``legs.parquet``,
``vehicle_runs.parquet``, ``carrier_charges.parquet``) in a folder beside the workbook
(``costed.xlsx`` -> ``costed.parquet/``). The workbook keeps the Summary TOTAL row, the Problems
and the Run sheet, which names each Parquet file with its row count and its columns.

What this guarantees:

- **The same rows as the workbook.** The rows are written by the sheet writers themselves
  (``costing.sheets.summary``, ``legs``, ``vehicle_runs``, ``carrier_charges``), on their
  cell-by-cell path (``costing.sheets.rowxml.FAST_ROWS`` off while they write), into a stand-in
  for a worksheet that keeps each cell's value (a formula's cached value), so every value is the
  one the costed workbook would show; a Parquet table has no row limit, so the Legs are one file
  where the workbook continues them on Legs 2, ... .
- **Column names are the output contract's** (``costing.contract.outputs``), in its order, every
  column present; types follow the contract's kinds: text columns are strings, ``int`` columns
  64-bit integers, ``date`` columns dates, the rest 64-bit floats; a cell the workbook leaves
  blank is null (an empty text stays an empty text).
- **The workbook's totals are the sums of the Parquet rows**: the TOTAL row and the Run sheet's
  reconciliation are the values the full workbook caches, written as numbers (the rows their
  formulas would add up are in the files).

Needs pyarrow (``pip install 'costing[parquet]'``); ``PARQUET_MISSING`` says so.
"""

from __future__ import annotations

import datetime as _dt
import os
import shutil

from costing import __version__
from costing.contract import outputs as out
from costing.model import Model, Problem
from costing.sheets import rowxml
from costing.sheets.carrier_charges import carrier_rows, write_carrier_charges
from costing.sheets.formats import Writer, cell_text
from costing.sheets.legs import legs_sheet_names, write_legs
from costing.sheets.problems import write_problems
from costing.sheets.run import RunInfo, write_run
from costing.sheets.summary import write_summary
from costing.sheets.vehicle_runs import write_vehicle_runs

PARQUET_MISSING = ("pyarrow is not installed: pip install 'costing[parquet]' (or 'pyarrow') to write the "
                   "long tables as Parquet")

# sheet -> (file name, the contract's columns)
TABLES = {
    out.SUMMARY: ("summary.parquet", out.SUMMARY_COLUMNS),
    out.LEGS: ("legs.parquet", out.LEG_COLUMNS),
    out.VEHICLE_RUNS: ("vehicle_runs.parquet", out.RUN_COLUMNS),
    out.CARRIER_CHARGES: ("carrier_charges.parquet", out.CARRIER_COLUMNS),
}

BATCH = 65_536  # rows held before they go to the file as one row group

# the costed workbook's other sheets, not written beside a Parquet set
LEFT_OUT = tuple(name for name in out.SHEETS if name not in TABLES and name not in (out.PROBLEMS, out.RUN))


def parquet_folder(output: str) -> str:
    """The folder of the Parquet set beside the workbook `output`: ``costed.xlsx`` -> ``costed.parquet``."""
    return os.path.splitext(output)[0] + ".parquet"


def have_pyarrow() -> bool:
    """Whether pyarrow can be imported."""
    try:
        import pyarrow.parquet  # noqa: F401
    except ImportError:
        return False
    return True


def _arrow_type(kind: str):
    import pyarrow as pa

    return {"text": pa.string(), "int": pa.int64(), "date": pa.date32()}.get(kind, pa.float64())


def _int(v):
    """An int column's value: a whole float becomes an int; anything else is left for pyarrow to refuse."""
    return int(v) if isinstance(v, float) and v.is_integer() else v


class TableSheet:
    """Stands in for a worksheet: keeps the value of each cell a sheet writer writes (a formula's
    cached value) and streams the rows to one Parquet file, BATCH rows to a row group. Row 0 (the
    header) is left out, and so are rows after `last_row` (a TOTAL row), which ``after`` keeps.
    Layout calls (widths, filters, formats, notes) mean nothing in a Parquet file and are ignored.

    Parameters
    ----------
    path : str
        The Parquet file to write.
    columns : list of (name, width, kind)
        The output contract's columns of the sheet.
    metadata : dict of str to str
        Key-value metadata of the file (sheet, currency, version).
    last_row : int, optional
        The last 0-based row that is a data row.
    """

    def __init__(self, path: str, columns, metadata: dict[str, str], last_row: int | None = None):
        import pyarrow as pa
        import pyarrow.parquet as pq

        self.path = path
        self.names = [name for name, _w, _k in columns]
        self.kinds = [kind for _n, _w, kind in columns]
        self.schema = pa.schema([pa.field(n, _arrow_type(k)) for n, k in zip(self.names, self.kinds)],
                                metadata={k.encode(): v.encode() for k, v in metadata.items()})
        self._writer = pq.ParquetWriter(path, self.schema)
        self.last_row = last_row
        self.rows = 0  # data rows written
        self.after: dict[int, dict[int, object]] = {}  # rows after last_row: row -> column -> value
        self._row: int | None = None
        self._cells: dict[int, object] = {}
        self._columns: list[list] = [[] for _ in self.names]

    # the worksheet calls the sheet writers make
    def write_string(self, row, col, string, cell_format=None):
        self._put(row, col, string)

    def write_number(self, row, col, number, cell_format=None):
        self._put(row, col, number)

    def write_formula(self, row, col, formula, cell_format=None, value=0):
        self._put(row, col, value)

    def write_datetime(self, row, col, date, cell_format=None):
        self._put(row, col, date.date() if isinstance(date, _dt.datetime) else date)

    def write_blank(self, row, col, blank=None, cell_format=None):
        self._put(row, col, None)

    def __getattr__(self, name):  # set_column, autofilter, conditional_format, freeze_panes, ...
        if name.startswith("_"):
            raise AttributeError(name)
        return _ignore

    def _put(self, row: int, col: int, value) -> None:
        if row == 0:
            return
        if self.last_row is not None and row > self.last_row:
            self.after.setdefault(row, {})[col] = value
            return
        if row != self._row:
            self._end_row()
            self._row = row
        self._cells[col] = value

    def _end_row(self) -> None:
        if self._row is None:
            return
        cells = self._cells
        for c, column in enumerate(self._columns):
            column.append(cells.get(c))
        self._cells = {}
        self._row = None
        self.rows += 1
        if len(self._columns[0]) >= BATCH:
            self._flush()

    def _flush(self) -> None:
        import pyarrow as pa

        if not self._columns[0]:
            return
        arrays = []
        for values, kind, field in zip(self._columns, self.kinds, self.schema):
            if kind == "int":
                values = [_int(v) for v in values]
            arrays.append(pa.array(values, type=field.type))
        self._writer.write_batch(pa.RecordBatch.from_arrays(arrays, schema=self.schema))
        self._columns = [[] for _ in self.names]

    def close(self) -> int:
        """Write what is held and close the file; returns the number of data rows."""
        self._end_row()
        self._flush()
        self._writer.close()
        return self.rows


def _ignore(*_args, **_kwargs) -> None:
    return None


class ValuesOnly:
    """A worksheet whose formulas are written as their cached values (the Run sheet's
    reconciliation refers to rows that are in the Parquet files, not in the workbook)."""

    def __init__(self, ws):
        self._ws = ws

    def write_formula(self, row, col, formula, cell_format=None, value=0):
        if isinstance(value, str):
            self._ws.write_string(row, col, value, cell_format)
        else:
            self._ws.write_number(row, col, value, cell_format)

    def __getattr__(self, name):
        return getattr(self._ws, name)


def write_parquet_set(path: str, folder: str, model: Model, results, problems: list[Problem], info: RunInfo,
                      runs=(), label: str | None = None, reason: str = "") -> dict[str, int]:
    """Write the Parquet set into `folder` (which must exist, empty) and the summary workbook to
    `path`.

    Parameters
    ----------
    path : str
        The summary workbook (.xlsx): Summary (header and TOTAL row), Problems, Run.
    folder : str
        Where the Parquet files go (the caller renames it into place, ``commit_folder``).
    model, results, problems, info, runs
        As for ``costing.sheets.writer.write_costed`` (``Costed.results``, ``Costed.runs``).
    label : str, optional
        The folder's name as the Run sheet shows it (default: `folder`'s base name).
    reason : str
        Why the run wrote a Parquet set (the option, or the row limit), for the Run sheet.

    Returns
    -------
    dict of str to int
        File name -> data rows.
    """
    named = {leg.run_id for r in results for leg in r.legs if leg.run_id}
    loaded = [run for run in runs if not run.empty_for]
    if len(named) != len(loaded) or any(run.run_id not in named for run in loaded):
        raise ValueError(f"the results' legs name {len(named)} vehicle runs but {len(runs)} were given: "
                         "pass Costed.runs with Costed.results")
    label = label or os.path.basename(folder)
    w = Writer(path, model, info.created, streaming=False)
    meta = {"costing": __version__, "currency": model.settings.currency}

    def table(sheet: str, last_row: int | None = None) -> TableSheet:
        name, columns = TABLES[sheet]
        return TableSheet(os.path.join(folder, name), columns, {**meta, "sheet": sheet}, last_row)

    written: dict[str, int] = {}
    sheets: list[TableSheet] = []
    fast = rowxml.FAST_ROWS
    rowxml.FAST_ROWS = False  # the sheet writers' cell-by-cell path: each cell reaches the TableSheet
    try:
        legs_ts = table(out.LEGS)
        sheets.append(legs_ts)
        ranges, w.legs_last = write_legs(w, [(name, legs_ts) for name in legs_sheet_names(results)], results)
        runs_ts = table(out.VEHICLE_RUNS)
        sheets.append(runs_ts)
        write_vehicle_runs(w, runs_ts, runs, ranges)
        quoted = carrier_rows(results)
        if quoted:
            carrier_ts = table(out.CARRIER_CHARGES)
            sheets.append(carrier_ts)
            write_carrier_charges(w, carrier_ts, results)
        summary_ts = table(out.SUMMARY, last_row=len(results))
        sheets.append(summary_ts)
        last_row = write_summary(w, summary_ts, results, ranges, quoted)
        for ts in sheets:
            written[os.path.basename(ts.path)] = ts.close()
    except BaseException:
        for ts in sheets:
            try:
                ts._writer.close()
            except Exception:  # noqa: BLE001 - closing what an error left open
                pass
        w.wb.close()
        raise
    finally:
        rowxml.FAST_ROWS = fast
    total = summary_ts.after.get(last_row + 1, {})

    summary = w.wb.add_worksheet(out.SUMMARY)
    problems_ws = w.wb.add_worksheet(out.PROBLEMS)
    run_ws = w.wb.add_worksheet(out.RUN)
    w.header(summary, out.SUMMARY_COLUMNS)
    f = w.f
    for c, (_name, _width, kind) in enumerate(out.SUMMARY_COLUMNS):
        value = total.get(c)
        if isinstance(value, str):
            summary.write_string(1, c, value, f["total_text"])
        elif value is not None:
            summary.write_number(1, c, value, f.get("total_" + kind, f["total_text"]))
    summary.write_string(3, 0, cell_text(
        f"TOTAL of {len(results):,} shipments; the shipment rows are in {label}/{TABLES[out.SUMMARY][0]}, "
        f"their legs in {label}/{TABLES[out.LEGS][0]}, the vehicle runs in "
        f"{label}/{TABLES[out.VEHICLE_RUNS][0]} "
        "(the Run sheet lists each file's rows and columns)"))
    write_problems(w, problems_ws, problems)
    info.extra["Parquet set"] = (
        f"{label}/ beside this workbook ({reason or 'asked for'}): the Summary shipment rows, Legs, Vehicle "
        "runs and Carrier charges as Parquet files, one row per spreadsheet row, columns as the workbook's "
        "(each formula's value); this workbook keeps the Summary TOTAL row, Problems and Run, and the "
        f"reconciliation below as values. Not written in this mode: {', '.join(LEFT_OUT)}")
    for sheet, (name, columns) in TABLES.items():
        if name in written:
            info.extra[f"Parquet file: {label}/{name}"] = (
                f"{written[name]:,} rows ({sheet}); columns: {', '.join(n for n, _w, _k in columns)}")
    n_legs = sum(len(r.legs) for r in results)
    write_run(w, ValuesOnly(run_ws), model, results, problems, info, last_row, n_legs, runs, len(quoted))
    summary.activate()
    w.wb.close()
    return written


def check_folder(folder: str, overwrite: bool) -> str | None:
    """Why the Parquet set cannot go to `folder` (None: it can): it exists and `overwrite` is off,
    or it holds anything but Parquet files (never removed)."""
    if not os.path.exists(folder):
        return None
    if not os.path.isdir(folder):
        return f"{folder} exists and is not a folder; choose another OUTPUT name"
    if not overwrite:
        return f"{folder} exists; add --overwrite to replace it, or choose another OUTPUT name"
    other = [n for n in os.listdir(folder) if not n.endswith(".parquet")]
    if other:
        return (f"{folder} holds other files than a Parquet set ({', '.join(sorted(other)[:3])}); it is not "
                "replaced: move them, or choose another OUTPUT name")
    return None


def commit_folder(tmp: str, folder: str) -> None:
    """Put the finished Parquet set `tmp` in place of `folder` (an earlier set is removed)."""
    if os.path.isdir(folder):
        shutil.rmtree(folder)
    os.replace(tmp, folder)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(folder, 0o777 & ~umask)  # mkdtemp makes 0700; give the usual folder mode
