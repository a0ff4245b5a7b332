"""Turn raw rows into the Model, with every problem tied to its sheet and cell.
Knows the rules of the trade; knows nothing of openpyxl or xlsxwriter."""

from __future__ import annotations

import datetime as _dt
import math
import re
from dataclasses import dataclass, replace

from costing.check.scenarios import apply_scenario, parse_scenarios
from costing.contract.inputs import (
    MAX_PLAUSIBLE_NUMBER,
    MIN_PAYLOAD_T,
    SETTINGS,
    SETTINGS_BY_NAME,
    SHEETS_BY_NAME,
    SPREADSHEET_ERRORS,
    TUNNEL_CODE_FORMAT,
    Column,
    closest,
    did_you_mean,
    normalise_header,
    tunnel_letter,
)
from costing.contract.rows import RawRow, RawSheet, RawWorkbook
from costing.geo import great_circle_km
from costing.model import (
    ERROR,
    INFO,
    RATE_CARD_MONEY_FIELDS,
    WARNING,
    Depot,
    FuelBand,
    Lane,
    Model,
    Problem,
    RateCard,
    Settings,
    Shipment,
    Tariff,
)
from costing.money import is_known_currency

# A stated lane length this much below the straight line between its depots is flagged.
# 1 % covers the sphere-versus-ellipsoid difference (at most 0.57 %) and rounding of km.
STRAIGHT_LINE_TOLERANCE = 0.99
# Implied average speeds above these (km/h) are flagged as likely typos in hours or km.
MAX_PLAUSIBLE_SPEED = {"road": 130, "rail": 200, "sea": 60, "inland_water": 40, "air": 1000}

# Characters in a cell: Microsoft "Excel specifications and limits".
MAX_CELL_CHARS = 32_767

_MISSING = object()


class _Sheet:
    """Helper that converts one sheet's cells and records problems with their addresses."""

    def __init__(self, raw: RawSheet, problems: list[Problem]):
        self.raw = raw
        self.problems = problems
        self.spec = SHEETS_BY_NAME[raw.name]

    def problem(self, severity: str, column: str | None, row: int, message: str, fix: str):
        cell = self.raw.cell(column, row) if column else f"A{row}:{row}"
        self.problems.append(Problem(severity, self.raw.title, cell, message, fix))

    def value(self, rr: RawRow, col: Column):
        """Converted cell value, col.default when blank, or _MISSING after an error."""
        if col.name not in self.raw.columns:
            return col.default
        if col.name in rr.formulas:
            self.problem(ERROR, col.name, rr.row,
                         f"{col.name} is a formula with no saved result",
                         "open the workbook in a spreadsheet application and save it (so results "
                         "are stored), or type the value itself")
            return _MISSING
        v = rr.values.get(col.name)
        if isinstance(v, str) and v.upper() in SPREADSHEET_ERRORS:
            self.problem(ERROR, col.name, rr.row, f"{col.name} holds the error value {v} (a "
                         "formula that failed)", "correct the formula, or type the value itself")
            return _MISSING
        if isinstance(v, float) and not math.isfinite(v):
            self.problem(ERROR, col.name, rr.row, f"{col.name} is not a finite number ({v})",
                         f"type the {col.name} itself" + (f" in {col.unit}" if col.unit else ""))
            return _MISSING
        if v is None:
            if col.allow_blank:
                self.problem(WARNING, col.name, rr.row, f"{col.name} is blank",
                             f"fill in {col.name} so distances can be estimated and checked; "
                             "until then routes from this depot are found without a bound")
                return None
            if col.required:
                self.problem(ERROR, col.name, rr.row, f"{col.name} is blank",
                             f"fill in {col.name}" + (f" ({col.unit})" if col.unit else ""))
                return _MISSING
            return col.default
        if col.kind == "number":
            return self._number(rr, col, v)
        if col.kind in ("yesno",):
            return self._yes_no(rr, col, v)
        if col.kind == "choice":
            return self._choice(rr, col, v)
        if col.kind == "date":
            return self._date(rr, col, v)
        return self._text(rr, col, v)

    def _date(self, rr, col, v):
        """A date cell: a spreadsheet date, or text in ISO form (2026-12-07)."""
        if isinstance(v, _dt.datetime):
            if v.time() != _dt.time(0, 0):
                self.problem(WARNING, col.name, rr.row, f"{col.name} holds a time of day ({v:%H:%M}); "
                             "only the day is used", f"type the {col.name} as a date")
            return v.date()
        if isinstance(v, _dt.date):
            return v
        if isinstance(v, str):
            try:
                return _dt.date.fromisoformat(v.strip())
            except ValueError:
                pass
            self.problem(ERROR, col.name, rr.row, f"{col.name} holds the text '{_short(v)}', not a date",
                         "type the date as YYYY-MM-DD (e.g. 2026-12-07) in a cell formatted as Date")
            return _MISSING
        what = "TRUE/FALSE" if isinstance(v, bool) else f"the number {v}"
        self.problem(ERROR, col.name, rr.row, f"{col.name} holds {what}, not a date",
                     "format the cell as Date and type the date as YYYY-MM-DD (e.g. 2026-12-07)")
        return _MISSING

    def _number(self, rr, col, v, label: str | None = None):
        name = label or col.name  # Settings: the setting's name; its cell is in column value
        unit = f" in {col.unit}" if col.unit else ""
        if isinstance(v, bool):
            self.problem(ERROR, col.name, rr.row, f"{name} holds TRUE/FALSE, not a number",
                         f"type the {name} as a number{unit}")
            return _MISSING
        if isinstance(v, _dt.timedelta):
            hours = v.total_seconds() / 3600
            self.problem(ERROR, col.name, rr.row,
                         f"{name} holds a duration ({v}), not a number",
                         f"format the cell as Number and type the {name}{unit}"
                         + (f", here {hours:g}" if col.unit == "hours" else ""))
            return _MISSING
        if isinstance(v, (_dt.datetime, _dt.date, _dt.time)):
            self.problem(ERROR, col.name, rr.row,
                         f"{name} holds a date or time ({v}), not a number",
                         f"format the cell as Number and type the {name}{unit}")
            return _MISSING
        if isinstance(v, str):
            if v.upper() in SPREADSHEET_ERRORS:
                self.problem(ERROR, col.name, rr.row, f"{name} holds the error value {v} (a "
                             "formula that failed)", "correct the formula, or type the value itself")
                return _MISSING
            degrees = _degrees_in_text(v) if col.unit == "degrees" else None
            guess = _number_in_text(v)
            if degrees is not None:
                hint = f"type {degrees:.6g} (decimal degrees) as a number"
            elif guess is not None:
                hint = f"type {guess:g} as a number"
            else:
                hint = f"type the {name} as a number{unit}"
            self.problem(ERROR, col.name, rr.row,
                         f"{name} holds the text '{_short(v)}', not a number",
                         hint + " (no units, no thousands separators)")
            return _MISSING
        if not isinstance(v, (int, float)):
            self.problem(ERROR, col.name, rr.row, f"{name} holds '{_short(v)}', not a number",
                         f"type the {name} as a number{unit}")
            return _MISSING
        try:
            x = float(v)
        except OverflowError:  # an integer of hundreds of digits
            self.problem(ERROR, col.name, rr.row, f"{name} is far too large ({len(str(v))} digits)",
                         f"type the {name} as a number{unit}")
            return _MISSING
        if not math.isfinite(x):
            self.problem(ERROR, col.name, rr.row, f"{name} is not a finite number",
                         f"type the {name} as a number{unit}")
            return _MISSING
        if col.minimum is not None and x < col.minimum:
            what = "negative" if col.minimum == 0 else f"below {col.minimum:g}"
            self.problem(ERROR, col.name, rr.row, f"{name} is {what} ({x:g})",
                         f"enter a value of at least {col.minimum:g}{unit}")
            return _MISSING
        if col.maximum is not None and x > col.maximum:
            self.problem(ERROR, col.name, rr.row, f"{name} {x:g} is above {col.maximum:g}",
                         f"check the value; {name} takes at most {col.maximum:g}{unit}")
            return _MISSING
        if col.maximum is None and abs(x) > MAX_PLAUSIBLE_NUMBER:
            self.problem(ERROR, col.name, rr.row, f"{name} {x:g} is implausibly large",
                         f"check the value; the tool takes at most {MAX_PLAUSIBLE_NUMBER:g}{unit}")
            return _MISSING
        return x

    def _yes_no(self, rr, col, v):
        if isinstance(v, bool):
            return v
        s = str(v).strip().lower()
        if s in ("yes", "y", "true", "1", "1.0"):
            return True
        if s in ("no", "n", "false", "0", "0.0"):
            return False
        self.problem(ERROR, col.name, rr.row, f"{col.name} is '{_short(v)}', not yes or no",
                     "pick yes or no from the list")
        return _MISSING

    def _choice(self, rr, col, v):
        s = normalise_header(v)
        if s in col.choices:
            return s
        if s.upper() in col.choices:  # upper-case codes (ADR tunnel categories A to E)
            return s.upper()
        hint = did_you_mean(s, col.choices, cutoff=0.5)
        self.problem(ERROR, col.name, rr.row, f"{col.name} '{_short(v)}' is not one of "
                     + ", ".join(col.choices), f"{hint}pick a value from the list")
        return _MISSING

    def _text(self, rr, col, v):
        if isinstance(v, bool):
            self.problem(ERROR, col.name, rr.row, f"{col.name} holds TRUE/FALSE",
                         f"type the {col.name} as text")
            return _MISSING
        if isinstance(v, float) and v.is_integer():
            v = int(v)
        if isinstance(v, (_dt.datetime, _dt.date, _dt.time)):
            self.problem(ERROR, col.name, rr.row,
                         f"{col.name} holds a date or time ({v}); the cell was probably "
                         "auto-formatted",
                         "format the cell as Text and type the value again")
            return _MISSING
        s = str(v).strip()
        if col.kind in ("id", "depot", "vehicle") and len(s) > 200:
            self.problem(ERROR, col.name, rr.row, f"{col.name} is {len(s):,} characters long",
                         "use a code of at most 200 characters")
            return _MISSING
        if len(s) > MAX_CELL_CHARS:
            self.problem(WARNING, col.name, rr.row, f"{col.name} is {len(s):,} characters long; a "
                         f"cell holds at most {MAX_CELL_CHARS:,} (Microsoft 'Excel specifications "
                         "and limits'), so the costed workbook shows it cut short",
                         f"shorten the {col.name}")
        return s


def _short(v, n: int = 40) -> str:
    s = str(v)
    return s if len(s) <= n else s[: n - 1] + "…"


def _number_in_text(s: str) -> float | None:
    """What number a coordinator probably meant by '1,200 km' or ' 12.5 ': one number, with
    thousands separators or a decimal comma, and perhaps a unit or currency sign around it.
    None when the text holds no number or more than one."""
    try:
        x = float(s.strip())
        return x if math.isfinite(x) else None
    except ValueError:
        pass
    m = re.fullmatch(r"[^\d+\-]*?([+\-]?\d[\d.,' \u00a0\u202f]*)[^\d]*", s.strip())
    if not m:
        return None
    t = re.sub(r"[' \u00a0\u202f]", "", m.group(1))
    if "," in t and "." in t:
        t = t.replace(",", "") if t.rfind(".") > t.rfind(",") else t.replace(".", "").replace(",", ".")
    elif "," in t:
        parts = t.split(",")
        t = t.replace(",", "") if all(len(p) == 3 for p in parts[1:]) else t.replace(",", ".")
    try:
        return float(t)
    except ValueError:
        return None


def _degrees_in_text(s: str) -> float | None:
    """Decimal degrees from text such as 52°22'N, 52° 22' 12" N or 4°53'E (a coordinate
    copied from a map); None when the text is not in that form."""
    m = re.fullmatch(r"\s*([+\-]?\d{1,3}(?:[.,]\d+)?)\s*°\s*(?:(\d{1,2}(?:[.,]\d+)?)\s*['′]\s*)?"
                     r"(?:(\d{1,2}(?:[.,]\d+)?)\s*(?:\"|″|'')\s*)?([NSEWnsew])?\s*", s)
    if not m:
        return None
    deg, minutes, seconds, hemi = m.groups()
    x = abs(float(deg.replace(",", "."))) + float((minutes or "0").replace(",", ".")) / 60 \
        + float((seconds or "0").replace(",", ".")) / 3600
    negative = deg.startswith("-") or (hemi or "").upper() in ("S", "W")
    return -x if negative else x


def _records(sheet: _Sheet):
    """Yield (raw row, converted dict, ok) for each row. A row is not ok when a required
    column is missing from the sheet (already reported once, at the header)."""
    absent = any(c.required and not c.allow_blank and c.name not in sheet.raw.columns
                 for c in sheet.spec.columns)
    for rr in sheet.raw.rows:
        rec = {}
        ok = not absent
        for col in sheet.spec.columns:
            v = sheet.value(rr, col)
            if v is _MISSING:
                ok = False
                v = None
            rec[col.name] = v
        yield rr, rec, ok


def _settings(raw: RawSheet | None, problems: list[Problem]) -> Settings:
    values: dict[str, object] = {}
    if raw is None:
        problems.append(Problem(INFO, "Settings", "", "no Settings sheet; defaults used",
                                "add a Settings sheet (from `costing template`) to change them"))
        return Settings()
    sh = _Sheet(raw, problems)
    seen: dict[str, int] = {}
    for rr in raw.rows:
        name_v = rr.values.get("setting")
        if name_v is None:
            continue
        name = normalise_header(name_v)
        spec = SETTINGS_BY_NAME.get(name)
        if spec is None:
            close = closest(name, SETTINGS_BY_NAME)
            sh.problem(WARNING, "setting", rr.row, f"unknown setting '{_short(name_v)}' is ignored",
                       f"did you mean {close}?" if close else
                       "known settings: " + ", ".join(SETTINGS_BY_NAME))
            continue
        if name in seen:
            sh.problem(ERROR, "setting", rr.row, f"setting {name} is given twice (also row "
                       f"{seen[name]})", "delete one of the two rows")
            continue
        seen[name] = rr.row
        v = rr.values.get("value")
        if "value" in rr.formulas:
            sh.problem(ERROR, "value", rr.row, f"{name} is a formula with no saved result",
                       "type the value itself, or save the workbook in a spreadsheet application")
            continue
        if v is None:
            continue
        if spec.kind == "number":
            col = Column(name, "number", minimum=spec.minimum, maximum=spec.maximum)
            x = sh._number(rr, _as_value_col(col), v, label=name)
            if x is not _MISSING:
                values[name] = x
        elif spec.kind == "choice":
            s = normalise_header(v)
            if s in spec.choices:
                values[name] = s
            else:
                sh.problem(ERROR, "value", rr.row, f"{name} '{_short(v)}' is not one of "
                           + ", ".join(spec.choices), "pick a value from the list")
        elif name != "currency":  # text (network_file: a path) is kept as typed
            values[name] = str(v).strip() or None
        else:
            s = str(v).strip().upper()
            if name == "currency":
                if not re.fullmatch(r"[A-Z]{3}", s):
                    sh.problem(ERROR, "value", rr.row, f"currency '{_short(v)}' is not an ISO 4217 "
                               "code", "type a three-letter code such as EUR, GBP or USD")
                    continue
                if not is_known_currency(s):
                    sh.problem(WARNING, "value", rr.row, f"currency {s} is not in the tool's list; "
                               "money is rounded to 2 decimals", "check the ISO 4217 code")
            values[name] = s
    defaults = {s.name: s.default for s in SETTINGS}
    merged = {**defaults, **values}
    return Settings(**merged)


def _as_value_col(col: Column) -> Column:
    # the Settings sheet keeps every number in its 'value' column
    return Column("value", col.kind, minimum=col.minimum, maximum=col.maximum)


def _ids(sheet: _Sheet, rows, key: str, what: str):
    seen: dict[str, int] = {}
    folded: dict[str, tuple[str, int]] = {}
    out = []
    for rr, rec, ok in rows:
        k = rec.get(key)
        if k is not None:
            if k in seen:
                sheet.problem(ERROR, key, rr.row, f"duplicate {what} '{_short(k)}' (first in row "
                              f"{seen[k]})", f"give each {what} its own {key}")
                ok = False
            else:
                seen[k] = rr.row
                ok = _case_twin(sheet, rr, key, what, k, folded) and ok
        out.append((rr, rec, ok))
    return out


def _case_twin(sheet: _Sheet, rr: RawRow, key: str, what: str, k: object,
               folded: dict[str, tuple[str, int]]) -> bool:
    """An id that equals an earlier one but for upper/lower case ('D01', 'd01') is most likely a
    typo; spreadsheet lookups (MATCH, VLOOKUP, SUMIF) do not tell the two apart. Depots are an
    error (lanes and shipments naming either would silently go to different places); lanes and
    shipments a warning (each row is still costed on its own). Returns False on an error."""
    if not isinstance(k, str):
        return True
    first = folded.setdefault(k.casefold(), (k, rr.row))
    if first[0] == k:
        return True
    severity = ERROR if what == "depot" else WARNING
    sheet.problem(severity, key, rr.row, f"{what} '{_short(k)}' differs from {what} '{_short(first[0])}' "
                  f"({sheet.raw.cell(key, first[1])}) only in upper/lower case: likely a typo; they are "
                  f"two different {what}s here",
                  f"use one spelling if they are the same {what}; otherwise give them ids that differ "
                  "in more than case")
    return severity != ERROR


def _known_depots(sh: _Sheet, rr: RawRow, rec: dict, columns, depot_ix) -> bool:
    """Every depot the row names is on the Depots sheet; a problem for each that is not."""
    ok = True
    for end in columns:
        d = rec[end]
        if d is not None and d not in depot_ix:
            sh.problem(ERROR, end, rr.row, f"{end} '{_short(d)}' is not a depot_id on the Depots sheet",
                       did_you_mean(d, depot_ix) + "use a depot_id from Depots, or add the depot there")
            ok = False
    return ok


@dataclass(frozen=True)
class FileNetwork:
    """Depots and lanes read from the network file that Settings ``network_file`` names
    (``costing.network.netfile``); `sheet` and `cell` are where the setting is, for problems."""

    depots: tuple[Depot, ...]
    lanes: tuple[Lane, ...]
    sheet: str
    cell: str
    name: str  # the file's name as the setting gives it


def validate(raw: RawWorkbook, network: FileNetwork | None = None) -> Model:
    """Turn the rows of an input workbook into a Model.

    Parameters
    ----------
    raw : RawWorkbook
        What ``costing.workbook.reader.read_workbook`` returned.
    network : FileNetwork, optional
        The network file's records (``costing.pipeline.load`` reads them). The workbook's own
        depots and lanes come first, then the file's; an id in both is an error at the
        workbook's cell, a file lane naming a depot in neither an error at the setting's cell.

    Returns
    -------
    Model
        Every record that could be converted, and ``problems``: every finding with its sheet,
        cell and fix. The run may go on only when none is an ERROR (``has_errors``)."""
    problems: list[Problem] = list(raw.problems)
    settings = _settings(raw.sheets.get("Settings"), problems)
    fx = _currencies(raw, problems, settings)

    depots: list[Depot] = []
    if "Depots" in raw.sheets:
        sh = _Sheet(raw.sheets["Depots"], problems)
        for rr, rec, _ok in _ids(sh, list(_records(sh)), "depot_id", "depot"):
            lat, lon = rec["latitude"], rec["longitude"]
            if lat is not None and lon is not None and (lat, lon) == (0.0, 0.0):
                sh.problem(WARNING, "latitude", rr.row, "coordinates are 0, 0 (in the Gulf of "
                           "Guinea)", "check latitude and longitude")
            if rec["depot_id"] is None:
                continue
            if lat is None or lon is None:  # half a position is no position
                lat = lon = None
            # a depot with a bad cell is still listed (the run stops on the error anyway), so
            # lanes and shipments naming it do not report it missing as well
            depots.append(Depot(rec["depot_id"], rec["name"] or "", lat, lon,
                                rec["kind"] or "depot", rec["handling_cost"] or 0.0,
                                rec["handling_hours"] or 0.0, rr.row))
    if network is not None:
        depots += _file_records(raw, "Depots", "depot_id", "depot", depots, network.depots, network, problems)
    depot_ix = {d.depot_id: d for d in depots}
    _check_swapped_coordinates(raw, problems)

    rates: list[RateCard] = []
    # vehicles named on a Rates row, whether or not the row is valid: a shipment naming one
    # whose card has an error gets no second message (the card's own error says what to fix)
    named_on_rates: set[str] = set()
    if "Rates" in raw.sheets:
        sh = _Sheet(raw.sheets["Rates"], problems)
        seen: dict[tuple, int] = {}
        vehicle_spellings: dict[str, tuple[str, int]] = {}
        for rr, rec, ok in _records(sh):
            if rec["vehicle"] is not None:
                named_on_rates.add(rec["vehicle"])
            if rec["vehicle"] is None or rec["mode"] is None:
                continue
            key = (rec["vehicle"], rec["mode"])
            if key in seen:
                sh.problem(ERROR, "vehicle", rr.row, f"duplicate rate card for {key[0]} on "
                           f"{key[1]} (first in row {seen[key]})",
                           "keep one row per vehicle and mode")
                continue
            seen[key] = rr.row
            _case_twin(sh, rr, "vehicle", "vehicle", rec["vehicle"], vehicle_spellings)
            if rec["payload_t"] is not None and rec["payload_t"] <= 0:
                sh.problem(ERROR, "payload_t", rr.row, "payload_t is 0",
                           "enter the payload of one vehicle in tonnes (more than 0)")
                ok = False
            elif rec["payload_t"] is not None and rec["payload_t"] < MIN_PAYLOAD_T:
                sh.problem(ERROR, "payload_t", rr.row, f"payload_t {rec['payload_t']:g} t is under "
                           f"{MIN_PAYLOAD_T * 1000:g} kg; was it typed in kg?",
                           "enter the payload of one vehicle in tonnes (24 for a 24-tonne load)")
                ok = False
            fuel, factor = rec["fuel_l_per_100km"], rec["co2e_kg_per_litre"]
            if (fuel is None) != (factor is None):
                sh.problem(WARNING, "fuel_l_per_100km" if fuel is None else "co2e_kg_per_litre",
                           rr.row, "only one of fuel_l_per_100km and co2e_kg_per_litre is given; "
                           "emissions for this card use the mode's default intensity instead",
                           "fill in both, or neither")
            elif fuel == 0 or factor == 0:
                sh.problem(WARNING, "fuel_l_per_100km" if fuel == 0 else "co2e_kg_per_litre", rr.row,
                           f"{rec['vehicle']} on {rec['mode']} is entered as emitting nothing (0), so its "
                           "CO2e is reported as 0 and the emissions objective treats it as free",
                           "for an electric vehicle enter its energy's emission factor; otherwise "
                           "enter the fuel figures, or leave both blank to use the default intensity")
            empty = rec["fuel_empty_l_per_100km"]
            if empty is not None and fuel is not None and empty > fuel:
                sh.problem(WARNING, "fuel_empty_l_per_100km", rr.row,
                           f"fuel use empty ({empty:g} l/100 km) is above fuel use laden "
                           f"({fuel:g} l/100 km): emissions would fall as the load grows",
                           "check the two figures: fuel_l_per_100km is the fully laden one")
            elif empty is not None and fuel is None:
                sh.problem(WARNING, "fuel_empty_l_per_100km", rr.row,
                           "fuel_empty_l_per_100km is given without fuel_l_per_100km, so it is not used",
                           "fill in fuel_l_per_100km (fully laden) too, or clear this cell")
            cur = _row_currency(sh, rr, rec, settings, fx, "Rates")
            ok = ok and cur is not _MISSING
            if ok:
                card = RateCard(rec["vehicle"], rec["mode"], rec["per_km"], rec["per_hour"],
                                rec["payload_t"], rec["per_trip"] or 0.0, fuel, factor,
                                rec["min_charge"] or 0.0, rr.row,
                                fuel_included_at=rec["fuel_included_at"],
                                tare_t=rec["tare_t"] or 0.0,
                                pallet_places=rec["pallet_places"] or None,
                                volume_m3=rec["volume_m3"] or None,
                                fuel_empty_l_per_100km=rec["fuel_empty_l_per_100km"],
                                wtw_co2e_kg_per_litre=rec["wtw_co2e_kg_per_litre"],
                                toll_class=rec["toll_class"])
                rates.append(_in_run_currency(card, cur, fx))
    vehicles = {r.vehicle for r in rates}
    rated_modes = {r.mode for r in rates}

    lanes: list[Lane] = []
    if "Lanes" in raw.sheets:
        sh = _Sheet(raw.sheets["Lanes"], problems)
        for rr, rec, ok in _ids(sh, list(_records(sh)), "lane_id", "lane"):
            ok = _known_depots(sh, rr, rec, ("from_depot", "to_depot"), depot_ix) and ok
            if rec["from_depot"] is not None and rec["from_depot"] == rec["to_depot"]:
                sh.problem(ERROR, "to_depot", rr.row, f"lane goes from {rec['from_depot']} to "
                           "itself", "correct from_depot or to_depot, or delete the row")
                ok = False
            if not ok:
                continue
            a, b = depot_ix[rec["from_depot"]], depot_ix[rec["to_depot"]]
            gc = None
            if None not in (a.latitude, a.longitude, b.latitude, b.longitude):
                gc = great_circle_km(a.latitude, a.longitude, b.latitude, b.longitude)
            km, hours = rec["distance_km"], rec["drive_hours"]
            if km is None and gc is None:
                sh.problem(ERROR, "distance_km", rr.row, "distance_km is blank and the depots "
                           "have no coordinates to estimate it from",
                           "fill in distance_km, or the coordinates of both depots")
                continue
            if km is not None and gc is not None and km < gc * STRAIGHT_LINE_TOLERANCE:
                swapped = _swapped_depot(a, b, km)
                sh.problem(WARNING, "distance_km", rr.row,
                           f"lane is {km:g} km but its depots are {gc:.1f} km apart in a straight "
                           "line; likely a typo in the km or in a depot's coordinates",
                           f"check distance_km and the coordinates of {a.depot_id} and "
                           f"{b.depot_id}" + (f"; the latitude and longitude of {swapped.depot_id} "
                                              f"(Depots row {swapped.row}) look swapped"
                                              if swapped else ""))
            if km is not None and km > 0 and hours is not None:
                speed_cap = MAX_PLAUSIBLE_SPEED.get(rec["mode"], 1000)
                if hours == 0:
                    sh.problem(WARNING, "drive_hours", rr.row, "drive_hours is 0 for a lane of "
                               f"{km:g} km", "enter the hours, or leave blank to estimate them")
                elif km / hours > speed_cap:
                    sh.problem(WARNING, "drive_hours", rr.row, f"{km:g} km in {hours:g} h is "
                               f"{km / hours:.0f} km/h, fast for {rec['mode']}",
                               "check distance_km and drive_hours")
            if rec["mode"] not in rated_modes and rates:
                sh.problem(WARNING, "mode", rr.row, f"no rate card prices mode {rec['mode']}; "
                           "the lane is never used", f"add a Rates row for {rec['mode']}")
            lanes.append(Lane(rec["lane_id"], a.depot_id, b.depot_id, rec["mode"], km, hours,
                              rec["toll"] or 0.0, rec["fixed_cost"] or 0.0,
                              bool(rec["two_way"]), rec["max_weight_t"],
                              bool(rec["hazmat_allowed"]), bool(rec["open"]), rr.row,
                              toll_medium=rec["toll_medium"], toll_light=rec["toll_light"],
                              tunnel_category=rec["tunnel_category"]))

    if network is not None:
        lanes += _file_records(raw, "Lanes", "lane_id", "lane", lanes, network.lanes, network, problems)
        _file_lane_ends(network, depot_ix, problems)

    shipments: list[Shipment] = []
    depot_modes: dict[str, set[str]] = {}  # modes of the open lanes at each depot
    for ln in lanes:
        if ln.open:
            for d in (ln.from_depot, ln.to_depot):
                depot_modes.setdefault(d, set()).add(ln.mode)
    if "Shipments" in raw.sheets:
        sh = _Sheet(raw.sheets["Shipments"], problems)
        for rr, rec, ok in _ids(sh, list(_records(sh)), "shipment_id", "shipment"):
            ok = _known_depots(sh, rr, rec, ("origin", "destination"), depot_ix) and ok
            v = rec["vehicle"]
            if v is not None and v not in vehicles and v in named_on_rates:
                ok = False  # its rate card has an error of its own, reported on Rates
            elif v is not None and v not in vehicles:
                sh.problem(ERROR, "vehicle", rr.row, f"vehicle '{_short(v)}' has no rate card on "
                           "the Rates sheet", did_you_mean(v, vehicles) +
                           "use a vehicle from Rates, or leave blank to let the tool choose")
                ok = False
            if rec["weight_t"] == 0:
                sh.problem(WARNING, "weight_t", rr.row, "weight_t is 0; costed as one vehicle",
                           "enter the weight in tonnes")
            code = rec["tunnel_code"]
            try:
                letter = tunnel_letter(code)
            except ValueError:
                sh.problem(ERROR, "tunnel_code", rr.row, f"tunnel_code '{_short(str(code))}' is not an "
                           "ADR tunnel restriction code",
                           f"enter {TUNNEL_CODE_FORMAT} (ADR Table A, column 15), or leave blank")
                ok = False
                letter = None
            if letter is not None and not rec["hazmat"] and rr.values.get("hazmat") is not None:
                sh.problem(WARNING, "hazmat", rr.row, f"hazmat is no but tunnel_code is {code}: a "
                           "tunnel code is only given for dangerous goods, so it is costed as "
                           "dangerous goods", "set hazmat to yes, or clear tunnel_code")
            ready, due = rec["ready_date"], rec["due_date"]
            if ready is not None and due is not None and due < ready:
                sh.problem(ERROR, "due_date", rr.row, f"due_date {due} is before ready_date {ready}",
                           "correct the due_date or the ready_date")
                ok = False
            if ok:
                shipments.append(Shipment(rec["shipment_id"], rec["origin"], rec["destination"],
                                          rec["weight_t"], v, rec["objective"],
                                          bool(rec["hazmat"]) or letter is not None,
                                          rec["customer"] or "", rr.row,
                                          ready, due, rec["pallets"], rec["volume_m3"],
                                          loading_metres=rec["loading_metres"],
                                          quoted_price=rec["quoted_price"], invoiced=rec["invoiced"],
                                          tunnel_code=str(code).strip() if letter is not None else None))
                _split_warning(sh, rr.row, rec, [r for r in rates if v is None or r.vehicle == v],
                               depot_modes)

    if "Rates" in raw.sheets and not rates and raw.sheets["Rates"].rows == []:
        problems.append(Problem(ERROR, raw.sheets["Rates"].title, "A2", "no rate cards",
                                "add at least one row: vehicle, mode, per_km, per_hour, payload_t"))
    if "Shipments" in raw.sheets and not raw.sheets["Shipments"].rows:
        problems.append(Problem(WARNING, raw.sheets["Shipments"].title, "A2", "no shipments to cost",
                                "add shipments from row 2"))
    zones = _zones(raw, problems, depot_ix)
    tariffs = _tariffs(raw, problems, depot_ix, zones, settings, fx)
    fuel_bands = _fuel_bands(raw, problems, tariffs, settings)
    layout = {name: (sh.title, sh.letters()) for name, sh in raw.sheets.items()}
    problems += fuel_rebate_problems(settings, rates, layout)
    model = Model(settings, tuple(depots), tuple(lanes), tuple(rates), tuple(shipments),
                  tuple(problems), layout, tariffs=tuple(tariffs), zones=zones, currencies=fx,
                  fuel_bands=tuple(fuel_bands))
    scenarios, more = parse_scenarios(raw.sheets.get("Scenarios"), model)
    for sc in scenarios:  # the network file is read before any scenario: it cannot change with one
        for ch in sc.changes:
            if ch.sheet == "Settings" and ch.key == "network_file":
                more.append(Problem(ERROR, sc.sheet_title, ch.cell, f"scenario {sc.name}: network_file "
                                    "cannot be changed by a scenario", "change the lanes of the file by "
                                    "lane_id in a scenario, or cost the other network in a run of its own"))
    for sc in scenarios:  # a scenario's fuel price or rates may create a rebate larger than per_km
        changed = apply_scenario(model, sc)
        for p in fuel_rebate_problems(changed.settings, changed.rates, layout):
            more.append(replace(p, message=f"in scenario {sc.name}: {p.message}"))
    return replace(model, problems=tuple(problems) + tuple(more), scenarios=tuple(scenarios))


def _zones(raw: RawWorkbook, problems: list[Problem], depot_ix: dict) -> dict[str, str]:
    """depot_id -> zone from the optional Zones sheet; a depot listed twice or unknown is an error."""
    zones: dict[str, str] = {}
    if "Zones" not in raw.sheets:
        return zones
    sh = _Sheet(raw.sheets["Zones"], problems)
    first: dict[str, int] = {}
    for rr, rec, ok in _records(sh):
        ok = _known_depots(sh, rr, rec, ("depot_id",), depot_ix) and ok
        d = rec["depot_id"]
        if d is not None and d in first:
            sh.problem(ERROR, "depot_id", rr.row, f"depot {d} is given a zone twice (first in row "
                       f"{first[d]})", "keep one row per depot")
            continue
        if ok and d is not None:
            first[d] = rr.row
            zones[d] = rec["zone"]
    return zones


def _tariffs(raw: RawWorkbook, problems: list[Problem], depot_ix: dict,
             zones: dict[str, str], settings: Settings | None = None,
             fx: dict[str, float] | None = None) -> list[Tariff]:
    """Tariff rows of the optional Tariffs sheet, checked: a known zone at each end, min_kg below
    max_kg, valid_from not after valid_to, a well-formed currency, and no two rows of one carrier
    and zone pair whose bands and validity overlap (the price would be ambiguous)."""
    out: list[Tariff] = []
    if "Tariffs" not in raw.sheets:
        return out
    sh = _Sheet(raw.sheets["Tariffs"], problems)
    known = set(zones.values()) | {d for d in depot_ix if d not in zones}
    for rr, rec, ok in _records(sh):
        for end in ("from_zone", "to_zone"):
            z = rec[end]
            if z is not None and z not in known:
                hint = did_you_mean(z, known)
                if z in depot_ix:
                    hint = f"depot {z} is in zone {zones[z]} (Zones sheet): use the zone; "
                sh.problem(ERROR, end, rr.row, f"{end} '{_short(z)}' is neither a zone on the Zones sheet "
                           "nor a depot_id without a zone", hint + "use a zone from Zones or a depot_id")
                ok = False
        lo, hi = rec["min_kg"], rec["max_kg"]
        if lo is not None and hi is not None and hi <= lo:
            sh.problem(ERROR, "max_kg", rr.row, f"max_kg {hi:g} is not above min_kg {lo:g}: the band "
                       "holds no weight",
                       "make max_kg larger than min_kg, or leave it blank for no upper end")
            ok = False
        start, end_day = rec["valid_from"], rec["valid_to"]
        if start is not None and end_day is not None and end_day < start:
            sh.problem(ERROR, "valid_to", rr.row, f"valid_to {end_day} is before valid_from {start}",
                       "correct the dates")
            ok = False
        cur = _row_currency(sh, rr, rec, settings or Settings(), fx or {}, "Tariffs")
        if cur is _MISSING:
            ok = False
            cur = None
        step = rec["weight_step_kg"]
        if not ok:
            continue
        t = Tariff(rec["carrier"], rec["from_zone"], rec["to_zone"], lo, hi, rec["price_per_100kg"],
                   rec["min_charge"] or 0.0, cur, rec["price_per_consignment"] or 0.0, start, end_day,
                   rec["price_per_pallet"] or 0.0, step or None, bool(rec["hazmat_allowed"]), rr.row)
        for other in out:
            if (other.carrier, other.from_zone, other.to_zone) == (t.carrier, t.from_zone, t.to_zone) \
                    and _overlap(other.min_kg, other.max_kg, t.min_kg, t.max_kg) \
                    and _days_overlap(other, t):
                sh.problem(ERROR, "min_kg", rr.row, f"the band {t.min_kg:g} to "
                           f"{'no limit' if t.max_kg is None else f'{t.max_kg:g}'} kg of {t.carrier} from "
                           f"{t.from_zone} to {t.to_zone} overlaps row {other.row} "
                           f"({sh.raw.cell('min_kg', other.row)}): two prices for one weight",
                           "make the bands meet without overlapping (the next min_kg = this max_kg), "
                           "or give the rows different valid_from / valid_to dates")
                break
        else:
            out.append(t)
    return out


def _fuel_bands(raw: RawWorkbook, problems: list[Problem], tariffs: list[Tariff],
                settings: Settings) -> list[FuelBand]:
    """Bands of the optional Fuel surcharges sheet, checked: fuel_price_to above fuel_price_from, no
    two bands of one carrier overlapping (an error); a carrier with no tariff, or whose bands do
    not hold the Settings fuel price (no surcharge then), a warning."""
    out: list[FuelBand] = []
    if "Fuel surcharges" not in raw.sheets:
        return out
    sh = _Sheet(raw.sheets["Fuel surcharges"], problems)
    carriers = {t.carrier for t in tariffs}
    for rr, rec, ok in _records(sh):
        lo, hi = rec["fuel_price_from"], rec["fuel_price_to"]
        if lo is not None and hi is not None and hi <= lo:
            sh.problem(ERROR, "fuel_price_to", rr.row, f"fuel_price_to {hi:g} is not above fuel_price_from "
                       f"{lo:g}", "make fuel_price_to larger, or leave it blank for no upper end")
            ok = False
        if not ok:
            continue
        band = FuelBand(rec["carrier"], lo, hi, rec["surcharge_pct"], rr.row)
        clash = next((b for b in out if b.carrier == band.carrier
                      and _overlap(b.fuel_price_from, b.fuel_price_to, lo, hi)), None)
        if clash is not None:
            sh.problem(ERROR, "fuel_price_from", rr.row, f"the fuel band of {band.carrier} overlaps row "
                       f"{clash.row}: two surcharges for one fuel price",
                       "make the bands meet without overlapping (the next fuel_price_from = this "
                       "fuel_price_to)")
            continue
        if band.carrier not in carriers:
            sh.problem(WARNING, "carrier", rr.row, f"carrier '{_short(band.carrier)}' has no Tariffs row; "
                       "the band is not used", did_you_mean(band.carrier, carriers) +
                       "use a carrier name from the Tariffs sheet")
        out.append(band)
    price = settings.fuel_price_per_litre
    for carrier in dict.fromkeys(b.carrier for b in out):
        bands = [b for b in out if b.carrier == carrier]
        if price is None or not any(_overlap(b.fuel_price_from, b.fuel_price_to, price, price + 1e-9)
                                    for b in bands):
            sh.problem(WARNING, "fuel_price_from", bands[0].row,
                       f"no fuel band of {carrier} holds the fuel price "
                       f"{'(blank)' if price is None else f'{price:g}'}: no fuel surcharge for {carrier}",
                       "set Settings fuel_price_per_litre, or add a band that holds it")
    return out


def _currencies(raw: RawWorkbook, problems: list[Problem], settings: Settings) -> dict[str, float]:
    """ISO 4217 code -> units of the run's currency per unit, from the optional Currencies sheet.
    A malformed code, a rate of 0, a currency given twice, or the run's own currency at a rate
    other than 1 is an error."""
    fx: dict[str, float] = {}
    if "Currencies" not in raw.sheets:
        return fx
    sh = _Sheet(raw.sheets["Currencies"], problems)
    first: dict[str, int] = {}
    for rr, rec, ok in _records(sh):
        code = _code(sh, rr, rec["currency"])
        if code is _MISSING or not ok:
            continue
        rate = rec["rate"]
        if rate == 0:
            sh.problem(ERROR, "rate", rr.row, f"the rate of {code} is 0",
                       f"type how many {settings.currency} one {code} is worth")
            continue
        if code == settings.currency and rate != 1:
            sh.problem(ERROR, "rate", rr.row, f"{code} is the run's currency (Settings) but its rate is "
                       f"{rate:g}, not 1", "delete the row, or type 1")
            continue
        if code in first:
            sh.problem(ERROR, "currency", rr.row, f"{code} is given twice (first in row {first[code]})",
                       "keep one rate per currency")
            continue
        first[code] = rr.row
        fx[code] = rate
    return fx


def _code(sh: _Sheet, rr: RawRow, value):
    """An ISO 4217 code from a cell (upper-cased), None when blank, or _MISSING after an error."""
    if value is None:
        return None
    code = value.strip().upper()
    if not re.fullmatch(r"[A-Z]{3}", code):
        sh.problem(ERROR, "currency", rr.row, f"currency '{_short(value)}' is not an ISO 4217 code",
                   "type a three-letter code such as EUR, GBP or USD")
        return _MISSING
    if not is_known_currency(code):
        sh.problem(WARNING, "currency", rr.row, f"currency {code} is not in the tool's list; its "
                   "amounts are rounded to 2 decimals", "check the ISO 4217 code")
    return code


def _row_currency(sh: _Sheet, rr: RawRow, rec: dict, settings: Settings, fx: dict[str, float], what: str):
    """The currency of a Rates or Tariffs row: None for the run's own (blank or the same code),
    the code when the Currencies sheet gives its rate, _MISSING after an error (a missing rate is
    an error naming the cell)."""
    code = _code(sh, rr, rec.get("currency"))
    if code is _MISSING or code is None or code == settings.currency:
        return None if code == settings.currency else code
    if code not in fx:
        sh.problem(ERROR, "currency", rr.row, f"no exchange rate for {code}: this {what} row is in {code} "
                   f"but the run reports in {settings.currency}",
                   f"add a Currencies row: currency {code}, rate = {settings.currency} per one {code}")
        return _MISSING
    return code


def _in_run_currency(card: RateCard, code: str | None, fx: dict[str, float]) -> RateCard:
    """A rate card given in currency `code`, its money fields (per_km, per_hour, per_trip,
    min_charge, fuel_included_at) converted into the run's currency at the Currencies rate
    (unrounded: they are rates; the amounts computed from them are rounded)."""
    if code is None:
        return card
    rate = fx[code]
    given = tuple((name, getattr(card, name)) for name in RATE_CARD_MONEY_FIELDS
                  if getattr(card, name) is not None)
    return replace(card, given=given, per_km=card.per_km * rate, per_hour=card.per_hour * rate,
                   per_trip=card.per_trip * rate, min_charge=card.min_charge * rate,
                   fuel_included_at=None if card.fuel_included_at is None else card.fuel_included_at * rate,
                   currency=code, fx_rate=rate)


def _overlap(lo1: float, hi1: float | None, lo2: float, hi2: float | None) -> bool:
    """Whether [lo1, hi1) and [lo2, hi2) share a weight (None: no upper end)."""
    return (hi2 is None or lo1 < hi2) and (hi1 is None or lo2 < hi1)


def _days_overlap(a: Tariff, b: Tariff) -> bool:
    """Whether two tariff rows are valid on a common day (blank ends open)."""
    lo = max((d for d in (a.valid_from, b.valid_from) if d is not None), default=None)
    hi = min((d for d in (a.valid_to, b.valid_to) if d is not None), default=None)
    return lo is None or hi is None or lo <= hi


def _file_records(raw: RawWorkbook, sheet: str, key: str, what: str, own: list, extra, network: FileNetwork,
                  problems: list[Problem]) -> list:
    """The network file's records to add after the workbook's `own`; an id in both is an error at
    the workbook's cell."""
    ids = {getattr(r, key) for r in extra}
    for r in own:
        k = getattr(r, key)
        if k in ids:
            sh = raw.sheets[sheet]
            problems.append(Problem(ERROR, sh.title, sh.cell(key, r.row), f"{what} '{_short(k)}' is also "
                                    f"in the network file {network.name} ({network.sheet}!{network.cell})",
                                    f"give the {what} another {key}, or delete the row if it is the file's"))
    return list(extra)


def _file_lane_ends(network: FileNetwork, depot_ix: dict, problems: list[Problem]) -> None:
    """Every depot a file lane names is in the file or on the Depots sheet; one error if not."""
    missing = [(ln.lane_id, d) for ln in network.lanes for d in (ln.from_depot, ln.to_depot)
               if d not in depot_ix]
    if missing:
        lane, depot = missing[0]
        more = f" ({len(missing):,} lane ends in all)" if len(missing) > 1 else ""
        problems.append(Problem(ERROR, network.sheet, network.cell, f"lane {lane} of the network file "
                                f"{network.name} names depot '{_short(depot)}', which is neither in the file "
                                f"nor on the Depots sheet{more}",
                                "import the network again into this workbook (costing import-network "
                                "... --compact), or add the depot to the Depots sheet"))


def _split_warning(sh, row: int, rec: dict, cards, depot_modes: dict[str, set[str]]) -> None:
    """A shipment heavier than the largest payload of the cards it may use at its origin or at
    its destination (cards of the modes of the open lanes there) is split over several vehicles:
    said here, before routing, so `check` and `run` report the same. Worded as the router words
    it for the card it splits on (the same message is listed once)."""
    weight = rec["weight_t"]
    if weight is None:
        return
    best = None
    for end in (rec["origin"], rec["destination"]):
        usable = [c for c in cards if c.payload_t and c.payload_t > 0 and c.mode in depot_modes.get(end, ())]
        if usable:
            big = max(usable, key=lambda c: c.payload_t)
            if best is None or big.payload_t < best.payload_t:
                best = big
    if best is not None and weight > best.payload_t:
        n = math.ceil(weight / best.payload_t - 1e-9)
        sh.problem(WARNING, "weight_t", row, f"shipment {rec['shipment_id']}: {weight:g} t is more than one "
                   f"{best.vehicle} carries ({best.payload_t:g} t): split over {n} vehicles",
                   "check the weight; otherwise nothing to do: each vehicle is costed")


def _swapped_depot(a: Depot, b: Depot, km: float) -> Depot | None:
    """The one depot of a lane whose swapped latitude and longitude would make the lane's
    stated km agree with the straight line, if exactly one does."""
    fits = []
    for d, other in ((a, b), (b, a)):
        if abs(d.longitude) > 90 or d.latitude == d.longitude:
            continue
        gc = great_circle_km(d.longitude, d.latitude, other.latitude, other.longitude)
        if gc * STRAIGHT_LINE_TOLERANCE <= km <= gc * 3:
            fits.append(d)
    return fits[0] if len(fits) == 1 else None


def _check_swapped_coordinates(raw: RawWorkbook, problems: list[Problem]) -> None:
    """A latitude outside +-90 next to a longitude inside it is almost always a swap."""
    if "Depots" not in raw.sheets:
        return
    sheet = raw.sheets["Depots"]
    for p in list(problems):
        if p.sheet == sheet.title and "latitude" in p.message and "above" in p.message:
            problems.append(Problem(INFO, p.sheet, p.cell, "a latitude beyond 90 degrees is often "
                                    "a latitude/longitude swap", "check whether the two columns "
                                    "were swapped"))
            break


def has_errors(problems) -> bool:
    """Whether any of `problems` is an ERROR (the run stops; nothing is written)."""
    return any(p.severity == ERROR for p in problems)


def fuel_rebate_problems(settings: Settings, rates, layout: dict) -> list[Problem]:
    """A fuel price below a card's fuel_included_at gives a rebate per km; one larger than
    per_km would make driving pay, which no rate means (and the route search needs lane costs
    of zero or more). Checked again after each scenario's changes."""
    out = []
    price = settings.fuel_price_per_litre
    if price is None:
        return out
    title, letters = layout.get("Rates", ("Rates", {}))
    for r in rates:
        if r.fuel_included_at is None or r.fuel_l_per_100km is None:
            continue
        per_km = r.per_km + r.fuel_l_per_100km / 100 * (price - r.fuel_included_at)
        if per_km < 0:
            cell = f"{letters.get('fuel_included_at', '')}{r.row}" if r.row else ""
            out.append(Problem(ERROR, title, cell,
                               f"at a fuel price of {price:g} the fuel rebate of {r.vehicle} on {r.mode} "
                               f"({r.fuel_l_per_100km / 100 * (r.fuel_included_at - price):.4g} per km) is "
                               f"more than its per_km {r.per_km:g}: driving would earn money",
                               "check fuel_included_at, fuel_l_per_100km and the fuel_price_per_litre "
                               "setting"))
    return out
