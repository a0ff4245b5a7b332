"""What-if scenarios: named sets of changes to the input, read from the optional Scenarios
sheet and applied to a copy of the Model. Knows the contract and the Model; no I/O.

One row of the Scenarios sheet is one change:

    scenario | sheet    | key            | column    | change
    fuel_up  | Rates    | artic_40t      | per_km    | +12%
    fuel_up  | Lanes    | L1             | toll      | +2.5
    fuel_up  | Lanes    | L3             | open      | =no
    fuel_up  | Settings | fuel_price_per_litre | value | =1.85

Rows with the same scenario name (compared as headers are: case, spaces and punctuation
aside) form one scenario, wherever they are on the sheet. A scenario cannot be called
"base" (or "base case"): that name is the unchanged input.

Which rows a change touches (`key`):
- Depots, Lanes, Shipments: the row's depot_id, lane_id or shipment_id (exact).
- Rates: a vehicle (every rate card of that vehicle) or vehicle/mode (one card).
- Settings: the setting name, with column `value`. A setting name in `column` with a blank
  key is the same change; both are stored as key=setting, column="value".
- Blank key: every row of the sheet.

Forms of `change` (the cell is text; the template formats it so):
- ``+10%``, ``-5%``: relative; the new value is old x (1 + p/100). ``amount`` holds p (10.0).
- ``+12.5``, ``-3``: added; the new value is old + amount.
- ``=1.85``, ``=yes``, ``=no``, ``=rail``, ``=some text``: set to that value; the value must
  suit the column (a number, yes/no, one of the column's choices, a depot_id, a vehicle).
- ``=`` alone: make the cell blank, meaning what a blank cell means there (toll 0,
  max_weight_t no limit, a setting its default). Refused on required columns.
- A bare number (1.85, typed in a number cell or as text) sets, like ``=1.85``. In a number
  cell it also gives a warning: a spreadsheet turns a typed +12.5 into 12.5 and +10% into
  0.1, so the number may not be what was typed. TRUE/FALSE in the cell sets yes/no.
- A leading sign and ``%`` may have spaces around them; the minus sign U+2212 is accepted;
  a decimal comma is refused (with the fix to type a point).

Refused outright: changes to id columns (depot_id, lane_id, shipment_id, and vehicle and mode
of Rates), since lanes, shipments and rate cards refer to them; relative or added changes on
columns that are not numbers; set values of the wrong kind; a result outside the column's
bounds (the contract's, as validation applies them: negative per_km, latitude above 90,
payload_t under 10 kg, money above 1e9), checked row by row when the change is applied.

Blank numbers (None in the Model) under ``+10%`` or ``+12.5`` stay blank, with a warning
that names the rows. Blank there means "not known" or "no limit" (distance_km: estimated from
coordinates; max_weight_t: no limit; fuel_price_per_litre: no surcharge), never 0 - numbers
whose blank means 0 (toll, fixed_cost, handling_cost, per_trip, min_charge, tare_t) are
already 0.0 in the Model and change normally. Treating blank as 0 would turn "+5 t on every
weight limit" into a 5-tonne limit on unlimited lanes, and "+5 km" into a 5 km lane. To give
such a cell a value, set it (``=40``) in an earlier row of the scenario or on its sheet.

Order: the changes of a scenario apply in row order, each on the result of the previous
(``=40`` then ``+10%`` gives 44). Arithmetic is done in decimal on the numbers as written, so
1.05 +12% is exactly 1.176, as by hand. Other checks of validation that involve several rows
(a lane's km against its depots' coordinates) are not repeated on the scenario's Model,
except that a lane may not be made to start and end at the same depot.

Problems: every problem names the Scenarios sheet (its title in the file) and the cell of the
row at fault: A scenario, B sheet, C key, D column, E change (as laid out in the file).
Errors stop the run; a scenario with any error is left out of the returned list entirely
(never run with part of its changes). Nothing is dropped silently.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
import re
from dataclasses import dataclass
from decimal import Decimal

from costing.contract.inputs import (
    MAX_PLAUSIBLE_NUMBER,
    MIN_PAYLOAD_T,
    MODES,
    SETTINGS_BY_NAME,
    SHEETS_BY_NAME,
    SPREADSHEET_ERRORS,
    closest,
    did_you_mean,
    normalise_header,
)
from costing.contract.rows import RawSheet
from costing.errors import ScenarioError
from costing.model import ERROR, INFO, WARNING, Depot, Lane, Model, Problem, RateCard, Settings, Shipment
from costing.money import is_known_currency

SHEET = "Scenarios"
TARGET_SHEETS = ("Settings", "Depots", "Lanes", "Rates", "Shipments")
# Model attribute holding each sheet's records.
RECORDS = {"Depots": "depots", "Lanes": "lanes", "Rates": "rates", "Shipments": "shipments"}
_FIELDS = {sheet: {f.name for f in dataclasses.fields(cls)} for sheet, cls in
           (("Depots", Depot), ("Lanes", Lane), ("Rates", RateCard), ("Shipments", Shipment))}
# Columns other rows or sheets refer to: a scenario may not change them.
ID_COLUMNS = {"Depots": ("depot_id",), "Lanes": ("lane_id",), "Rates": ("vehicle", "mode"),
              "Shipments": ("shipment_id",)}
# Scenario names (normalised) that mean the unchanged input.
RESERVED_NAMES = ("base", "base_case")
FORMS = ("type +10% or -5% (relative), +12.5 or -3 (added), or =1.85, =yes, =no, =text "
         "(set to); = alone makes the cell blank")
# At most this many rows are named in one problem.
MAX_NAMED = 5
# Longer change cells are refused unread.
MAX_CHANGE_CHARS = 200

_NUMBER = r"(?:\d+(?:\.\d*)?|\.\d+)"
_RELATIVE = re.compile(rf"([+-])\s*({_NUMBER})\s*(%?)")
_PLAIN = re.compile(rf"[+-]?\s*{_NUMBER}")
_YES = ("yes", "y", "true", "1")
_NO = ("no", "n", "false", "0")
_BLANK = object()  # "=" alone
_KEEP = object()  # a row the change leaves as it is (reported)


@dataclass(frozen=True)
class Change:
    sheet: str  # contract sheet name: Settings, Depots, Lanes, Rates, Shipments
    key: str | None  # row id; Rates: "vehicle" or "vehicle/mode"; Settings: setting name; None: all
    column: str  # contract column name; "value" for Settings
    op: str  # "pct" | "add" | "set"
    amount: object  # pct: percent (12.0 for +12%); add: float; set: the typed value or None (blank)
    cell: str  # address of the change cell, e.g. "E4"
    row: int

    def form(self) -> str:
        """The change as typed in its accepted form: +12%, -3, =1.85, =no, = (blank)."""
        if self.op == "pct":
            return f"{_num(self.amount, sign=True)}%"
        if self.op == "add":
            return _num(self.amount, sign=True)
        if isinstance(self.amount, bool):
            return "=yes" if self.amount else "=no"
        if self.amount is None:
            return "="
        if isinstance(self.amount, float):
            return f"={_num(self.amount)}"
        return f"={self.amount}"

    def describe(self) -> str:
        """E.g. "Rates artic_40t per_km +12%", for reports."""
        where = f"{self.sheet} {self.key}" if self.key is not None else f"{self.sheet} (all rows)"
        return f"{where} {self.column} {self.form()}"


@dataclass(frozen=True)
class Scenario:
    name: str
    changes: tuple[Change, ...]
    sheet_title: str = SHEET  # title of the Scenarios sheet in the file, for problems


@dataclass(frozen=True)
class _Target:
    """What a change may put in one column or setting."""
    name: str
    kind: str  # number | yesno | choice | text | depot | vehicle | currency
    required: bool = False
    choices: tuple[str, ...] = ()
    minimum: float | None = None
    maximum: float | None = None
    unit: str = ""
    blank: object = None  # what a blank cell means


def _num(x, sign: bool = False) -> str:
    s = f"{float(x):.12g}"
    return f"+{s}" if sign and not s.startswith("-") else s


def _short(v, n: int = 40) -> str:
    s = str(v)
    return s if len(s) <= n else s[: n - 1] + "…"


def _text(v) -> str | None:
    """A cell as text: None when blank; 101.0 -> "101"."""
    if v is None:
        return None
    if isinstance(v, float) and v.is_integer():
        v = int(v)
    s = str(v).strip()
    return s or None


def _names(items: list[str]) -> str:
    shown = ", ".join(items[:MAX_NAMED])
    return shown + (f" and {len(items) - MAX_NAMED} more" if len(items) > MAX_NAMED else "")


# ---------------------------------------------------------------------------------------------
# targets: sheets, columns, settings, keys


def _sheet_name(v: str) -> str | None:
    wanted = normalise_header(v)
    for name in TARGET_SHEETS:
        if normalise_header(name) == wanted:
            return name
    return None


def _column_target(sheet: str, column: str) -> _Target:
    col = SHEETS_BY_NAME[sheet].column(column)
    blank = col.default
    if col.kind == "text" and blank is None:
        blank = ""
    return _Target(col.name, col.kind, col.required and not col.allow_blank, col.choices,
                   col.minimum, col.maximum, col.unit, blank)


_SETTING_FIELDS = {f.name for f in dataclasses.fields(Settings)}


def _setting_target(name: str) -> _Target:
    spec = SETTINGS_BY_NAME[name]
    kind = "currency" if name == "currency" else spec.kind
    return _Target(name, kind, False, spec.choices, spec.minimum, spec.maximum, "", spec.default)


def _row_label(sheet: str, rec) -> str:
    if sheet == "Rates":
        return f"{rec.vehicle}/{rec.mode}"
    return getattr(rec, ID_COLUMNS[sheet][0])


def _selects(sheet: str, rec, key: str | None) -> bool:
    if key is None:
        return True
    if sheet == "Rates":
        return rec.vehicle == key or f"{rec.vehicle}/{rec.mode}" == key
    return getattr(rec, ID_COLUMNS[sheet][0]) == key


def _resolve_key(model: Model, sheet: str, key: str) -> tuple[str | None, str, str]:
    """(canonical key, message, fix); key None when it names no row."""
    if sheet == "Rates":
        vehicles = model.vehicles()
        if key in vehicles:
            return key, "", ""
        if "/" in key:
            vehicle, _, mode_text = key.rpartition("/")
            vehicle, mode = vehicle.strip(), normalise_header(mode_text)
            if vehicle in vehicles:
                cards = model.cards_for(vehicle)
                if mode in cards:
                    return f"{vehicle}/{mode}", "", ""
                if mode not in MODES:
                    return None, (f"key '{_short(key)}': '{_short(mode_text)}' is not a mode"), (
                        did_you_mean(mode, MODES, 0.5) + "modes: " + ", ".join(MODES))
                return None, f"vehicle {vehicle} has no rate card for {mode}", (
                    f"its cards are for {', '.join(cards)}; add a {vehicle} {mode} row on the Rates "
                    f"sheet, or change the key")
            guess = did_you_mean(vehicle, vehicles)
        else:
            guess = did_you_mean(key, vehicles)
        return None, f"key '{_short(key)}' is not a vehicle on the Rates sheet", (
            guess + "use a vehicle (all its cards) or vehicle/mode, e.g. "
            + (f"{vehicles[0]}/{model.rates[0].mode}" if vehicles else "artic_40t/road")
            + ", or leave key blank for every card")
    id_col = ID_COLUMNS[sheet][0]
    ids = [getattr(r, id_col) for r in getattr(model, RECORDS[sheet])]
    if key in ids:
        return key, "", ""
    same_case = [i for i in ids if i.lower() == key.lower()]
    guess = f"did you mean {same_case[0]}? " if same_case else did_you_mean(key, ids)
    return None, f"key '{_short(key)}' names no row of {sheet}: it is not a {id_col} there", (
        guess + f"use a {id_col} from the {sheet} sheet, or leave key blank to change every row")


# ---------------------------------------------------------------------------------------------
# the change cell


def _parse_form(v) -> tuple[str | None, object, str, str]:
    """(op, amount, message, fix) of a change cell. op None: refused.
    For "set" the amount is raw: a float, a bool, a str, or _BLANK."""
    if isinstance(v, bool):
        return "set", v, "", ""
    if isinstance(v, (int, float)):
        x = float(v)
        if not math.isfinite(x):
            return None, None, f"change is not a finite number ({v})", FORMS
        # a spreadsheet stores a typed +10% in a General cell as 0.1 and +12.5 as 12.5: a bare
        # number cannot say whether it was meant to scale, add or set, so it is never guessed
        hint = f"; +10% arrives as 0.1, so {_num(x)} may be +{_num(x * 100)}%" if abs(x) < 1 else ""
        return None, None, (f"change is the number {_num(x)}, not a change: a spreadsheet stores a "
                            f"typed +12.5 as 12.5{hint}"), (
            "format the change cell as Text (Format > Cells > Text), then type the change again: "
            f"+10% or -5% (relative), +12.5 or -3 (added), or ={_num(x)} to set it")
    if isinstance(v, (_dt.datetime, _dt.date, _dt.time, _dt.timedelta)):
        return None, None, f"change holds a date or time ({v}), not a change", (
            "format the change cell as Text, then " + FORMS)
    s = str(v).strip().replace("\u2212", "-")
    if len(s) > MAX_CHANGE_CHARS:
        return None, None, f"change is {len(s):,} characters long", FORMS
    m = _RELATIVE.fullmatch(s)
    if m:
        amount = float(m.group(2))
        if not math.isfinite(amount):
            return None, None, f"change '{_short(s)}' is too large", FORMS
        amount = -amount if m.group(1) == "-" else amount
        return ("pct" if m.group(3) else "add"), amount, "", ""
    if s.startswith("="):
        rest = s[1:].strip()
        return "set", (rest if rest else _BLANK), "", ""
    if _PLAIN.fullmatch(s):
        x = float(s.replace(" ", ""))
        if not math.isfinite(x):
            return None, None, f"change '{_short(s)}' is too large", FORMS
        return "set", x, "", ""
    if re.fullmatch(rf"{_NUMBER}\s*%", s):
        return None, None, f"change '{s}' has no sign", (
            f"type +{s} to raise by that percentage or -{s} to lower; or " + FORMS)
    if re.fullmatch(r"[-+=]?\s*\d+(?:[.,]\d+)*\s*%?", s) and "," in s:
        return None, None, f"change '{_short(s)}' has a decimal comma", (
            f"type it with a decimal point: {s.replace(',', '.')}")
    return None, None, f"change '{_short(s)}' is not a change the tool understands", FORMS


def _set_value(target: _Target, raw, model: Model) -> tuple[object, str, str]:
    """(value, message, fix): the raw set value converted for the target; message when not."""
    name = target.name
    if raw is _BLANK:
        if target.required:
            return None, f"{name} is required and cannot be made blank", (
                "set a number, e.g. =1.85" if target.kind == "number" else "set a value: = and the value")
        return target.blank, "", ""
    text = "yes" if raw is True else "no" if raw is False else _text(raw) or ""
    if target.kind == "number":
        if isinstance(raw, bool):
            return None, f"{name} takes a number, not {text}", f"type e.g. =1.85 ({FORMS})"
        if isinstance(raw, float):
            return raw, "", ""
        t = text.replace(" ", "").replace("\u2212", "-")
        if _PLAIN.fullmatch(t) and math.isfinite(float(t)):
            return float(t), "", ""
        hint = f"type ={t.replace(',', '.')} with a decimal point" if re.fullmatch(
            r"[+-]?\d+,\d+", t) else "type a number, e.g. =1.85" + (
            f" ({target.unit})" if target.unit else "")
        return None, f"={_short(text)} is not a number; {name} takes a number", hint
    if target.kind == "yesno":
        if isinstance(raw, bool):
            return raw, "", ""
        s = text.lower()
        if s in _YES or s == "1.0":
            return True, "", ""
        if s in _NO or s == "0.0":
            return False, "", ""
        return None, f"={_short(text)} is not yes or no; {name} takes yes or no", "type =yes or =no"
    if target.kind == "choice":
        s = normalise_header(text)
        if s in target.choices:
            return s, "", ""
        if s.upper() in target.choices:  # upper-case codes (ADR tunnel categories A to E)
            return s.upper(), "", ""
        return None, f"={_short(text)} is not one of {', '.join(target.choices)} ({name})", (
            did_you_mean(s, target.choices, 0.5) + "type = and one of them, e.g. ="
            + target.choices[0])
    if isinstance(raw, bool):
        return None, f"{name} takes text, not TRUE/FALSE", "format the change cell as Text and type =..."
    if target.kind == "currency":
        s = text.upper()
        if not re.fullmatch(r"[A-Z]{3}", s):
            return None, f"currency '{_short(text)}' is not an ISO 4217 code", (
                "type a three-letter code such as =EUR, =GBP or =USD")
        return s, "", ""
    if target.kind == "date":
        try:
            return _dt.date.fromisoformat(text.strip()), "", ""
        except ValueError:
            return None, f"={_short(text)} is not a date; {name} takes a date", (
                "type the date as =YYYY-MM-DD, e.g. =2026-12-08")
    if target.kind == "depot":
        ids = [d.depot_id for d in model.depots]
        if text in ids:
            return text, "", ""
        return None, f"{name} '{_short(text)}' is not a depot_id on the Depots sheet", (
            did_you_mean(text, ids) + "use a depot_id from Depots")
    if target.kind == "vehicle":
        vehicles = model.vehicles()
        if text in vehicles:
            return text, "", ""
        return None, f"vehicle '{_short(text)}' has no rate card on the Rates sheet", (
            did_you_mean(text, vehicles) + "use a vehicle from Rates, or = alone to let the tool "
            "choose")
    return text, "", ""  # text


# ---------------------------------------------------------------------------------------------
# parsing


class _Row:
    """Problems of one Scenarios row, each at its cell."""

    def __init__(self, raw: RawSheet, row: int, problems: list[Problem]):
        self.raw, self.row, self.problems = raw, row, problems
        self.errors = 0

    def cell(self, column: str) -> str:
        return self.raw.cell(column, self.row)

    def add(self, severity: str, column: str, message: str, fix: str) -> None:
        self.problems.append(Problem(severity, self.raw.title, self.cell(column), message, fix))
        if severity == ERROR:
            self.errors += 1


_REPORTED = object()  # a cell already reported (formula with no result, error value)


def _cell_value(rr, column: str, p: _Row):
    """The cell's value, or _REPORTED after reporting a formula with no result or an error value."""
    if column in rr.formulas:
        p.add(ERROR, column, f"{column} is a formula with no saved result",
              "format the cell as Text and type the value itself")
        return _REPORTED
    v = rr.values.get(column)
    if isinstance(v, str) and v.strip().upper() in SPREADSHEET_ERRORS:
        hint = ("the spreadsheet took a typed =... as a formula: format the cell as Text and type it "
                "again (or start it with an apostrophe: '=no)") if column == "change" else (
            "type the value itself")
        p.add(ERROR, column, f"{column} holds the error value {v.strip()} (a formula that failed)", hint)
        return _REPORTED
    if isinstance(v, str) and not v.strip():
        return None
    return v


def _cell_text(rr, column: str, p: _Row):
    """The cell as text, None when blank, or _REPORTED."""
    v = _cell_value(rr, column, p)
    return v if v is _REPORTED else _text(v)


def parse_scenarios(raw_sheet: RawSheet | None, model: Model) -> tuple[list[Scenario], list[Problem]]:
    """Scenarios of the Scenarios sheet, checked against `model` and the contract, and the
    problems found. Each scenario is also tried on `model`, so a result out of bounds (or a
    blank number left blank) is reported here, at its change cell. Only scenarios without
    errors are returned, in order of first appearance."""
    if raw_sheet is None:
        return [], []
    title = raw_sheet.title
    problems: list[Problem] = []
    spec = SHEETS_BY_NAME[SHEET]
    missing = [c.name for c in spec.columns if c.required and c.name not in raw_sheet.columns]
    if missing:
        problems.append(Problem(ERROR, title, "1:1", "no scenario is costed: the Scenarios sheet has "
                                "no column " + ", ".join(missing),
                                "add the missing columns in row 1 (scenario, sheet, key, column, "
                                "change), or delete the sheet"))
        return [], problems
    groups: dict[str, dict] = {}
    for rr in raw_sheet.rows:
        p = _Row(raw_sheet, rr.row, problems)
        name = _cell_text(rr, "scenario", p)
        change = _parse_row(rr, p, model)
        if name is None:
            p.add(ERROR, "scenario", "scenario name is blank",
                  "type the scenario's name; rows with the same name form one scenario")
        if name is None or name is _REPORTED:
            continue
        group_key = normalise_header(name) or name
        if group_key in RESERVED_NAMES:
            p.add(ERROR, "scenario", f"scenario name '{_short(name)}' is reserved: it means the "
                  "unchanged input", "choose another name, e.g. fuel_up_12")
        g = groups.setdefault(group_key, {"name": name, "row": rr.row, "changes": [], "errors": 0})
        if name != g["name"]:
            p.add(INFO, "scenario", f"scenario '{_short(name)}' is taken as '{_short(g['name'])}' "
                  f"(row {g['row']})", "nothing to do if they are one scenario; otherwise give them "
                  "names that differ by more than case, spaces or punctuation")
        g["errors"] += p.errors
        if change is not None:
            g["changes"].append(change)
    scenarios: list[Scenario] = []
    for g in groups.values():
        scenario = Scenario(g["name"], tuple(g["changes"]), title)
        _, found = _apply(model, scenario)
        problems.extend(found)
        if g["errors"] == 0 and not any(f.severity == ERROR for f in found):
            scenarios.append(scenario)
    return scenarios, problems


def _parse_row(rr, p: _Row, model: Model) -> Change | None:
    """The row's Change, or None after reporting why not. Each cell is checked as far as the
    cells it depends on allow, so one row can show several problems at once."""
    before = p.errors
    sheet_v = _cell_text(rr, "sheet", p)
    column_v = _cell_text(rr, "column", p)
    key_v = _cell_text(rr, "key", p)
    change_v = _cell_value(rr, "change", p)

    sheet = None
    if sheet_v is None:
        p.add(ERROR, "sheet", "sheet is blank", "type the sheet to change: " + ", ".join(TARGET_SHEETS))
    elif sheet_v is not _REPORTED:
        sheet = _sheet_name(sheet_v)
        if sheet is None:
            if normalise_header(sheet_v) == normalise_header(SHEET):
                p.add(ERROR, "sheet", "a scenario cannot change the Scenarios sheet",
                      "name one of " + ", ".join(TARGET_SHEETS))
            else:
                known = {normalise_header(s): s for s in TARGET_SHEETS}
                close = closest(normalise_header(sheet_v), known)
                p.add(ERROR, "sheet", f"sheet '{_short(sheet_v)}' is not an input sheet",
                      (f"did you mean {known[close]}? " if close else "")
                      + "use one of " + ", ".join(TARGET_SHEETS))
    if key_v is _REPORTED:
        sheet = None  # cannot tell which rows

    target: _Target | None = None
    column = key = None
    if column_v is None:
        p.add(ERROR, "column", "column is blank", "type the column to change, e.g. per_km "
              "(for Settings: value)")
    elif column_v is _REPORTED:
        pass
    elif sheet == "Settings":
        column = normalise_header(column_v)
        key_name = normalise_header(key_v) if key_v is not None else None
        if column == "value":
            if key_name is None:
                p.add(ERROR, "key", "key is blank: which setting?", "type the setting name in key, "
                      "e.g. fuel_price_per_litre")
            elif key_name not in SETTINGS_BY_NAME:
                p.add(ERROR, "key", f"'{_short(key_v)}' is not a setting", did_you_mean(
                    key_name, SETTINGS_BY_NAME) + "settings: " + ", ".join(SETTINGS_BY_NAME))
            else:
                key = key_name
        elif column in SETTINGS_BY_NAME:
            if key_name is not None and key_name != column:
                p.add(ERROR, "key", f"key '{_short(key_v)}' and column {column} name different "
                      "settings", f"put the setting name in key and value in column, or leave key "
                      f"blank with {column} in column")
            else:
                key = column
        else:
            p.add(ERROR, "column", f"column '{_short(column_v)}' cannot be changed on Settings",
                  did_you_mean(column, ["value", *SETTINGS_BY_NAME]) + "use value, with the "
                  "setting name in key")
        if key is not None and key not in _SETTING_FIELDS:
            p.add(ERROR, "key" if key_v is not None else "column", f"setting {key} cannot be changed "
                  "by a scenario", "change it on the Settings sheet")
            key = None
        if key is not None:
            column = "value"
            target = _setting_target(key)
    elif sheet is not None:
        spec = SHEETS_BY_NAME[sheet]
        names = [c.name for c in spec.columns]
        column = normalise_header(column_v)
        if column not in names:
            p.add(ERROR, "column", f"'{_short(column_v)}' is not a column of {sheet}",
                  did_you_mean(column, names) + "columns: " + ", ".join(
                      n for n in names if n not in ID_COLUMNS[sheet]))
            column = None
        elif column in ID_COLUMNS[sheet]:
            p.add(ERROR, "column", f"{column} is an id column of {sheet}; other rows refer to it, so "
                  "a scenario may not change it", f"to try another {column}, add the row on the "
                  f"{sheet} sheet itself; scenarios change figures, not ids")
            column = None
        elif column not in _FIELDS[sheet]:
            p.add(ERROR, "column", f"{column} of {sheet} is not read into the model, so a scenario "
                  "cannot change it", f"change {column} on the {sheet} sheet itself")
            column = None
        else:
            target = _column_target(sheet, column)
        if key_v is not None:
            key, message, fix = _resolve_key(model, sheet, key_v)
            if key is None:
                p.add(ERROR, "key", message, fix)
                target = None

    if change_v is None:
        p.add(ERROR, "change", "change is blank", FORMS)
        return None
    if change_v is _REPORTED:
        return None
    op, amount, message, fix = _parse_form(change_v)
    if op is None:
        p.add(ERROR, "change", message, fix)
        return None
    if target is None or p.errors > before:
        return None
    if op in ("pct", "add") and target.kind != "number":
        what = "relative" if op == "pct" else "added"
        p.add(ERROR, "change", f"{change_v} is a{'n' if op == 'add' else ''} {what} change, but "
              f"{target.name} is not a number", (
                  "type = and one of " + ", ".join(target.choices) if target.choices
                  else f"type =value to set {target.name}"))
        return None
    if op == "set":
        amount, message, fix = _set_value(target, amount, model)
        if message:
            p.add(ERROR, "change", message, fix)
            return None
        if target.kind == "currency" and not is_known_currency(amount):
            p.add(WARNING, "change", f"currency {amount} is not in the tool's list; money is rounded "
                  "to 2 decimals", "check the ISO 4217 code")
    return Change(sheet, key, column, op, amount, p.cell("change"), rr.row)


# ---------------------------------------------------------------------------------------------
# applying


def apply_scenario(model: Model, scenario: Scenario) -> Model:
    """A new Model with the scenario's changes made in row order, each on the result of the
    previous. `model` and its records are not touched (records are frozen; changed ones are
    rebuilt with dataclasses.replace, unchanged ones are shared). Raises ScenarioError if a
    change cannot be made (parse_scenarios reports those first and leaves such scenarios out)."""
    new, problems = _apply(model, scenario)
    errors = [p for p in problems if p.severity == ERROR]
    if errors:
        raise ScenarioError(errors)
    return new


def _arith(op: str, old: float, amount: float) -> float:
    a, x = Decimal(repr(float(amount))), Decimal(repr(float(old)))
    return float(x * (1 + a / 100) if op == "pct" else x + a)


def _out_of_bounds(target: _Target, x: float) -> str:
    """Why x cannot stand in the column, or ""."""
    lo, hi = target.minimum, target.maximum
    if target.name == "payload_t":
        lo = MIN_PAYLOAD_T
    if not math.isfinite(x):
        return "not a finite number"
    if lo is not None and x < lo:
        return "negative" if lo == 0 else f"below the least allowed, {lo:g}"
    if hi is not None and x > hi:
        return f"above the most allowed, {hi:g}"
    if hi is None and abs(x) > MAX_PLAUSIBLE_NUMBER:
        return f"above {MAX_PLAUSIBLE_NUMBER:g}, implausibly large"
    return ""


def _type_ok(target: _Target, value) -> bool:
    if value is None:
        return not target.required
    if target.kind == "number":
        return isinstance(value, (int, float)) and not isinstance(value, bool)
    if target.kind == "yesno":
        return isinstance(value, bool)
    if target.kind == "choice":
        return value in target.choices
    if target.kind == "date":
        return isinstance(value, _dt.date)
    return isinstance(value, str)


def _apply(model: Model, scenario: Scenario) -> tuple[Model, list[Problem]]:
    title = scenario.sheet_title
    problems: list[Problem] = []
    settings = model.settings
    tables = {sheet: list(getattr(model, attr)) for sheet, attr in RECORDS.items()}
    for ch in scenario.changes:
        def report(severity: str, message: str, fix: str, ch: Change = ch) -> None:
            problems.append(Problem(severity, title, ch.cell, f"scenario {scenario.name}: {message}",
                                    fix))

        if ch.sheet == "Settings":
            settings = _apply_setting(settings, ch, report)
        elif ch.sheet in RECORDS:
            _apply_rows(model, tables[ch.sheet], ch, report)
        else:
            report(ERROR, f"sheet {ch.sheet} cannot be changed", "use one of " + ", ".join(TARGET_SHEETS))
    new = dataclasses.replace(model, settings=settings,
                              **{attr: tuple(tables[sheet]) for sheet, attr in RECORDS.items()})
    return new, problems


def _new_value(ch: Change, target: _Target, old, label: str, bad: list, blanks: list):
    """The value after the change, or _KEEP when the row is left as it is (reported)."""
    if ch.op == "set":
        new = ch.amount
        if not _type_ok(target, new):
            bad.append((label, f"={_short(new)} is not a value {target.name} takes"))
            return _KEEP
    elif ch.op in ("pct", "add"):
        if target.kind != "number" or not isinstance(ch.amount, (int, float)):
            bad.append((label, f"{target.name} is not a number"))
            return _KEEP
        if old is None:
            blanks.append(label)
            return _KEEP
        new = _arith(ch.op, old, ch.amount)
    else:
        bad.append((label, f"unknown operation {ch.op}"))
        return _KEEP
    if target.kind == "number" and new is not None:
        new = float(new)
        why = _out_of_bounds(target, new)
        if why:
            was = f"{_num(old)} -> " if old is not None else ""
            bad.append((label, f"{was}{_num(new)} is {why}"))
            return _KEEP
    return new


def _report_rows(ch: Change, target: _Target, bad: list, blanks: list, report, sheet: str) -> None:
    name = target.name
    if bad:
        if sheet == "Settings":
            what = bad[0][1]
        else:
            rows = "row" if len(bad) == 1 else f"{len(bad)} rows"
            what = f"{rows}: " + _names([f"{label} ({why})" for label, why in bad])
        report(ERROR, f"{name} {ch.form()} cannot be made: {what}",
               (f"{name} takes {_range(target)}; change the amount" if target.kind == "number"
                else "choose another value") + ("" if sheet == "Settings" else ", or name fewer rows in key"))
    if blanks:
        them = "it" if len(blanks) == 1 else "them"
        where = "" if sheet == "Settings" else f" for {_names(blanks)}"
        report(WARNING, f"{name} is blank{where}; {ch.form()} has nothing to "
               f"{'scale' if ch.op == 'pct' else 'add to'} and leaves {them} blank",
               f"to give {them} a value, set it (=number) in an earlier row of this scenario or on "
               f"the {sheet} sheet" + ("" if sheet == "Settings" else
                                       "; to change only rows with a value, name them in key"))


def _range(target: _Target) -> str:
    lo = MIN_PAYLOAD_T if target.name == "payload_t" else target.minimum
    hi = target.maximum if target.maximum is not None else MAX_PLAUSIBLE_NUMBER
    unit = f" {target.unit}" if target.unit else ""
    return f"{lo:g} to {hi:g}{unit}" if lo is not None else f"at most {hi:g}{unit}"


def _apply_setting(settings: Settings, ch: Change, report) -> Settings:
    name = ch.key
    if name not in SETTINGS_BY_NAME or name not in _SETTING_FIELDS or ch.column != "value":
        report(ERROR, f"'{_short(name)}' is not a setting (column {ch.column})",
               "name a setting in key with column value")
        return settings
    target = _setting_target(name)
    bad: list = []
    blanks: list = []
    new = _new_value(ch, target, getattr(settings, name), name, bad, blanks)
    _report_rows(ch, target, bad, blanks, report, "Settings")
    if new is _KEEP:
        return settings
    return dataclasses.replace(settings, **{name: new})


def _apply_rows(model: Model, rows: list, ch: Change, report) -> None:
    spec = SHEETS_BY_NAME[ch.sheet]
    if (ch.column not in [c.name for c in spec.columns] or ch.column in ID_COLUMNS[ch.sheet]
            or ch.column not in _FIELDS[ch.sheet]):
        report(ERROR, f"column {ch.column} of {ch.sheet} cannot be changed", "name a column of "
               f"{ch.sheet} that is not an id")
        return
    target = _column_target(ch.sheet, ch.column)
    chosen = [i for i, rec in enumerate(rows) if _selects(ch.sheet, rec, ch.key)]
    if not chosen:
        if ch.key is not None:
            report(ERROR, f"key '{_short(ch.key)}' names no row of {ch.sheet}", "use an id from "
                   f"the {ch.sheet} sheet, or leave key blank for every row")
        else:
            report(WARNING, f"the {ch.sheet} sheet has no rows, so the change does nothing",
                   f"add rows to {ch.sheet}, or delete the change")
        return
    bad: list = []
    blanks: list = []
    rated_modes = {r.mode for r in model.rates}
    unrated: list[str] = []
    for i in chosen:
        rec = rows[i]
        label = _row_label(ch.sheet, rec)
        new = _new_value(ch, target, getattr(rec, ch.column), label, bad, blanks)
        if new is _KEEP:
            continue
        changed = dataclasses.replace(rec, **{ch.column: new})
        if ch.sheet == "Lanes" and changed.from_depot == changed.to_depot:
            bad.append((label, f"the lane would go from {changed.from_depot} to itself"))
            continue
        if ch.sheet == "Lanes" and ch.column == "mode" and rated_modes and new not in rated_modes:
            unrated.append(label)
        rows[i] = changed
    _report_rows(ch, target, bad, blanks, report, ch.sheet)
    if unrated:
        report(WARNING, f"no rate card prices mode {ch.amount}, so {_names(unrated)} would never "
               "be used", f"add a Rates row for {ch.amount}, or choose a mode with a rate card")


__all__ = ["Change", "Scenario", "ScenarioError", "parse_scenarios", "apply_scenario", "FORMS",
           "RESERVED_NAMES", "TARGET_SHEETS"]
