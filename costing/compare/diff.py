"""Compare two costed workbooks (the OUTPUT of `costing run`): what changed per shipment and
in total, written to a new workbook with the deltas as live formulas.

read_costed reads one costed workbook back through its cached values, matching Summary
columns by header name; compare pairs the shipments by shipment_id and classifies each
change; write_comparison writes sheets Changes and Overview, and with a cost bridge
(costing.compare.bridge) sheets Bridge and Bridge shipments (costing.sheets.bridge). Knows
openpyxl (through the reader's hardened opening) and xlsxwriter; knows nothing of the search.

The pairing is a pandas outer join of the two Summary tables on shipment_id; costs are carried
in integer minor units (they are read rounded to the currency's minor unit), so every delta and
total is exact and the per-shipment deltas add up to the change of the total, to the unit. The
Changes and Overview sheets are laid out as the costed workbook is (costing.sheets.formats):
long text such as routes wraps in its column."""

from __future__ import annotations

import math
import os
import re
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import xlsxwriter
from xlsxwriter.utility import xl_col_to_name

from costing import __version__
from costing.contract.inputs import normalise_header
from costing.contract.outputs import RUN_KEYS, RUN_SETTING_PREFIX
from costing.errors import CompareError
from costing.money import minor_unit, round_money
from costing.workbook.reader import (
    READ_ERRORS,
    InputError,
    describe_read_error,
    is_formula,
    iter_rows,
    open_workbook,
    sha256_of,
)

MAX_ROWS = 1_048_576
MAX_CELL_TEXT = 32_767

ADDED, REMOVED = "added", "removed"
STATUS_CHANGED, ROUTE_CHANGED, COST_CHANGED, UNCHANGED = (
    "status_changed", "route_changed", "cost_changed", "unchanged")
KINDS = (ADDED, REMOVED, STATUS_CHANGED, ROUTE_CHANGED, COST_CHANGED, UNCHANGED)
KIND_NOTES = {
    ADDED: "in the new run only",
    REMOVED: "in the old run only",
    STATUS_CHANGED: "status differs (e.g. routed in one run, no_route in the other)",
    ROUTE_CHANGED: "same status; the depots passed, the vehicle, the origin or the destination differ",
    COST_CHANGED: "same status and route; total_cost differs by at least half a minor unit (0.005 "
                  "for 2-decimal currencies)",
    UNCHANGED: "same status, route and total_cost (hours or CO2e may still differ: see `changed`)",
}

REQUIRED_SUMMARY = ("shipment_id", "status", "total_cost")
_COSTED_FIX = ("give the costed workbook written by `costing run INPUT -o OUTPUT` (sheets Summary, "
               "Legs, Problems, Run)")
_NO_CACHE_FIX = ("the workbook was saved by a program that keeps formulas but not their results; open "
                 "it in a spreadsheet application and save it again, or cost the input again with "
                 "`costing run`")


@dataclass(frozen=True)
class SummaryRow:
    """One shipment row of a costed workbook's Summary sheet (cached values)."""

    shipment_id: str
    status: str
    row: int  # 1-based spreadsheet row
    origin: str | None = None
    destination: str | None = None
    objective: str | None = None
    vehicle: str | None = None
    legs: int | None = None
    distance_km: float | None = None
    drive_hours: float | None = None
    elapsed_hours: float | None = None
    total_cost: float | None = None
    co2e_kg: float | None = None
    route: str | None = None
    weight_t: float | None = None
    standalone_cost: float | None = None  # where the run shares vehicles (consolidation)


@dataclass
class CostedRun:
    """What a costed workbook says: its shipments, TOTAL row and run details."""

    path: str
    file_name: str
    sha256: str  # of the costed workbook itself
    currency: str
    places: int  # money decimals of the currency (ISO 4217 minor unit)
    shipments: dict[str, SummaryRow]  # by shipment_id, in sheet order
    total: dict[str, float | None]  # TOTAL row: column name -> cached value (numeric columns)
    columns: list[str]  # Summary headers as found, normalised
    input_name: str | None = None
    input_sha256: str | None = None
    run_at: str | None = None
    tool: str | None = None
    warnings: list[str] = field(default_factory=list)
    settings: dict[str, object] = field(default_factory=dict)  # Run sheet "setting: " rows, as read

    @property
    def total_cost(self) -> float | None:
        """The run's TOTAL row total_cost (currency), or None when it has none."""
        return self.total.get("total_cost")

    @property
    def routed(self) -> int:
        """How many shipments of the run were routed."""
        return sum(s.status == "routed" for s in self.shipments.values())


@dataclass(frozen=True)
class Change:
    """One shipment, old run against new run. Missing side: None."""

    shipment_id: str
    kind: str  # one of KINDS
    changed: tuple[str, ...]  # aspects that differ: status, route, vehicle, cost, hours, co2e, ...
    old_status: str | None
    new_status: str | None
    old_cost: float | None
    new_cost: float | None
    delta: float  # new - old, a missing cost counted as 0; rounded to the currency's decimals
    delta_ratio: float | None  # delta / old_cost when both costs exist and old_cost != 0
    old_route: str | None
    new_route: str | None
    old_vehicle: str | None
    new_vehicle: str | None
    old_hours: float | None
    new_hours: float | None
    old_co2e: float | None
    new_co2e: float | None
    origin: str | None
    destination: str | None

    @property
    def delta_pct(self) -> float | None:
        """The change in total cost as a percentage of the old total, or None when that was 0."""
        return None if self.delta_ratio is None else self.delta_ratio * 100


@dataclass
class Comparison:
    old: CostedRun
    new: CostedRun
    changes: list[Change]  # sorted: status changes, then largest |delta| first, then the rest
    counts: dict[str, int]  # every kind of KINDS, in that order
    old_total: float  # sum of the old run's shipment total_cost
    new_total: float
    total_delta: float
    currency: str
    places: int
    hours_column: str  # elapsed_hours, or drive_hours when a run has no elapsed_hours
    warnings: list[str] = field(default_factory=list)

    def change(self, shipment_id: str) -> Change:
        """The change record of `shipment_id` (KeyError if it is in neither run)."""
        for c in self.changes:
            if c.shipment_id == shipment_id:
                return c
        raise KeyError(shipment_id)


# ---------------------------------------------------------------------------------------------
# reading


def _from_input_error(e: InputError, path: str) -> CompareError:
    p = e.problems[0] if e.problems else None
    message = p.message if p else str(e)
    fix = p.fix if p else _COSTED_FIX
    fix = fix.replace("give the .xlsx input workbook (start from `costing template`)", _COSTED_FIX)
    return CompareError(message, fix, path)


def _is_blank(v: object) -> bool:
    return v is None or (isinstance(v, str) and v.strip() == "")


def _as_text(v: object) -> str | None:
    if _is_blank(v):
        return None
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v)


def _as_number(v: object) -> float | None:
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return None
    x = float(v)
    return x if math.isfinite(x) else None


def _money_or_none(v: object, places: int) -> float | None:
    x = _as_number(v)
    return None if x is None else round_money(x, places)


def _find_sheet(titles: list[str], wanted: str) -> str | None:
    for t in titles:
        if normalise_header(t) == normalise_header(wanted):
            return t
    return None


def _cell(col: int, row: int) -> str:
    return f"{xl_col_to_name(col)}{row}"


def read_costed(path: str | os.PathLike) -> CostedRun:
    """Read a costed workbook (read-only, cached values). Raises CompareError when the file
    is not a costed workbook or cannot be trusted (a formula without its cached result)."""
    path = os.fspath(path)
    name = os.path.basename(path)
    try:
        wb = open_workbook(path, data_only=True)
    except InputError as e:
        raise _from_input_error(e, path) from None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            titles = list(wb.sheetnames)
            summary_title = _find_sheet(titles, "Summary")
            run_title = _find_sheet(titles, "Run")
            missing = [s for s, t in (("Summary", summary_title), ("Run", run_title)) if t is None]
            if missing:
                looks_like_input = _find_sheet(titles, "Shipments") and _find_sheet(titles, "Lanes")
                what = ("it looks like an input workbook; cost it first with `costing run "
                        f"{name} -o OUTPUT.xlsx` and compare the outputs" if looks_like_input
                        else _COSTED_FIX)
                shown = ", ".join(titles[:12]) + (", ..." if len(titles) > 12 else "")
                raise CompareError(f"{name} is not a costed workbook: it has no "
                                   f"{' or '.join(missing)} sheet (its sheets: {shown})", what, path)
            run = _read_run(wb[run_title])
            header, rows = _read_summary_rows(wb[summary_title])
    except READ_ERRORS as e:
        detail, fix = describe_read_error(e)
        raise CompareError(f"{name} could not be read as a workbook: {detail}", fix, path) from None
    finally:
        wb.close()

    currency = _as_text(run.get(RUN_KEYS["currency"]))
    if currency is None:
        raise CompareError(f"{name}: the Run sheet has no '{RUN_KEYS['currency']}' row, so the "
                           "currency of its costs is unknown", _COSTED_FIX, path)
    currency = currency.strip().upper()
    columns = [normalise_header(h) for h in header]
    index: dict[str, int] = {}
    for i, h in enumerate(columns):
        if h and h not in index:
            index[h] = i
    absent = [c for c in REQUIRED_SUMMARY if c not in index]
    if absent:
        raise CompareError(f"{name}: the Summary sheet has no {', '.join(absent)} column"
                           f"{'s' if len(absent) > 1 else ''} in row 1", _COSTED_FIX, path)
    places = minor_unit(currency)
    run_info = CostedRun(path=path, file_name=name, sha256=sha256_of(path), currency=currency,
                         places=places, shipments={}, total={}, columns=columns,
                         input_name=_as_text(run.get(RUN_KEYS["input_name"])),
                         input_sha256=_as_text(run.get(RUN_KEYS["input_sha256"])),
                         run_at=_as_text(run.get(RUN_KEYS["run_at"])),
                         tool=_as_text(run.get(RUN_KEYS["tool"])),
                         settings={k[len(RUN_SETTING_PREFIX):]: v for k, v in run.items()
                                   if k.startswith(RUN_SETTING_PREFIX)})
    _fill(run_info, summary_title, index, rows)
    return run_info


def _read_run(ws) -> dict[str, object]:
    items: dict[str, object] = {}
    for row in iter_rows(ws, 1, None, 2):
        if not row or _is_blank(row[0]):
            continue
        key = str(row[0]).strip()
        if key not in items:
            items[key] = row[1] if len(row) > 1 else None
    return items


def _read_summary_rows(ws) -> tuple[tuple, list[tuple[int, tuple]]]:
    it = iter_rows(ws, 1, None, None)
    header = tuple(next(it, None) or ())
    width = len(header)
    while width and _is_blank(header[width - 1]):
        width -= 1
    header = header[:width]
    rows = []
    for r, row in enumerate(it, start=2):
        row = tuple(row[:width]) + (None,) * (width - len(row))
        if all(_is_blank(v) for v in row):
            continue
        rows.append((r, row))
    return header, rows


def _fill(run: CostedRun, sheet: str, index: dict[str, int], rows: list[tuple[int, tuple]]) -> None:
    """Turn Summary rows into SummaryRow records and the TOTAL row; every refusal names the cell."""
    name = run.file_name
    c_id, c_status, c_cost = index["shipment_id"], index["status"], index["total_cost"]
    missing_cache: list[tuple[int, int, str]] = []  # (row, col, what) of numbers that must be there

    def get(row: tuple, col: str) -> object:
        i = index.get(col)
        return None if i is None else row[i]

    total_row: tuple[int, tuple] | None = None
    for r, row in rows:
        sid = _as_text(row[c_id])
        status = _as_text(row[c_status])
        if sid == "TOTAL" and status is None:
            total_row = (r, row)
            continue
        if sid is None:
            raise CompareError(f"{name}: {sheet}!{_cell(c_id, r)} has no shipment_id but row {r} is "
                               "not blank", _COSTED_FIX, run.path)
        if status is None:
            raise CompareError(f"{name}: {sheet}!{_cell(c_status, r)} status of shipment {sid} is "
                               "blank", _COSTED_FIX, run.path)
        if sid in run.shipments:
            first = run.shipments[sid].row
            raise CompareError(f"{name}: shipment_id {sid} appears twice in {sheet} (rows {first} and "
                               f"{r}); shipments are matched by shipment_id", _COSTED_FIX, run.path)
        cost_raw = row[c_cost]
        cost = _as_number(cost_raw)
        if cost is None and (status == "routed" or not _is_blank(cost_raw)):
            missing_cache.append((r, c_cost, f"total_cost of shipment {sid}"))
        legs = _as_number(get(row, "legs"))
        run.shipments[sid] = SummaryRow(
            shipment_id=sid, status=status, row=r,
            origin=_as_text(get(row, "origin")), destination=_as_text(get(row, "destination")),
            objective=_as_text(get(row, "objective")), vehicle=_as_text(get(row, "vehicle")),
            legs=None if legs is None else int(legs),
            distance_km=_as_number(get(row, "distance_km")),
            drive_hours=_as_number(get(row, "drive_hours")),
            elapsed_hours=_as_number(get(row, "elapsed_hours")),
            total_cost=None if cost is None else round_money(cost, run.places),
            co2e_kg=_as_number(get(row, "co2e_kg")), route=_as_text(get(row, "route")),
            weight_t=_as_number(get(row, "weight_t")),
            standalone_cost=_money_or_none(get(row, "standalone_cost"), run.places))
    if total_row is None:
        raise CompareError(f"{name}: the {sheet} sheet has no TOTAL row (shipment_id TOTAL, blank "
                           "status) below the shipments", _COSTED_FIX, run.path)
    tr, trow = total_row
    for col, i in index.items():
        if col not in ("shipment_id", "status"):
            run.total[col] = _as_number(trow[i])
    if run.total.get("total_cost") is None:
        missing_cache.append((tr, c_cost, "total_cost of the TOTAL row"))
    if missing_cache:
        _refuse_missing(run, sheet, missing_cache)
    run.total["total_cost"] = round_money(run.total["total_cost"], run.places)
    row_sum = round_money(sum(s.total_cost or 0.0 for s in run.shipments.values()), run.places)
    if abs(row_sum - run.total["total_cost"]) >= _half_unit(run.places):
        run.warnings.append(f"{name}: the TOTAL row's total_cost ({run.total['total_cost']:,.{run.places}f})"
                            f" differs from the sum of the shipment rows ({row_sum:,.{run.places}f}); "
                            "the comparison uses the shipment rows")


def _refuse_missing(run: CostedRun, sheet: str, cells: list[tuple[int, int, str]]) -> None:
    """A needed number is absent: say whether the cell holds a formula whose result was not
    saved (look at the formulas once, only now) or holds something else."""
    r, c, what = cells[0]
    more = f" (and {len(cells) - 1} more cell{'s' if len(cells) > 2 else ''})" if len(cells) > 1 else ""
    where = f"{run.file_name}: {sheet}!{_cell(c, r)} ({what})"
    raw: object = None
    try:
        fwb = open_workbook(run.path, data_only=False)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                row = next(iter_rows(fwb[sheet], r, r, c + 1), ())
                raw = row[c] if len(row) > c else None
        finally:
            fwb.close()
    except (InputError, *READ_ERRORS):
        raw = None
    if is_formula(raw):
        raise CompareError(f"{where} holds a formula with no saved result{more}", _NO_CACHE_FIX, run.path)
    if isinstance(raw, str) and raw.startswith("#"):
        raise CompareError(f"{where} holds the error {raw[:20]}{more}",
                           "cost the input again with `costing run`", run.path)
    shown = "is blank" if _is_blank(raw) else f"holds {str(raw)[:40]!r}, not a number"
    raise CompareError(f"{where} {shown}{more}", "cost the input again with `costing run`; do not edit "
                       "the costed workbook before comparing", run.path)


# ---------------------------------------------------------------------------------------------
# comparing


def _half_unit(places: int) -> float:
    return 0.5 * 10.0 ** -places


def compare(old: CostedRun, new: CostedRun) -> Comparison:
    """Pair the shipments of two runs by shipment_id and classify each change. Raises
    CompareError when the runs are in different currencies (their costs cannot be subtracted)."""
    if old.currency != new.currency:
        raise CompareError(f"the runs are in different currencies: {old.file_name} in {old.currency}, "
                           f"{new.file_name} in {new.currency}; cost differences would be meaningless",
                           "cost both inputs in the same currency (Settings: currency) and compare again")
    places = old.places
    notes = [*old.warnings, *new.warnings]
    if "elapsed_hours" in old.columns and "elapsed_hours" in new.columns:
        hours_column = "elapsed_hours"
    elif "drive_hours" in old.columns and "drive_hours" in new.columns:
        hours_column = "drive_hours"
        notes.append("a run has no elapsed_hours column; hours are compared on drive_hours")
    else:
        hours_column = "elapsed_hours"
        notes.append("the runs do not both have an elapsed_hours or drive_hours column; hours are not "
                     "compared")
    if old.input_sha256 and old.input_sha256 == new.input_sha256:
        notes.append("both runs costed the same input file (same input SHA-256); differences come from "
                     "the command line (--objective) or the tool version")
    if old.tool and new.tool and old.tool != new.tool:
        notes.append(f"the runs were made by different versions: {old.tool} and {new.tool}")

    table = _pair(old, new, hours_column, places)
    changes = [_change_of(row) for row in table.itertuples(index=False)]
    counts = {k: 0 for k in KINDS}
    counts.update(table["kind"].value_counts().to_dict())
    scale = 10 ** places
    old_units = int(table["old_units"].sum())
    new_units = int(table["new_units"].sum())
    return Comparison(old=old, new=new, changes=changes, counts=counts, old_total=old_units / scale,
                      new_total=new_units / scale, total_delta=(new_units - old_units) / scale,
                      currency=old.currency, places=places, hours_column=hours_column, warnings=notes)


_ASPECTS = ("status", "origin", "destination", "route", "vehicle", "objective")
_ROUTE_ASPECTS = ("origin", "destination", "route", "vehicle")
_SIDE_FIELDS = ("status", "origin", "destination", "route", "vehicle", "objective", "total_cost",
                "co2e_kg")


def _side(run: CostedRun, hours_column: str, places: int) -> pd.DataFrame:
    """One run's shipments as a frame indexed by shipment_id (sheet order), with the cost in
    integer minor units (the costs are already rounded to the minor unit)."""
    rows = list(run.shipments.values())
    frame = pd.DataFrame({f: pd.Series([getattr(s, f) for s in rows], dtype=object)
                          for f in _SIDE_FIELDS})
    frame["hours"] = pd.Series([getattr(s, hours_column) for s in rows], dtype=object)
    frame["shipment_id"] = [s.shipment_id for s in rows]
    cost = pd.to_numeric(frame["total_cost"], errors="coerce")
    frame["units"] = (cost * 10 ** places).round().fillna(0).astype("int64")
    frame["present"] = True
    return frame


def _same_numbers(a: pd.Series, b: pd.Series) -> pd.Series:
    """Elementwise: both None, or both numbers equal within 1e-9 relative or 1e-6 absolute
    (math.isclose's rule)."""
    x = pd.to_numeric(a, errors="coerce").to_numpy(dtype=float)
    y = pd.to_numeric(b, errors="coerce").to_numpy(dtype=float)
    both = ~np.isnan(x) & ~np.isnan(y)
    with np.errstate(invalid="ignore"):
        close = np.abs(x - y) <= np.maximum(1e-9 * np.maximum(np.abs(x), np.abs(y)), 1e-6)
    return pd.Series((both & close) | (np.isnan(x) & np.isnan(y)), index=a.index)


def _pair(old: CostedRun, new: CostedRun, hours_column: str, places: int) -> pd.DataFrame:
    """Old and new shipments paired by shipment_id (an outer join: old sheet order, then the new
    run's additions), one row per shipment with its kind, changed aspects and cost delta,
    sorted: status changes, then largest |delta| first, then the rest (ties in sheet order)."""
    a = _side(old, hours_column, places)
    b = _side(new, hours_column, places)
    t = a.merge(b, on="shipment_id", how="outer", suffixes=("_old", "_new"))
    # sheet order: the old run's shipments, then those only the new run has, each in its order
    ids = pd.concat([a["shipment_id"], b["shipment_id"][~b["shipment_id"].isin(a["shipment_id"])]])
    t = t.set_index("shipment_id").loc[ids.to_numpy()].reset_index()
    t["present_old"] = t["present_old"].eq(True)
    t["present_new"] = t["present_new"].eq(True)
    t["old_units"] = t["units_old"].fillna(0).astype("int64")
    t["new_units"] = t["units_new"].fillna(0).astype("int64")
    t["delta_units"] = t["new_units"] - t["old_units"]
    both = t["present_old"] & t["present_new"]
    missing = "\0"  # no text read from a cell is NUL: stands for a blank on either side
    differs = {asp: both & (t[f"{asp}_old"].fillna(missing) != t[f"{asp}_new"].fillna(missing))
               for asp in _ASPECTS}
    cost_missing_differs = t["total_cost_old"].isna() != t["total_cost_new"].isna()
    differs["cost"] = both & ((t["delta_units"] != 0) | cost_missing_differs)
    differs["hours"] = both & ~_same_numbers(t["hours_old"], t["hours_new"])
    differs["co2e"] = both & ~_same_numbers(t["co2e_kg_old"], t["co2e_kg_new"])
    status = differs["status"]
    kind = np.select(
        [~t["present_old"], ~t["present_new"], status,
         np.logical_or.reduce([differs[x] for x in _ROUTE_ASPECTS]), differs["cost"]],
        [ADDED, REMOVED, STATUS_CHANGED, ROUTE_CHANGED, COST_CHANGED], UNCHANGED)
    t["kind"] = kind
    # a status change lists only what adds to it (route, vehicle, hours, CO2e follow from it)
    order = ("status", "origin", "destination", "route", "vehicle", "objective", "cost", "hours", "co2e")
    keep_on_status = ("status", "origin", "destination", "cost")
    t["changed"] = [tuple(x for x, on in zip(order, flags) if on and (not st or x in keep_on_status))
                    for st, *flags in zip(status, *(differs[x] for x in order))]
    t["group"] = np.where(t["kind"] == STATUS_CHANGED, 0, np.where(t["delta_units"] != 0, 1, 2))
    t["sort_size"] = np.where(t["group"] < 2, -t["delta_units"].abs(), 0)
    t["sheet_order"] = range(len(t))
    t = t.sort_values(["group", "sort_size", "sheet_order"], kind="stable")
    t["places"] = places
    return t.reset_index(drop=True)


def _none(v: object) -> object:
    """pandas' missing value (NaN) back to None."""
    return None if v is None or (isinstance(v, float) and math.isnan(v)) else v


def _change_of(r) -> Change:
    """One paired row as a Change record."""
    scale = 10 ** r.places
    old_cost, new_cost = _none(r.total_cost_old), _none(r.total_cost_new)
    delta = r.delta_units / scale
    ratio = delta / old_cost if old_cost is not None and new_cost is not None and old_cost != 0 else None
    either = "_new" if r.present_new else "_old"
    return Change(
        shipment_id=r.shipment_id, kind=r.kind, changed=r.changed,
        old_status=_none(r.status_old), new_status=_none(r.status_new),
        old_cost=old_cost, new_cost=new_cost, delta=delta, delta_ratio=ratio,
        old_route=_none(r.route_old), new_route=_none(r.route_new),
        old_vehicle=_none(r.vehicle_old), new_vehicle=_none(r.vehicle_new),
        old_hours=_none(r.hours_old), new_hours=_none(r.hours_new),
        old_co2e=_none(r.co2e_kg_old), new_co2e=_none(r.co2e_kg_new),
        origin=_none(getattr(r, "origin" + either)), destination=_none(getattr(r, "destination" + either)))


# ---------------------------------------------------------------------------------------------
# writing


def _text(value: object) -> str:
    s = "" if value is None else str(value)
    if len(s) > MAX_CELL_TEXT:
        s = s[: MAX_CELL_TEXT - 40] + " ... [truncated at the cell limit]"
    return s


def _changes_columns(hours: str) -> list[tuple[str, int, str, Callable[[Change], object]]]:
    """(header, least width, kind, value) of the Changes sheet; kind: text | money | pct | hours |
    kg | formula kinds (delta_money, delta_pct, delta_hours, delta_kg), filled in by the writer."""
    return [
        ("shipment_id", 12, "text", lambda c: c.shipment_id),
        ("change", 14, "text", lambda c: c.kind),
        ("changed", 16, "text", lambda c: ", ".join(c.changed)),
        ("old_status", 10, "text", lambda c: c.old_status),
        ("new_status", 10, "text", lambda c: c.new_status),
        ("old_total_cost", 13, "money", lambda c: c.old_cost),
        ("new_total_cost", 13, "money", lambda c: c.new_cost),
        ("cost_delta", 13, "delta_money", lambda c: c.delta),
        ("cost_delta_pct", 10, "delta_pct", lambda c: c.delta_ratio),
        (f"old_{hours}", 10, "hours", lambda c: c.old_hours),
        (f"new_{hours}", 10, "hours", lambda c: c.new_hours),
        (f"{hours}_delta", 10, "delta_hours", lambda c: None if c.old_hours is None or c.new_hours is None
         else c.new_hours - c.old_hours),
        ("old_co2e_kg", 10, "kg", lambda c: c.old_co2e),
        ("new_co2e_kg", 10, "kg", lambda c: c.new_co2e),
        ("co2e_kg_delta", 10, "delta_kg", lambda c: None if c.old_co2e is None or c.new_co2e is None
         else c.new_co2e - c.old_co2e),
        ("old_vehicle", 12, "text", lambda c: c.old_vehicle),
        ("new_vehicle", 12, "text", lambda c: c.new_vehicle),
        ("old_route", 24, "text", lambda c: c.old_route),
        ("new_route", 24, "text", lambda c: c.new_route),
        ("origin", 10, "text", lambda c: c.origin),
        ("destination", 11, "text", lambda c: c.destination),
    ]


def _money_format(currency: str, places: int) -> str:
    zeros = "." + "0" * places if places else ""
    # the code goes into a number format: only a plain ISO-style code is shown
    suffix = f'" {currency}"' if re.fullmatch(r"[A-Z]{3}", currency) else ""
    return f"#,##0{zeros}{suffix}"


def write_comparison(path: str | os.PathLike, comparison: Comparison, bridge=None) -> None:
    """Write sheets Changes and Overview, and with a `bridge` (costing.compare.bridge.Bridge)
    sheets Bridge and Bridge shipments (costing.sheets.bridge). Deltas and totals are live
    formulas with their values cached; every string from the compared workbooks is written as
    text."""
    from costing.sheets.formats import install_layout
    from costing.sheets.writer import run_time

    cmp = comparison
    n = len(cmp.changes)
    if n + 1 > MAX_ROWS:
        raise CompareError(f"{n:,} shipments do not fit in one sheet ({MAX_ROWS:,} rows)",
                           "compare smaller runs")
    wb = xlsxwriter.Workbook(os.fspath(path), {"strings_to_formulas": False, "strings_to_urls": False,
                                               "strings_to_numbers": False})
    wb.set_properties({"title": "Comparison of two costed runs", "created": run_time(),
                       "comments": f"Written by costing {__version__}"})
    # the costed workbook's layout: widths from the shown values, text over 60 characters
    # wrapped (long routes no longer spill over their neighbours), print set-up
    install_layout(wb, streaming=False)
    money = _money_format(cmp.currency, cmp.places)
    f = {
        "head": wb.add_format({"bold": True, "bg_color": "#1F4E78", "font_color": "#FFFFFF",
                               "text_wrap": True, "valign": "top", "border": 1}),
        # every cell aligned at the top: a wrapped route makes its row taller, and the rest
        # of the row must read on its first line
        "text": wb.add_format({"valign": "top"}),
        "money": wb.add_format({"num_format": money, "valign": "top"}),
        "delta_money": wb.add_format({"num_format": f"+{money};-{money};{money}", "valign": "top"}),
        "pct": wb.add_format({"num_format": "+0.0%;-0.0%;0.0%", "valign": "top"}),
        "hours": wb.add_format({"num_format": "0.00", "valign": "top"}),
        "kg": wb.add_format({"num_format": "#,##0.0", "valign": "top"}),
        "int": wb.add_format({"num_format": "0", "valign": "top"}),
        "bold": wb.add_format({"bold": True, "valign": "top"}),
        "wrap": wb.add_format({"text_wrap": True, "valign": "top"}),
        "up": wb.add_format({"font_color": "#9C0006"}),
        "down": wb.add_format({"font_color": "#006100"}),
        "status": wb.add_format({"bg_color": "#FFE699"}),
    }
    f["delta_pct"] = f["pct"]
    f["delta_hours"] = f["hours"]
    f["delta_kg"] = f["kg"]
    changes_ws = wb.add_worksheet("Changes")
    overview_ws = wb.add_worksheet("Overview")
    cols = _write_changes(changes_ws, cmp, f)
    _write_overview(overview_ws, cmp, f, cols)
    if bridge is not None:
        from costing.contract.outputs import BRIDGE, BRIDGE_SHIPMENTS
        from costing.sheets.bridge import BridgeFormats, write_bridge, write_bridge_shipments

        # the Bridge sheet lays itself out (hidden chart columns, a chart): not measured
        bridge_ws = xlsxwriter.Workbook.add_worksheet(wb, BRIDGE)
        rows_ws = wb.add_worksheet(BRIDGE_SHIPMENTS)
        fm = BridgeFormats(wb, bridge.currency, bridge.places)
        letters = write_bridge_shipments(rows_ws, bridge, fm)
        write_bridge(wb, bridge_ws, bridge, fm, letters)
    changes_ws.activate()
    wb.close()


def _write_changes(ws, cmp: Comparison, f) -> dict[str, str]:
    spec = _changes_columns(cmp.hours_column)
    letters = {name: xl_col_to_name(i) for i, (name, *_r) in enumerate(spec)}
    widths = [max(w, len(name) + 2) for name, w, _k, _v in spec]
    p = cmp.places
    for r, c in enumerate(cmp.changes, start=1):
        x = r + 1
        for col, (_name, _w, kind, value_of) in enumerate(spec):
            value = value_of(c)
            if kind == "text":
                if value is not None and value != "":
                    s = _text(value)
                    # routes and other long text wrap within the column (the layout caps text
                    # columns at 60 characters), never spilling over the neighbouring cells
                    ws.write_string(r, col, s, f["wrap"] if len(s) > 40 else f["text"])
                    widths[col] = max(widths[col], min(len(s) + 2, 60))
            elif kind == "delta_money":
                old, new = letters["old_total_cost"], letters["new_total_cost"]
                ws.write_formula(r, col, f"=ROUND({new}{x}-{old}{x},{p})", f[kind], value)
            elif kind == "delta_pct":
                if value is not None:
                    ws.write_formula(r, col, f"={letters['cost_delta']}{x}/{letters['old_total_cost']}{x}",
                                     f[kind], value)
            elif kind in ("delta_hours", "delta_kg"):
                if value is not None:  # new - old: the two columns just before this one
                    old, new = xl_col_to_name(col - 2), xl_col_to_name(col - 1)
                    ws.write_formula(r, col, f"={new}{x}-{old}{x}", f[kind], value)
            elif value is not None:
                ws.write_number(r, col, value, f[kind])
            if kind in ("money", "delta_money") and value is not None:
                widths[col] = max(widths[col], min(len(f"{value:+,.{p}f}") + 6, 30))
    for col, (name, _w, kind, _v) in enumerate(spec):
        ws.write_string(0, col, name, f["head"])
        ws.set_column(col, col, widths[col], f.get(kind) if kind != "text" else None)
    notes = {"change": "; ".join(f"{k}: {v}" for k, v in KIND_NOTES.items()),
             "cost_delta": "new_total_cost - old_total_cost; a missing cost counts as 0, so the deltas "
                           "add up to the change of the total.",
             "cost_delta_pct": "cost_delta / old_total_cost, where both runs have a cost.",
             "changed": "What differs between the runs for this shipment."}
    for name, text in notes.items():
        ws.write_comment(0, list(letters).index(name), text, {"x_scale": 2.5, "y_scale": 1.5})
    last = max(len(cmp.changes), 1)
    ws.freeze_panes(1, 1)
    ws.set_row(0, 30)
    ws.autofilter(0, 0, last, len(spec) - 1)
    d = list(letters).index("cost_delta")
    ws.conditional_format(1, d, last, d, {"type": "cell", "criteria": ">", "value": 0, "format": f["up"]})
    ws.conditional_format(1, d, last, d, {"type": "cell", "criteria": "<", "value": 0, "format": f["down"]})
    k = list(letters).index("change")
    ws.conditional_format(1, k, last, k, {"type": "cell", "criteria": "==", "value": f'"{STATUS_CHANGED}"',
                                          "format": f["status"]})
    return letters


def _write_overview(ws, cmp: Comparison, f, letters: dict[str, str]) -> None:
    old, new, p = cmp.old, cmp.new, cmp.places
    last = max(len(cmp.changes), 1) + 1  # last data row of Changes, 1-based
    widths = [34, 20, 20, 14]

    def col_range(name: str) -> str:
        c = letters[name]
        return f"Changes!${c}$2:${c}${last}"

    for c, h in enumerate(("item", "old run", "new run", "change")):
        ws.write_string(0, c, h, f["head"])
    r = 0

    def text_row(label: str, a: object, b: object) -> None:
        nonlocal r
        r += 1
        ws.write_string(r, 0, label, f["bold"])
        for c, v in ((1, a), (2, b)):
            s = _text("(not recorded)" if v is None else v)
            # a SHA-256 (64 characters) or a long file name wraps in its column, never cut
            ws.write_string(r, c, s, f["wrap"] if len(s) > 40 else f["text"])
            widths[c] = max(widths[c], min(len(s) + 2, 70))

    text_row("costed workbook", old.file_name, new.file_name)
    text_row("costed workbook SHA-256", old.sha256, new.sha256)
    text_row("input file", old.input_name, new.input_name)
    text_row("input SHA-256", old.input_sha256, new.input_sha256)
    text_row("run at (UTC)", old.run_at, new.run_at)
    text_row("tool", old.tool, new.tool)
    text_row("currency", old.currency, new.currency)
    for label, a, b in (("shipments", len(old.shipments), len(new.shipments)),
                        ("routed", old.routed, new.routed)):
        r += 1
        ws.write_string(r, 0, label, f["bold"])
        ws.write_number(r, 1, a, f["int"])
        ws.write_number(r, 2, b, f["int"])
        ws.write_formula(r, 3, f"=C{r + 1}-B{r + 1}", f["int"], b - a)
    r += 1
    ws.write_string(r, 0, "total_cost", f["bold"])
    ws.write_formula(r, 1, f"=ROUND(SUM({col_range('old_total_cost')}),{p})", f["money"], cmp.old_total)
    ws.write_formula(r, 2, f"=ROUND(SUM({col_range('new_total_cost')}),{p})", f["money"], cmp.new_total)
    ws.write_formula(r, 3, f"=ROUND(C{r + 1}-B{r + 1},{p})", f["delta_money"], cmp.total_delta)
    total_row = r + 1
    r += 1
    ws.write_string(r, 0, "sum of cost_delta (equals the change)")
    delta_sum = round_money(sum(c.delta for c in cmp.changes), p)
    ws.write_formula(r, 3, f"=ROUND(SUM({col_range('cost_delta')}),{p})", f["delta_money"], delta_sum)
    r += 1
    ws.write_string(r, 0, "difference (must be 0)")
    ws.write_formula(r, 3, f"=ROUND(D{r}-D{total_row},{p})", f["delta_money"],
                     round_money(delta_sum - cmp.total_delta, p))
    olds = [c.old_co2e for c in cmp.changes if c.old_co2e is not None]
    news = [c.new_co2e for c in cmp.changes if c.new_co2e is not None]
    r += 1
    ws.write_string(r, 0, "co2e_kg", f["bold"])
    ws.write_formula(r, 1, f"=SUM({col_range('old_co2e_kg')})", f["kg"], sum(olds))
    ws.write_formula(r, 2, f"=SUM({col_range('new_co2e_kg')})", f["kg"], sum(news))
    ws.write_formula(r, 3, f"=C{r + 1}-B{r + 1}", f["kg"], sum(news) - sum(olds))

    r += 2
    ws.write_string(r, 0, "change", f["head"])
    ws.write_string(r, 1, "shipments", f["head"])
    ws.write_string(r, 2, "meaning", f["head"])
    first = r + 2
    kind_col = f"Changes!${letters['change']}$2:${letters['change']}${last}"
    for kind in KINDS:
        r += 1
        ws.write_string(r, 0, kind, f["bold"])
        ws.write_formula(r, 1, f'=COUNTIF({kind_col},"{kind}")', f["int"], cmp.counts[kind])
        ws.write_string(r, 2, KIND_NOTES[kind])
    r += 1
    ws.write_string(r, 0, "shipments compared", f["bold"])
    ws.write_formula(r, 1, f"=SUM(B{first}:B{r})", f["int"], sum(cmp.counts.values()))

    notes = [
        f"Shipments are matched by shipment_id. Money is compared to the {cmp.currency} minor unit "
        f"({p} decimals): differences under half of it count as none.",
        "cost_delta counts a missing cost (removed, added, or not routed) as 0, so the cost_delta "
        "column adds up to the change of the total.",
        f"Hours compared: {cmp.hours_column}.",
        *cmp.warnings,
    ]
    r += 1
    for i, note in enumerate(notes):
        r += 1
        ws.write_string(r, 0, "note" if i < 3 else "warning", f["bold"])
        ws.write_string(r, 1, _text(note), f["wrap"])
    for c, w in enumerate(widths):
        ws.set_column(c, c, w)
    ws.freeze_panes(1, 1)
