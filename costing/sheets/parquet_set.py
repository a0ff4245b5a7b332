"""Past the spreadsheet's row limit: the long tables as a Parquet set beside a summary workbook.

``costing run ... --parquet`` (and any run whose shipments do not fit on one Summary sheet, or
whose scenarios x shipments do not fit on one Scenario shipments sheet) writes the Summary
shipment rows, the Legs, the Vehicle runs and, when carriers priced any shipment, the Carrier
charges as one Parquet file each (``summary.parquet``, ``legs.parquet``,
``vehicle_runs.parquet``, ``carrier_charges.parquet``) in a folder beside the workbook
(``costed.xlsx`` -> ``costed.parquet/``). The workbook keeps the Summary TOTAL row, the Problems
and the Run sheet, which names each Parquet file with its row count and its columns.

A run with what-if scenarios adds the scenarios' long tables to the set, one file per sheet of
the full workbook, every scenario in one file keyed by its first column ``scenario`` (the
output contract's SCENARIO_KEY), as on the sheets: ``scenario_shipments.parquet`` (Scenario
shipments), ``scenario_vehicle_runs.parquet`` (Scenario vehicle runs), ``scenario_legs.parquet``
(Scenario legs, Scenario legs 2, ... as one file) and ``scenario_bridge_shipments.parquet``
(Scenario bridge shipments: each shipment's share of every bridge step). They grow with
scenarios x shipments, so they go where the other long tables go. The two summary-level scenario
sheets stay in the summary workbook, as in the full workbook and beside the TOTAL row they
start from: **Scenario comparison** (a row per scenario: totals by cost component, the
difference from the base case, shipments re-routed, and what each scenario changes) and
**Scenario bridge** (per scenario the steps from the base total to the scenario's, its chart and
the largest shipments behind each step). A finance reviewer opens the workbook and reads the
scenario totals and bridges there; each names the Parquet file holding the rows behind it. Their
figures that sum rows now in the Parquet set are written as values (the full workbook's cached
values); formulas within the sheet (a bridge's running total, a delta against the base row) stay
live formulas with their values cached.

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
  formulas would add up are in the files); so are the scenario totals and bridge steps.
- **No row limit for scenarios**: the full workbook stops when scenarios x shipments pass one
  sheet's rows; the Parquet set has no such limit.

Needs pyarrow (``pip install 'costing[parquet]'``); ``PARQUET_MISSING`` says so.
"""

from __future__ import annotations

import datetime as _dt
import os
import shutil

from costing import __version__
from costing.collector import fewer_collections
from costing.contract import outputs as out
from costing.model import Model, Problem
from costing.sheets import rowxml
from costing.sheets.bridge import BridgeFormats, write_scenario_bridge
from costing.sheets.carrier_charges import carrier_rows, write_carrier_charges
from costing.sheets.formats import Writer, cell_text
from costing.sheets.legs import legs_sheet_names, write_legs
from costing.sheets.problems import write_problems
from costing.sheets.run import RunInfo, write_run
from costing.sheets.scenario_legs import (
    scenario_legs_sheet_names,
    write_scenario_legs,
    write_scenario_vehicle_runs,
)
from costing.sheets.scenario_sheet import write_scenarios
from costing.sheets.scenario_shipments import write_scenario_shipments
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
    out.SCENARIO_SHIPMENTS: ("scenario_shipments.parquet", out.SCENARIO_SHIPMENT_COLUMNS),
    out.SCENARIO_VEHICLE_RUNS: ("scenario_vehicle_runs.parquet", out.SCENARIO_RUN_COLUMNS),
    out.SCENARIO_LEGS: ("scenario_legs.parquet", out.SCENARIO_LEG_COLUMNS),
    # the columns costing.sheets.bridge writes on Scenario bridge shipments: the key, then the
    # contract's Bridge shipments columns
    out.SCENARIO_BRIDGE_SHIPMENTS: ("scenario_bridge_shipments.parquet",
                                    [(out.SCENARIO_KEY, 14, "text"), *out.BRIDGE_SHIPMENT_COLUMNS]),
}

# the summary-level scenario sheets, kept in the summary workbook (module docstring)
IN_WORKBOOK = (out.SCENARIO_COMPARISON, out.SCENARIO_BRIDGE)

BATCH = 65_536  # rows held before they go to the file as one row group

# the costed workbook's other sheets, not written beside a Parquet set
LEFT_OUT = tuple(name for name in out.SHEETS
                 if name not in TABLES and name not in (out.PROBLEMS, out.RUN, *IN_WORKBOOK))


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
    reconciliation refers to rows that are in the Parquet files, not in the workbook). With
    `keep_local`, a formula that names no other sheet (no ``!``) stays a live formula, its value
    cached."""

    def __init__(self, ws, keep_local: bool = False):
        self._ws = ws
        self._keep_local = keep_local

    def write_formula(self, row, col, formula, cell_format=None, value=0):
        if self._keep_local and "!" not in formula:
            self._ws.write_formula(row, col, formula, cell_format, value)
        elif isinstance(value, str):
            self._ws.write_string(row, col, value, cell_format)
        elif value is None:
            self._ws.write_blank(row, col, None, cell_format)
        else:
            self._ws.write_number(row, col, value, cell_format)

    def __getattr__(self, name):
        return getattr(self._ws, name)


@fewer_collections()  # costing.collector: the same results, fewer full collections
def write_parquet_set(path: str, folder: str, model: Model, results, problems: list[Problem], info: RunInfo,
                      runs=(), label: str | None = None, reason: str = "", scenario_runs=(),
                      scenario_bridges=()) -> dict[str, int]:
    """Write the Parquet set into `folder` (which must exist, empty) and the summary workbook to
    `path`.

    Parameters
    ----------
    path : str
        The summary workbook (.xlsx): Summary (header and TOTAL row), with scenarios Scenario
        comparison and Scenario bridge, Problems, Run.
    folder : str
        Where the Parquet files go (the caller renames it into place, ``commit_folder``).
    model, results, problems, info, runs
        As for ``costing.sheets.writer.write_costed`` (``Costed.results``, ``Costed.runs``).
    label : str, optional
        The folder's name as the Run sheet shows it (default: `folder`'s base name).
    reason : str
        Why the run wrote a Parquet set (the option, or the row limit), for the Run sheet.
    scenario_runs : sequence of costing.plan.analysis.ScenarioRun
        The scenarios (``Costed.scenarios``): their Scenario shipments, vehicle runs and legs go
        to the set, their Scenario comparison to the workbook.
    scenario_bridges : sequence of (scenario name, costing.compare.bridge.Bridge)
        As for ``write_costed``: the Scenario bridge goes to the workbook, its shipment rows to
        the set.

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
    scenario_runs, scenario_bridges = list(scenario_runs), list(scenario_bridges)
    label = label or os.path.basename(folder)
    w = Writer(path, model, info.created, streaming=False)
    meta = {"costing": __version__, "currency": model.settings.currency}

    def table(sheet: str, last_row: int | None = None) -> TableSheet:
        name, columns = TABLES[sheet]
        return TableSheet(os.path.join(folder, name), columns, {**meta, "sheet": sheet}, last_row)

    def where(sheet: str) -> str:
        return f"{label}/{TABLES[sheet][0]}"

    # the workbook's sheets in the full workbook's order (the tables below write the bridge)
    summary = w.wb.add_worksheet(out.SUMMARY)
    comparison_ws = w.wb.add_worksheet(out.SCENARIO_COMPARISON) if scenario_runs else None
    bridge_ws = None
    if scenario_bridges:  # lays itself out (hidden chart columns), as in write_costed
        import xlsxwriter

        bridge_ws = xlsxwriter.Workbook.add_worksheet(w.wb, out.SCENARIO_BRIDGE)
    problems_ws = w.wb.add_worksheet(out.PROBLEMS)
    run_ws = w.wb.add_worksheet(out.RUN)

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
        if scenario_runs:
            sc_legs_ts = table(out.SCENARIO_LEGS)
            sheets.append(sc_legs_ts)
            sc_ranges, sc_legs_last = write_scenario_legs(
                w, [(name, sc_legs_ts) for name in scenario_legs_sheet_names(scenario_runs)], scenario_runs)
            sc_runs_ts = table(out.SCENARIO_VEHICLE_RUNS)
            sheets.append(sc_runs_ts)
            write_scenario_vehicle_runs(w, sc_runs_ts, scenario_runs, sc_ranges)
            sc_ships_ts = table(out.SCENARIO_SHIPMENTS)
            sheets.append(sc_ships_ts)
            _rows, ship_last = write_scenario_shipments(w, sc_ships_ts, scenario_runs, sc_ranges, results)
            comparison = ValuesOnly(comparison_ws, keep_local=True)
            write_scenarios(w, comparison, results, scenario_runs, last_row, sc_legs_last, ship_last)
            comparison.write_string(1, 0, cell_text(
                f"Written beside a Parquet set: the scenario rows these totals add up are in "
                f"{where(out.SCENARIO_LEGS)} and {where(out.SCENARIO_SHIPMENTS)} (their vehicle runs in "
                f"{where(out.SCENARIO_VEHICLE_RUNS)}); figures summed from them are values here."))
        if scenario_bridges:
            bridge_rows_ts = table(out.SCENARIO_BRIDGE_SHIPMENTS)
            sheets.append(bridge_rows_ts)
            bridge = ValuesOnly(bridge_ws, keep_local=True)
            write_scenario_bridge(w.wb, bridge, bridge_rows_ts, scenario_bridges,
                                  BridgeFormats(w.wb, model.settings.currency, w.places))
            bridge.write_string(1, 0, cell_text(
                f"Written beside a Parquet set: every shipment's share of every step (the "
                f"{out.SCENARIO_BRIDGE_SHIPMENTS} sheet of a full workbook) is in "
                f"{where(out.SCENARIO_BRIDGE_SHIPMENTS)}; the step amounts, its column sums, are values "
                "here."))
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

    w.header(summary, out.SUMMARY_COLUMNS)
    f = w.f
    for c, (_name, _width, kind) in enumerate(out.SUMMARY_COLUMNS):
        value = total.get(c)
        if isinstance(value, str):
            summary.write_string(1, c, value, f["total_text"])
        elif value is not None:
            summary.write_number(1, c, value, f.get("total_" + kind, f["total_text"]))
    scen = (f"; the scenarios' rows in {label}/scenario_*.parquet (totals per scenario on "
            f"{out.SCENARIO_COMPARISON})") if scenario_runs else ""
    summary.write_string(3, 0, cell_text(
        f"TOTAL of {len(results):,} shipments; the shipment rows are in {where(out.SUMMARY)}, "
        f"their legs in {where(out.LEGS)}, the vehicle runs in {where(out.VEHICLE_RUNS)}{scen} "
        "(the Run sheet lists each file's rows and columns)"))
    write_problems(w, problems_ws, problems)
    kept = [name for name, ws in ((out.SCENARIO_COMPARISON, comparison_ws), (out.SCENARIO_BRIDGE, bridge_ws))
            if ws is not None]
    in_set = [sheet for sheet, (name, _c) in TABLES.items() if name in written]
    info.extra["Parquet set"] = (
        f"{label}/ beside this workbook ({reason or 'asked for'}): {', '.join(in_set)} as Parquet files "
        "(Legs and Scenario legs one file each), one row per spreadsheet row, columns as the workbook's "
        "(each formula's value); this workbook keeps the Summary TOTAL row, "
        f"{''.join(k + ', ' for k in kept)}Problems and Run, and the reconciliation below as values. "
        f"Not written in this mode: {', '.join(LEFT_OUT)}")
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
