"""Write the costed workbook: Summary, Legs, Problems, Run. Every audited figure is a live
formula with its value cached; every string from the input is written as text.
Knows xlsxwriter; knows nothing of the search."""

from __future__ import annotations

import datetime as _dt
import os
import re
from dataclasses import dataclass, field

import xlsxwriter
from xlsxwriter.utility import xl_col_to_name

from costing import __version__
from costing.errors import OutputLimitError
from costing.model import ERROR, INFO, WARNING, Model, Problem
from costing.money import round_money
from costing.price.cost import ROUTED, CostedShipment

MAX_ROWS = 1_048_576
MAX_CELL_TEXT = 32_767

CAUTION = ("Planning estimate. Driving-time rules and emission factors used here are planning "
           "figures, not legal or compliance advice; defer to local regulation and licensed practice.")


@dataclass
class RunInfo:
    input_name: str
    input_sha256: str
    objective_override: str | None
    created: _dt.datetime
    stats: object  # route.RunStats
    extra: dict[str, str] = field(default_factory=dict)


def run_time() -> _dt.datetime:
    """Now in UTC, or SOURCE_DATE_EPOCH when set (reproducible output)."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        return _dt.datetime.fromtimestamp(int(epoch), tz=_dt.timezone.utc).replace(tzinfo=None)
    return _dt.datetime.now(_dt.timezone.utc).replace(tzinfo=None, microsecond=0)


def reproducibility_note() -> str:
    """What differs between two runs of the same input, for whoever compares files byte for byte."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        return (f"yes: SOURCE_DATE_EPOCH={epoch.strip()} was set, so 'run at (UTC)' and the file's "
                "creation time are that moment and no stage times are recorded; the same input, "
                "settings and version give the same bytes")
    return ("no: two runs of the same input differ in 'run at (UTC)' and the file's creation time "
            "(now) and in the 'seconds: ...' rows (stage times measured on this run); every other "
            "cell is the same. For byte-identical output set SOURCE_DATE_EPOCH to a fixed time in "
            "seconds since 1970-01-01 UTC, e.g. SOURCE_DATE_EPOCH=1767225600 costing run ...")


# Output columns: (header, width, kind, value of a leg or shipment, formula or None).
# kind: text | int | km | hours | money | rate | kg | plain. A formula names other columns of
# the same row in braces ({vehicles}) and the money decimals as {d}; the writer caches the
# value next to it, computed in Python in the same order of operations.
def _basis(flag: bool) -> str:
    return "estimated" if flag else "stated"


LEG_SPEC = [
    ("shipment_id", 12, "text", lambda r, g: r.shipment.shipment_id, None),
    ("seq", 5, "int", lambda r, g: g.seq, None),
    ("lane_id", 9, "text", lambda r, g: g.use.lane.lane_id, None),
    ("from_depot", 11, "text", lambda r, g: g.use.from_depot, None),
    ("to_depot", 11, "text", lambda r, g: g.use.to_depot, None),
    ("mode", 9, "text", lambda r, g: g.use.lane.mode, None),
    ("vehicle", 12, "text", lambda r, g: g.card.vehicle, None),
    ("vehicles", 8, "int", lambda r, g: g.vehicles, None),
    ("weight_t", 9, "plain", lambda r, g: g.weight_t, None),
    ("distance_km", 11, "km", lambda r, g: g.use.km, None),
    ("km_basis", 10, "text", lambda r, g: _basis(g.use.km_estimated), None),
    ("drive_hours", 11, "hours", lambda r, g: g.use.hours, None),
    ("hours_basis", 11, "text", lambda r, g: _basis(g.use.hours_estimated), None),
    ("break_hours", 9, "hours", lambda r, g: g.break_hours, None),
    ("rest_hours", 9, "hours", lambda r, g: g.rest_hours, None),
    ("handling_hours", 10, "hours", lambda r, g: g.handling_hours, None),
    ("elapsed_hours", 10, "hours", lambda r, g: g.elapsed_hours,
     "{drive_hours}+{break_hours}+{rest_hours}+{handling_hours}"),
    ("paid_stop_hours", 10, "hours", lambda r, g: g.paid_stop_hours, None),
    ("per_km", 9, "rate", lambda r, g: g.card.per_km, None),
    ("per_hour", 9, "rate", lambda r, g: g.card.per_hour, None),
    ("toll", 9, "rate", lambda r, g: g.use.lane.toll, None),
    ("fixed_cost_rate", 10, "rate", lambda r, g: g.use.lane.fixed_cost, None),
    ("fuel_l_per_100km", 10, "plain", lambda r, g: g.card.fuel_l_per_100km, None),
    ("fuel_price", 9, "rate", lambda r, g: g.fuel_price, None),
    ("fuel_included_at", 10, "rate", lambda r, g: g.card.fuel_included_at if g.fuel_price is not None
     else None, None),
    ("handling_start_rate", 12, "rate", lambda r, g: g.start_handling_rate, None),
    ("handling_end_rate", 12, "rate", lambda r, g: g.end_handling_rate, None),
    ("per_trip", 9, "rate", lambda r, g: g.trip_rate, None),
    ("km_cost", 11, "money", lambda r, g: g.km_cost, "ROUND({vehicles}*{distance_km}*{per_km},{d})"),
    ("hour_cost", 11, "money", lambda r, g: g.hour_cost, "ROUND({vehicles}*{drive_hours}*{per_hour},{d})"),
    ("toll_cost", 10, "money", lambda r, g: g.toll_cost, "ROUND({vehicles}*{toll},{d})"),
    ("fixed_cost", 10, "money", lambda r, g: g.fixed_cost, "ROUND({vehicles}*{fixed_cost_rate},{d})"),
    ("fuel_surcharge", 11, "money", lambda r, g: g.fuel_surcharge,
     'IF(OR({fuel_price}="",{fuel_included_at}="",{fuel_l_per_100km}=""),0,'
     "ROUND({vehicles}*{distance_km}*{fuel_l_per_100km}/100*({fuel_price}-{fuel_included_at}),{d}))"),
    ("stop_cost", 10, "money", lambda r, g: g.stop_cost,
     "ROUND({vehicles}*{paid_stop_hours}*{per_hour},{d})"),
    ("handling_start_cost", 12, "money", lambda r, g: g.start_handling_cost,
     "ROUND({vehicles}*{handling_start_rate},{d})"),
    ("handling_end_cost", 12, "money", lambda r, g: g.end_handling_cost,
     "ROUND({vehicles}*{handling_end_rate},{d})"),
    ("trip_cost", 10, "money", lambda r, g: g.trip_cost, "ROUND({vehicles}*{per_trip},{d})"),
    ("leg_cost", 12, "money", lambda r, g: g.leg_cost, "ROUND(SUM({km_cost}:{trip_cost}),{d})"),
    ("co2e_kg_per_litre", 10, "plain", lambda r, g: g.card.co2e_kg_per_litre, None),
    ("co2e_basis", 15, "text", lambda r, g: g.co2e_basis, None),
    ("intensity_g_per_tkm", 11, "plain", lambda r, g: g.intensity_g_per_tkm, None),
    ("co2e_kg", 10, "kg", lambda r, g: g.co2e_kg,
     'IF({co2e_basis}="fuel",{vehicles}*{distance_km}*{fuel_l_per_100km}/100*{co2e_kg_per_litre},'
     "{weight_t}*{distance_km}*{intensity_g_per_tkm}/1000)"),
]
LEG_COLUMNS = [(name, width, kind) for name, width, kind, _v, _f in LEG_SPEC]
LEG = {name: i for i, (name, _w, _k) in enumerate(LEG_COLUMNS)}

# Summary columns: (header, width, kind). Sums over the shipment's legs are named in SUMMED.
SUMMARY_COLUMNS = [
    ("shipment_id", 12, "text"), ("status", 9, "text"), ("origin", 10, "text"),
    ("destination", 11, "text"), ("objective", 10, "text"), ("vehicle", 12, "text"),
    ("vehicles", 8, "int"), ("legs", 6, "int"), ("distance_km", 11, "km"), ("drive_hours", 11, "hours"),
    ("break_hours", 9, "hours"), ("rest_hours", 9, "hours"), ("handling_hours", 10, "hours"),
    ("elapsed_hours", 10, "hours"), ("km_cost", 11, "money"),
    ("hour_cost", 11, "money"), ("toll_cost", 10, "money"), ("fixed_cost", 10, "money"),
    ("fuel_surcharge", 11, "money"), ("stop_cost", 10, "money"),
    ("handling_cost", 11, "money"), ("trip_cost", 10, "money"), ("subtotal", 12, "money"),
    ("min_charge", 10, "money"), ("min_charge_uplift", 11, "money"), ("total_cost", 12, "money"),
    ("co2e_kg", 10, "kg"), ("weight_t", 9, "plain"), ("customer", 18, "text"),
    ("route", 40, "text"), ("note", 60, "text"),
]
SUM = {name: i for i, (name, _w, _k) in enumerate(SUMMARY_COLUMNS)}
# Summary column -> the Legs columns it adds up (rounded to the cent where money)
SUMMED = {
    "distance_km": ["distance_km"], "drive_hours": ["drive_hours"], "break_hours": ["break_hours"],
    "rest_hours": ["rest_hours"], "handling_hours": ["handling_hours"],
    "elapsed_hours": ["elapsed_hours"], "km_cost": ["km_cost"], "hour_cost": ["hour_cost"],
    "toll_cost": ["toll_cost"], "fixed_cost": ["fixed_cost"], "fuel_surcharge": ["fuel_surcharge"],
    "stop_cost": ["stop_cost"], "handling_cost": ["handling_start_cost", "handling_end_cost"],
    "trip_cost": ["trip_cost"], "subtotal": ["leg_cost"], "co2e_kg": ["co2e_kg"],
}

HEADER_NOTES = {
    "km_basis": "stated: from the Lanes sheet; estimated: straight line x detour_factor.",
    "hours_basis": "stated: from the Lanes sheet; estimated: km / default_speed_kmh.",
    "vehicles": "Vehicles needed = ceil(weight_t / payload_t of the rate card).",
    "break_hours": "Driving-time breaks on this leg (driving_rules; planning estimate).",
    "rest_hours": "Daily rests on this leg (driving_rules; planning estimate).",
    "paid_stop_hours": "Break and rest hours charged at per_hour (settings break_hours_paid, "
                       "rest_hours_paid).",
    "elapsed_hours": "drive_hours + break_hours + rest_hours + handling_hours",
    "km_cost": "ROUND(vehicles x distance_km x per_km)",
    "hour_cost": "ROUND(vehicles x drive_hours x per_hour)",
    "toll_cost": "ROUND(vehicles x toll)",
    "fixed_cost": "ROUND(vehicles x fixed cost per vehicle)",
    "fuel_surcharge": "ROUND(vehicles x km x fuel_l_per_100km / 100 x (fuel_price - fuel_included_at)); "
                      "0 without a fuel price or fuel_included_at.",
    "stop_cost": "ROUND(vehicles x paid_stop_hours x per_hour)",
    "handling_start_cost": "ROUND(vehicles x handling where a vehicle run starts: the origin, or a "
                           "terminal or port where the shipment changes vehicle).",
    "handling_end_cost": "ROUND(vehicles x handling at to_depot) where it is a hub or the destination.",
    "trip_cost": "ROUND(vehicles x per_trip) on the first leg of each vehicle run.",
    "leg_cost": "Sum of the leg's cost components.",
    "co2e_basis": "fuel: from the rate card's fuel figures; default intensity: tonnes x km x a "
                  "published g CO2e per tonne-km for the mode (see the Run sheet).",
    "co2e_kg": "fuel: vehicles x km x fuel_l_per_100km / 100 x co2e_kg_per_litre; default intensity: "
               "weight_t x km x intensity_g_per_tkm / 1000. Planning estimate.",
    "subtotal": "Sum of the shipment's leg_cost on the Legs sheet.",
    "min_charge": "Largest min_charge of the rate cards the route uses.",
    "min_charge_uplift": "MAX(0, min_charge - subtotal)",
    "total_cost": "subtotal + min_charge_uplift",
    "status": "routed; no_route (no usable lanes connect origin and destination; see note); "
              "rejected (nothing to route).",
}


# The only functions our formulas use. xlsxwriter rewrites newer ("future") function names with
# some thirty regular expressions per formula; ours need none of that, and on a million legs it
# is most of the writing time.
_OUR_FUNCTIONS = {"ROUND", "SUM", "IF", "OR", "MAX", "COUNT", "COUNTIF", "SUMIFS", "SUMPRODUCT"}
_FUNCTION_NAME = re.compile(r"([A-Za-z_][A-Za-z0-9_.]*)\(")


def _fast_formulas(ws) -> None:
    """Let formulas built only from our functions skip xlsxwriter's renaming pass (it would not
    change them); any other formula still goes through it."""
    slow = ws._prepare_formula

    def prepare(formula: str, expand_future_functions: bool = False) -> str:
        if set(_FUNCTION_NAME.findall(formula)) <= _OUR_FUNCTIONS and "[" not in formula:
            return formula[1:] if formula.startswith("=") else formula
        return slow(formula, expand_future_functions)

    ws._prepare_formula = prepare


def _text(value: object) -> str:
    s = "" if value is None else str(value)
    if len(s) > MAX_CELL_TEXT:
        s = s[: MAX_CELL_TEXT - 40] + " ... [truncated at the cell limit]"
    return s


class _Writer:
    def __init__(self, path: str, model: Model, created: _dt.datetime, streaming: bool = False):
        # streaming: rows go to disk as written (xlsxwriter's constant_memory), for large outputs;
        # every sheet here is written top to bottom once, which that mode requires
        self.wb = xlsxwriter.Workbook(path, {"strings_to_formulas": False, "strings_to_urls": False,
                                             "strings_to_numbers": False, "nan_inf_to_errors": True,
                                             "constant_memory": streaming})
        self.wb.set_properties({"title": "Costed routes", "created": created,
                                "comments": f"Written by costing {__version__}"})
        self.model = model
        self.legs_last: dict[str, int] = {}  # Legs sheet name -> its last data row (1-based)
        cur = model.settings.currency
        from costing.money import minor_unit

        self.places = minor_unit(cur)
        zeros = "." + "0" * self.places if self.places else ""
        wb = self.wb
        self.f = {
            "head": wb.add_format({"bold": True, "bg_color": "#1F4E78", "font_color": "#FFFFFF",
                                   "text_wrap": True, "valign": "top", "border": 1}),
            "text": wb.add_format({}),
            "int": wb.add_format({"num_format": "0"}),
            "km": wb.add_format({"num_format": "#,##0.0"}),
            "hours": wb.add_format({"num_format": "0.00"}),
            "money": wb.add_format({"num_format": f'#,##0{zeros}" {cur}"'}),
            "rate": wb.add_format({"num_format": "#,##0.00##"}),
            "kg": wb.add_format({"num_format": "#,##0.0"}),
            "plain": wb.add_format({"num_format": "General"}),
            "bold": wb.add_format({"bold": True}),
            "total_text": wb.add_format({"bold": True, "top": 2}),
            "wrap": wb.add_format({"text_wrap": True, "valign": "top"}),
        }
        self.f["total_money"] = wb.add_format({"bold": True, "top": 2,
                                               "num_format": f'#,##0{zeros}" {cur}"'})
        for k in ("km", "hours", "kg", "int"):
            self.f["total_" + k] = wb.add_format({"bold": True, "top": 2,
                                                  "num_format": self.f[k].num_format})
        self.f["error"] = wb.add_format({"bg_color": "#F8CBAD"})
        self.f["warning"] = wb.add_format({"bg_color": "#FFE699"})

    def round_f(self, expr: str) -> str:
        return f"ROUND({expr},{self.places})"

    def header(self, ws, columns):
        for c, (name, width, kind) in enumerate(columns):
            ws.write_string(0, c, name, self.f["head"])
            ws.set_column(c, c, max(width, len(name) + 2), self.f.get(kind) if kind != "text" else None)
            if name in HEADER_NOTES:
                ws.write_comment(0, c, HEADER_NOTES[name], {"x_scale": 2, "y_scale": 1.2})
        ws.freeze_panes(1, 0)
        ws.set_row(0, 30)
        ws.set_landscape()
        ws.set_paper(9)
        ws.fit_to_pages(1, 0)
        ws.repeat_rows(0)


def write_costed(path: str, model: Model, results: list[CostedShipment], problems: list[Problem],
                 info: RunInfo, analysis=None, map_png: bytes | None = None, scenario_runs=()) -> None:
    """Write the costed workbook. `analysis` (costing.plan.analysis.Analysis) adds the Comparison,
    Trade-offs, Lane usage and Charts sheets; `map_png` a Map sheet; `scenario_runs`
    (costing.plan.analysis.ScenarioRun) a Scenarios sheet."""
    if len(results) + 2 > MAX_ROWS:
        raise OutputLimitError(f"{len(results):,} shipments do not fit on one Summary sheet "
                               f"({MAX_ROWS:,} rows)", "cost the shipments in batches of under a million")
    n_legs = sum(len(r.legs) for r in results)
    w = _Writer(path, model, info.created, streaming=n_legs >= STREAMING_LEGS)
    summary = w.wb.add_worksheet("Summary")
    sheets = {}
    if scenario_runs:
        sheets["Scenarios"] = w.wb.add_worksheet("Scenario comparison")
    legs_sheets = [(name, w.wb.add_worksheet(name)) for name in _legs_sheet_names(results)]
    if analysis is not None:
        if analysis.alternatives:
            sheets["Comparison"] = w.wb.add_worksheet("Comparison")
        if analysis.frontiers:
            sheets["Trade-offs"] = w.wb.add_worksheet("Trade-offs")
        sheets["Lane usage"] = w.wb.add_worksheet("Lane usage")
        sheets["Charts"] = w.wb.add_worksheet("Charts")
    if map_png:
        sheets["Map"] = w.wb.add_worksheet("Map")
    problems_ws = w.wb.add_worksheet("Problems")
    run_ws = w.wb.add_worksheet("Run")
    for sheet in w.wb.worksheets():
        _fast_formulas(sheet)
    ranges, w.legs_last = _write_legs(w, legs_sheets, results)
    if len(legs_sheets) > 1:
        info.extra["Legs sheets"] = (f"{', '.join(n for n, _ws in legs_sheets)}: one sheet holds at most "
                                     f"{LEGS_SHEET_ROWS:,} legs (the spreadsheet row limit); a shipment's "
                                     "legs are never split across sheets")
    last_row = _write_summary(w, summary, results, ranges)
    frontier_rows: dict[str, tuple[int, int]] = {}
    scenario_rows = None
    if scenario_runs:
        scenario_rows = _write_scenarios(w, sheets["Scenarios"], results, scenario_runs, last_row)
    if "Comparison" in sheets:
        _write_comparison(w, sheets["Comparison"], results, analysis)
    if "Trade-offs" in sheets:
        frontier_rows = _write_tradeoffs(w, sheets["Trade-offs"], results, analysis)
    if "Lane usage" in sheets:
        _write_lane_usage(w, sheets["Lane usage"], analysis)
        _write_charts(w, sheets["Charts"], results, last_row, frontier_rows, scenario_rows)
    if map_png:
        _write_map(w, sheets["Map"], map_png)
    _write_problems(w, problems_ws, problems)
    _write_run(w, run_ws, model, results, problems, info, last_row, n_legs)
    summary.activate()
    w.wb.close()


COMPARISON_COLUMNS = [
    ("shipment_id", 12, "text"), ("objective", 10, "text"), ("chosen", 7, "text"), ("status", 9, "text"),
    ("vehicle", 14, "text"), ("legs", 5, "int"), ("total_cost", 12, "money"), ("drive_hours", 10, "hours"),
    ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"), ("co2e_kg", 10, "kg"),
    ("cost_vs_chosen", 12, "money"), ("hours_vs_chosen", 12, "hours"), ("km_vs_chosen", 11, "km"),
    ("co2e_vs_chosen", 12, "kg"), ("route", 48, "text"),
]


def _route_text(res: CostedShipment) -> str:
    if not res.legs:
        return ""
    return " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])


def _write_comparison(w: _Writer, ws, results, analysis) -> None:
    """One block of rows per shipment: its best route under each objective, with differences
    from the chosen route as formulas."""
    w.header(ws, COMPARISON_COLUMNS)
    c = {name: i for i, (name, _w, _k) in enumerate(COMPARISON_COLUMNS)}
    col = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    r = 1
    for res in results:
        alts = analysis.alternatives.get(res.shipment.shipment_id)
        if not alts:
            continue
        chosen_row = r + 1 + list(alts).index(res.objective)
        for obj, alt in alts.items():
            x = r + 1
            ws.write_string(r, c["shipment_id"], _text(res.shipment.shipment_id))
            ws.write_string(r, c["objective"], obj)
            ws.write_string(r, c["chosen"], "yes" if obj == res.objective else "")
            ws.write_string(r, c["status"], alt.status)
            ws.write_string(r, c["vehicle"], _text(alt.vehicle))
            if alt.status == ROUTED:
                ws.write_number(r, c["legs"], len(alt.legs))
                figures = {"total_cost": alt.total_cost, "drive_hours": alt.drive_hours,
                           "elapsed_hours": alt.elapsed_hours, "distance_km": alt.distance_km,
                           "co2e_kg": alt.co2e_kg}
                for name, value in figures.items():
                    ws.write_number(r, c[name], value, f[COMPARISON_COLUMNS[c[name]][2]])
                base = alts[res.objective]
                for name, src in (("cost_vs_chosen", "total_cost"), ("hours_vs_chosen", "elapsed_hours"),
                                  ("km_vs_chosen", "distance_km"), ("co2e_vs_chosen", "co2e_kg")):
                    expr = f"{col[src]}{x}-{col[src]}{chosen_row}"
                    value = figures[src] - getattr(base, src)
                    kind = COMPARISON_COLUMNS[c[name]][2]
                    if kind == "money":
                        expr, value = w.round_f(expr), round_money(value, w.places)
                    ws.write_formula(r, c[name], "=" + expr, f[kind], value)
                ws.write_string(r, c["route"], _text(_route_text(alt)))
            r += 1
    ws.autofilter(0, 0, max(r - 1, 1), len(COMPARISON_COLUMNS) - 1)


TRADEOFF_COLUMNS = [
    ("shipment_id", 12, "text"), ("option", 7, "int"), ("total_cost", 12, "money"),
    ("hours", 9, "hours"), ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"),
    ("co2e_kg", 10, "kg"), ("pay_more", 11, "money"), ("hours_sooner", 11, "hours"),
    ("read_out", 46, "text"), ("vehicle", 14, "text"), ("route", 48, "text"), ("note", 30, "text"),
]


def _write_tradeoffs(w: _Writer, ws, results, analysis) -> dict[str, tuple[int, int]]:
    """Every route of a shipment that no other beats on both cost and hours (drive + handling),
    cheapest first, with what paying more buys."""
    w.header(ws, TRADEOFF_COLUMNS)
    ws.write_comment(0, TRADEOFF_COLUMNS.index(("hours", 9, "hours")),
                     "drive_hours + handling_hours: the time the trade-off search compares.")
    c = {name: i for i, (name, _w, _k) in enumerate(TRADEOFF_COLUMNS)}
    col = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    cur = w.model.settings.currency
    rows: dict[str, tuple[int, int]] = {}
    r = 1
    for res in results:
        routes, capped = analysis.frontiers.get(res.shipment.shipment_id, ([], False))
        if not routes:
            continue
        first = r + 1
        cheapest = routes[0]
        for k, alt in enumerate(routes, start=1):
            x = r + 1
            hours = alt.drive_hours + alt.handling_hours
            ws.write_string(r, c["shipment_id"], _text(res.shipment.shipment_id))
            ws.write_number(r, c["option"], k)
            ws.write_number(r, c["total_cost"], alt.total_cost, f["money"])
            ws.write_number(r, c["hours"], hours, f["hours"])
            ws.write_number(r, c["elapsed_hours"], alt.elapsed_hours, f["hours"])
            ws.write_number(r, c["distance_km"], alt.distance_km, f["km"])
            ws.write_number(r, c["co2e_kg"], alt.co2e_kg, f["kg"])
            more = round_money(alt.total_cost - cheapest.total_cost, w.places)
            sooner = cheapest.drive_hours + cheapest.handling_hours - hours
            tc, hc = col["total_cost"], col["hours"]
            ws.write_formula(r, c["pay_more"], "=" + w.round_f(f"{tc}{x}-{tc}{first}"), f["money"], more)
            ws.write_formula(r, c["hours_sooner"], f"={hc}{first}-{hc}{x}", f["hours"], sooner)
            text = "cheapest" if k == 1 else f"pay {more:,.2f} {cur} more, arrive {sooner:.2f} h sooner"
            ws.write_string(r, c["read_out"], text)
            ws.write_string(r, c["vehicle"], _text(alt.vehicle))
            ws.write_string(r, c["route"], _text(_route_text(alt)))
            if k == len(routes) and capped:
                ws.write_string(r, c["note"], "more trade-offs exist: raise frontier_max_routes to see them")
            r += 1
        rows[res.shipment.shipment_id] = (first, r)
    ws.autofilter(0, 0, max(r - 1, 1), len(TRADEOFF_COLUMNS) - 1)
    return rows


LANE_COLUMNS = [
    ("lane_id", 9, "text"), ("from_depot", 11, "text"), ("to_depot", 11, "text"), ("mode", 9, "text"),
    ("legs", 6, "int"), ("tonnes", 10, "km"), ("vehicle_trips", 10, "int"), ("vehicle_km", 11, "km"),
    ("cost", 12, "money"), ("share_of_cost", 10, "plain"),
]


def _write_lane_usage(w: _Writer, ws, analysis) -> None:
    """Where the money goes: per lane, the legs, tonnes, vehicle trips and leg cost routed over
    it, as SUMIFS over the Legs sheet (both directions of a lane together)."""
    w.header(ws, LANE_COLUMNS)
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}

    def over_sheets(template: str) -> str:
        """template with {r(col)} placeholders, summed over every Legs sheet."""
        parts = []
        for sheet, last in w.legs_last.items():
            def rng(col, sheet=sheet, last=last):
                return f"{_sheet_ref(sheet)}!${L[col]}$2:${L[col]}${max(last, 2)}"
            parts.append(template.format(**{col: rng(col) for col in LEG}))
        return "+".join(parts)

    pct = w.wb.add_format({"num_format": "0.0%"})
    total_cost = round_money(sum(u.cost for u in analysis.lanes), w.places)
    n = len(analysis.lanes)
    for r, u in enumerate(analysis.lanes, start=1):
        x = r + 1
        ws.write_string(r, 0, _text(u.lane_id))
        ws.write_string(r, 1, _text(u.from_depot))
        ws.write_string(r, 2, _text(u.to_depot))
        ws.write_string(r, 3, u.mode)
        key = f"$A{x}"
        ws.write_formula(r, 4, "=" + over_sheets("COUNTIF({lane_id}," + key + ")"), w.f["int"], u.legs)
        ws.write_formula(r, 5, "=" + over_sheets("SUMIFS({weight_t},{lane_id}," + key + ")"), w.f["km"],
                         u.tonnes)
        ws.write_formula(r, 6, "=" + over_sheets("SUMIFS({vehicles},{lane_id}," + key + ")"), w.f["int"],
                         u.vehicle_trips)
        km_expr = over_sheets("SUMPRODUCT(({lane_id}=" + key + ")*{vehicles}*{distance_km})")
        ws.write_formula(r, 7, "=" + km_expr, w.f["km"], u.vehicle_km)
        cost_expr = over_sheets("SUMIFS({leg_cost},{lane_id}," + key + ")")
        ws.write_formula(r, 8, "=" + w.round_f(cost_expr), w.f["money"], round_money(u.cost, w.places))
        ws.write_formula(r, 9, f"=IF(SUM($I$2:$I${n + 1})=0,0,I{x}/SUM($I$2:$I${n + 1}))", pct,
                         (round_money(u.cost, w.places) / total_cost) if total_cost else 0.0)
    ws.autofilter(0, 0, max(n, 1), len(LANE_COLUMNS) - 1)
    if n:
        ws.conditional_format(1, 8, n, 8, {"type": "data_bar", "bar_color": "#9DC3E6"})


SCENARIO_COMPONENTS = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                       "handling_cost", "trip_cost", "min_charge_uplift"]


def _write_scenarios(w: _Writer, ws, base: list[CostedShipment], runs, last_row: int) -> tuple[int, int]:
    """Totals per scenario and cost component, then per-shipment totals and deltas and which
    shipments changed route. The base row refers to the Summary TOTAL row; scenario figures are
    the tool's costing of each scenario's changed inputs (their legs are not in this workbook)."""
    _page(ws)
    f = w.f
    cur = w.model.settings.currency
    ws.write_string(0, 0, "Scenario totals by cost component. The base row is the Summary TOTAL row; "
                    "each scenario row is the same shipments costed with that scenario's changes.", f["bold"])
    head = (["scenario", "routed"] + SCENARIO_COMPONENTS
            + ["total_cost", "delta_vs_base", "delta_pct", "co2e_kg", "rerouted", "changes"])
    for c, h in enumerate(head):
        ws.write_string(2, c, h, f["head"])
    ws.set_column(0, 0, 18)
    ws.set_column(1, len(head) - 2, 13)
    ws.set_column(len(head) - 1, len(head) - 1, 70)
    col = {h: i for i, h in enumerate(head)}
    letter = {h: xl_col_to_name(i) for h, i in col.items()}
    pct = w.wb.add_format({"num_format": "+0.0%;-0.0%;0.0%"})
    t = last_row + 2  # Summary TOTAL row, 1-based

    def figures(results):
        routed = [r for r in results if r.status == ROUTED]
        out = {name: round_money(sum(_component(r, name) for r in routed), w.places)
               for name in SCENARIO_COMPONENTS + ["total_cost"]}
        out["co2e_kg"] = sum(r.co2e_kg for r in routed)
        out["routed"] = len(routed)
        return out

    base_fig = figures(base)
    base_routes = {r.shipment.shipment_id: _route_text(r) for r in base}
    rows = [("base", "(the input as given)", base, base_fig)]
    for run in runs:
        rows.append((run.scenario.name, "; ".join(ch.describe() for ch in run.scenario.changes),
                     run.results, figures(run.results)))
    first = 3
    for i, (name, changes, results, fig) in enumerate(rows):
        r = first + i
        x = r + 1
        ws.write_string(r, col["scenario"], _text(name))
        ws.write_string(r, col["changes"], _text(changes))
        ws.write_number(r, col["routed"], fig["routed"])
        for comp in SCENARIO_COMPONENTS + ["total_cost", "co2e_kg"]:
            fmt = f["kg"] if comp == "co2e_kg" else f["money"]
            if i == 0:
                ws.write_formula(r, col[comp], f"=Summary!{xl_col_to_name(SUM[comp])}{t}", fmt, fig[comp])
            else:
                ws.write_number(r, col[comp], fig[comp], fmt)
        b = first + 1
        tot, dv = letter["total_cost"], letter["delta_vs_base"]
        delta = round_money(fig["total_cost"] - base_fig["total_cost"], w.places)
        ws.write_formula(r, col["delta_vs_base"], "=" + w.round_f(f"{tot}{x}-{tot}{b}"), f["money"], delta)
        ws.write_formula(r, col["delta_pct"], f"=IF({tot}{b}=0,0,{dv}{x}/{tot}{b})", pct,
                         delta / base_fig["total_cost"] if base_fig["total_cost"] else 0.0)
        rerouted = sum(1 for res in results if _route_text(res) != base_routes.get(res.shipment.shipment_id))
        ws.write_number(r, col["rerouted"], rerouted)
    last_total = first + len(rows) - 1
    # per shipment
    r0 = last_total + 3
    ws.write_string(r0 - 1, 0, f"Per shipment: total_cost ({cur}) under each scenario, the change from "
                    "base, and whether the route changed.", f["bold"])
    heads = ["shipment_id", "base_total"]
    for run in runs:
        heads += [f"{run.scenario.name}: total", f"{run.scenario.name}: delta", f"{run.scenario.name}: route"]
    for c, h in enumerate(heads):
        ws.write_string(r0, c, _text(h)[:255], f["head"])
    by_id = [{res.shipment.shipment_id: res for res in run.results} for run in runs]
    summary_row = {res.shipment.shipment_id: i + 2 for i, res in enumerate(base)}
    tc = xl_col_to_name(SUM["total_cost"])
    for i, res in enumerate(base):
        r = r0 + 1 + i
        x = r + 1
        sid = res.shipment.shipment_id
        ws.write_string(r, 0, _text(sid))
        if res.status == ROUTED:
            ws.write_formula(r, 1, f"=Summary!{tc}{summary_row[sid]}", f["money"], res.total_cost)
        else:
            ws.write_string(r, 1, res.status)
        for k, run_ids in enumerate(by_id):
            alt = run_ids.get(sid)
            c = 2 + 3 * k
            if alt is None or alt.status != ROUTED:
                ws.write_string(r, c, alt.status if alt else "")
                continue
            ws.write_number(r, c, alt.total_cost, f["money"])
            if res.status == ROUTED:
                ws.write_formula(r, c + 1, "=" + w.round_f(f"{xl_col_to_name(c)}{x}-B{x}"), f["money"],
                                 round_money(alt.total_cost - res.total_cost, w.places))
            ws.write_string(r, c + 2, "changed" if _route_text(alt) != base_routes[sid] else "same")
    ws.freeze_panes(3, 1)
    return first, last_total


def _component(res: CostedShipment, name: str) -> float:
    if name == "min_charge_uplift":
        return res.min_charge_uplift
    if name == "total_cost":
        return res.total_cost
    return _shipment_value(res, name)


def _write_charts(w: _Writer, ws, results, last_row: int, frontier_rows, scenario_rows=None) -> None:
    """Native charts: cost by component (from the Summary TOTAL row) and the cost-time
    trade-offs of the costliest shipments (from the Trade-offs sheet)."""
    _page(ws)
    ws.set_column(0, 0, 2)
    ws.write_string(0, 1, "Charts are drawn from the Summary and Trade-offs sheets; "
                    "they follow those figures when rates change and the workbook recalculates.",
                    w.f["bold"])
    components = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                  "handling_cost", "trip_cost", "min_charge_uplift"]
    total_row = last_row + 1  # 0-based TOTAL row of Summary
    chart = w.wb.add_chart({"type": "column"})
    for name in components:
        ci = SUM[name]
        chart.add_series({"name": name,
                          "categories": ["Summary", 0, SUM["total_cost"], 0, SUM["total_cost"]],
                          "values": ["Summary", total_row, ci, total_row, ci]})
    chart.set_title({"name": "Cost by component, all shipments"})
    chart.set_y_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
    chart.set_x_axis({"visible": False})
    chart.set_legend({"position": "right"})
    chart.set_size({"width": 760, "height": 380})
    ws.insert_chart(2, 1, chart)
    costliest = sorted((r for r in results if r.shipment.shipment_id in frontier_rows),
                       key=lambda r: -r.total_cost)
    picked = [r for r in costliest if frontier_rows[r.shipment.shipment_id][1]
              - frontier_rows[r.shipment.shipment_id][0] >= 1][:5]
    if picked:
        sc = w.wb.add_chart({"type": "scatter", "subtype": "straight_with_markers"})
        hi = TRADEOFF_COLUMNS.index(("hours", 9, "hours"))
        ci = TRADEOFF_COLUMNS.index(("total_cost", 12, "money"))
        for r in picked:
            a, b = frontier_rows[r.shipment.shipment_id]  # 1-based first row, 0-based last+1
            sc.add_series({"name": r.shipment.shipment_id,
                           "categories": ["Trade-offs", a - 1, hi, b - 1, hi],
                           "values": ["Trade-offs", a - 1, ci, b - 1, ci],
                           "marker": {"type": "circle", "size": 6}})
        sc.set_title({"name": "Cost against hours: trade-offs of the costliest shipments"})
        sc.set_x_axis({"name": "hours (drive + handling)"})
        sc.set_y_axis({"name": f"total cost ({w.model.settings.currency})", "num_format": "#,##0"})
        sc.set_size({"width": 760, "height": 420})
        ws.insert_chart(23, 1, sc)
    if scenario_rows:
        a, b = scenario_rows  # 0-based rows of the scenario totals on "Scenario comparison"
        name = "Scenario comparison"
        bar = w.wb.add_chart({"type": "bar"})
        total_col = 2 + len(SCENARIO_COMPONENTS)  # columns: scenario, routed, components, total
        bar.add_series({"name": "total_cost", "categories": [name, a, 0, b, 0],
                        "values": [name, a, total_col, b, total_col],
                        "data_labels": {"value": True, "num_format": "#,##0"}})
        bar.set_title({"name": "Total cost per scenario"})
        bar.set_x_axis({"name": w.model.settings.currency, "num_format": "#,##0", "min": 0})
        bar.set_legend({"none": True})
        bar.set_size({"width": 760, "height": 320})
        ws.insert_chart(45, 1, bar)
        stack = w.wb.add_chart({"type": "column", "subtype": "stacked"})
        for k, comp in enumerate(SCENARIO_COMPONENTS):
            stack.add_series({"name": comp, "categories": [name, a, 0, b, 0],
                              "values": [name, a, 2 + k, b, 2 + k]})
        stack.set_title({"name": "Cost by component per scenario"})
        stack.set_y_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
        stack.set_size({"width": 760, "height": 400})
        ws.insert_chart(62, 1, stack)


def _page(ws) -> None:
    ws.set_landscape()
    ws.set_paper(9)
    ws.fit_to_pages(1, 1)


def _write_map(w: _Writer, ws, png: bytes) -> None:
    import io

    _page(ws)
    ws.write_string(0, 0, "Lane network and routed tonnes (line width); drawn from depot coordinates, "
                    "not to a base map.", w.f["bold"])
    ws.insert_image(2, 0, "network-map.png", {"image_data": io.BytesIO(png), "x_scale": 0.9, "y_scale": 0.9})


# data rows per Legs sheet; more legs continue on "Legs 2", "Legs 3", ...
LEGS_SHEET_ROWS = MAX_ROWS - 1
# from this many legs on, rows are streamed to disk instead of held in memory
STREAMING_LEGS = 100_000


def _legs_sheet_names(results) -> list[str]:
    names, used = ["Legs"], 0
    for res in results:
        n = len(res.legs)
        if n > LEGS_SHEET_ROWS:
            raise OutputLimitError(f"shipment {res.shipment.shipment_id} has {n:,} legs, more than a sheet "
                                   "holds", "check the lanes of this shipment")
        if used + n > LEGS_SHEET_ROWS:
            names.append(f"Legs {len(names) + 1}")
            used = 0
        used += n
    return names


def _sheet_ref(name: str) -> str:
    return f"'{name}'" if " " in name else name


def _write_legs(w: _Writer, legs_sheets, results) -> tuple[dict[str, tuple[str, int, int]], dict[str, int]]:
    """Legs rows, continuing on further sheets at the row limit. Returns shipment id ->
    (sheet, first row, last row) (1-based) and sheet -> its last data row."""
    letters = {name: xl_col_to_name(i) for name, i in LEG.items()}
    ranges: dict[str, tuple[str, int, int]] = {}
    last: dict[str, int] = {}
    k = 0
    name, ws = legs_sheets[0]
    w.header(ws, LEG_COLUMNS)
    r = 1
    for res in results:
        if not res.legs:
            continue
        if r - 1 + len(res.legs) > LEGS_SHEET_ROWS:
            ws.autofilter(0, 0, max(r - 1, 1), len(LEG_COLUMNS) - 1)
            last[name] = r
            k += 1
            name, ws = legs_sheets[k]
            w.header(ws, LEG_COLUMNS)
            r = 1
        first = r
        for leg in res.legs:
            refs = {col_name: f"{col}{r + 1}" for col_name, col in letters.items()}
            refs["d"] = str(w.places)
            for c, (_name, _width, kind, value_of, formula) in enumerate(LEG_SPEC):
                value = value_of(res, leg)
                if formula is not None:
                    ws.write_formula(r, c, "=" + formula.format(**refs), w.f[kind], value)
                elif kind == "text":
                    ws.write_string(r, c, _text(value))
                elif value is not None:
                    ws.write_number(r, c, value)
            r += 1
        ranges[res.shipment.shipment_id] = (name, first + 1, r)  # 1-based inclusive rows
    ws.autofilter(0, 0, max(r - 1, 1), len(LEG_COLUMNS) - 1)
    last[name] = r
    return ranges, last


def _shipment_value(res: CostedShipment, col: str) -> float:
    """The cached value of a summed Summary column, from the same rounded leg figures."""
    legs_cols = SUMMED[col]
    attr = {"handling_start_cost": "start_handling_cost", "handling_end_cost": "end_handling_cost",
            "leg_cost": "leg_cost"}
    total = sum(getattr(leg, attr.get(c, c)) if c not in ("distance_km", "drive_hours")
                else (leg.use.km if c == "distance_km" else leg.use.hours)
                for leg in res.legs for c in legs_cols)
    kind = SUMMARY_COLUMNS[SUM[col]][2]
    return round_money(total, res.places) if kind == "money" else total


def _write_summary(w: _Writer, ws, results, ranges) -> int:
    w.header(ws, SUMMARY_COLUMNS)
    c = SUM
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    f = w.f
    r = 0
    for r, res in enumerate(results, start=1):
        x = r + 1
        s = res.shipment
        for col, value in (("shipment_id", s.shipment_id), ("status", res.status), ("origin", s.origin),
                           ("destination", s.destination), ("objective", res.objective),
                           ("vehicle", res.vehicle), ("customer", s.customer), ("note", res.message)):
            ws.write_string(r, c[col], _text(value))
        ws.write_number(r, c["weight_t"], s.weight_t)
        if res.status != ROUTED:
            ws.write_number(r, c["legs"], 0)
            continue
        sheet, a, b = ranges[s.shipment_id]
        sh = _sheet_ref(sheet)
        ws.write_number(r, c["vehicles"], res.vehicles)
        ws.write_formula(r, c["legs"], f"=COUNT({sh}!{L['seq']}{a}:{L['seq']}{b})", f["int"],
                         len(res.legs))
        for col, legs_cols in SUMMED.items():
            kind = SUMMARY_COLUMNS[c[col]][2]
            expr = "+".join(f"SUM({sh}!{L[lc]}{a}:{L[lc]}{b})" for lc in legs_cols)
            if kind == "money":
                expr = w.round_f(expr)
            ws.write_formula(r, c[col], "=" + expr, f[kind], _shipment_value(res, col))
        ws.write_number(r, c["min_charge"], res.min_charge, f["money"])
        ws.write_formula(r, c["min_charge_uplift"],
                         "=" + w.round_f(f"MAX(0,{S['min_charge']}{x}-{S['subtotal']}{x})"),
                         f["money"], res.min_charge_uplift)
        ws.write_formula(r, c["total_cost"],
                         "=" + w.round_f(f"{S['subtotal']}{x}+{S['min_charge_uplift']}{x}"),
                         f["money"], res.total_cost)
        route = " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])
        ws.write_string(r, c["route"], _text(route))
    last = r
    # totals row: each column's sum, cached from the same figures
    t = last + 1
    ws.write_string(t, 0, "TOTAL", f["total_text"])
    routed = [x for x in results if x.status == ROUTED]
    totals: dict[str, float] = {col: sum(_shipment_value(x, col) for x in routed) for col in SUMMED}
    totals["legs"] = sum(len(x.legs) for x in routed)
    totals["weight_t"] = sum(x.shipment.weight_t for x in results)
    totals["min_charge_uplift"] = sum(x.min_charge_uplift for x in routed)
    totals["total_cost"] = sum(x.total_cost for x in routed)
    for col, value in totals.items():
        kind = SUMMARY_COLUMNS[c[col]][2]
        expr = f"SUM({S[col]}2:{S[col]}{last + 1})"
        if kind == "money":
            expr = w.round_f(expr)
            value = round_money(value, w.places)
        fmt = f.get("total_" + kind, f["total_text"])
        ws.write_formula(t, c[col], "=" + expr, fmt, value)
    ws.autofilter(0, 0, max(last, 1), len(SUMMARY_COLUMNS) - 1)
    ws.conditional_format(1, c["status"], max(last, 1), c["status"],
                          {"type": "cell", "criteria": "!=", "value": '"routed"',
                           "format": f["warning"]})
    return last


def _write_problems(w: _Writer, ws, problems: list[Problem]) -> None:
    cols = [("severity", 10, "text"), ("sheet", 12, "text"), ("cell", 10, "text"),
            ("message", 80, "text"), ("what_to_do", 60, "text")]
    w.header(ws, cols)
    order = {ERROR: 0, WARNING: 1, INFO: 2}
    for r, p in enumerate(sorted(problems, key=lambda p: order.get(p.severity, 3)), start=1):
        fmt = w.f.get(p.severity)
        ws.write_string(r, 0, p.severity, fmt)
        ws.write_string(r, 1, _text(p.sheet))
        ws.write_string(r, 2, _text(p.cell))
        ws.write_string(r, 3, _text(p.message))
        ws.write_string(r, 4, _text(p.fix))
    if not problems:
        ws.write_string(1, 3, "No problems found.")
    ws.autofilter(0, 0, max(len(problems), 1), len(cols) - 1)


def _bound_rows(bounds: dict[str, str]) -> list[tuple[str, str]]:
    """The A* bounds used, one line per objective: how many networks, the range of r_min, and
    any network searched without a bound."""
    import re

    per: dict[str, list[str]] = {}
    for label, note in bounds.items():
        per.setdefault(label.split(":")[0], []).append(note)
    rows = []
    for obj, notes in per.items():
        ratios = [float(m.group(1)) for n in notes if (m := re.search(r"x ([0-9.eE+-]+) ", n))]
        none = [n for n in notes if n.startswith("none")]
        text = f"{len(notes)} compact network(s); lower bound = straight-line km x the least weight per " \
               "straight-line km of the usable lanes"
        if ratios:
            text += f" ({min(ratios):.6g} to {max(ratios):.6g} per km)"
        if none:
            text += f"; {len(none)} without a bound: {none[0]}"
        rows.append((f"A* bound ({obj})", text))
    return rows


def _write_run(w: _Writer, ws, model: Model, results, problems, info: RunInfo, last: int,
               n_legs: int) -> None:
    _page(ws)
    ws.fit_to_pages(1, 0)  # one page wide, as many long as it takes
    ws.set_column(0, 0, 36)
    ws.set_column(1, 1, 90, w.f["wrap"])
    f = w.f
    rows: list[tuple[str, object]] = [
        ("tool", f"costing {__version__}"),
        ("run at (UTC)", info.created.strftime("%Y-%m-%d %H:%M:%S")),
        ("input file", info.input_name),
        ("input SHA-256", info.input_sha256),
        ("caution", CAUTION),
        ("rounding", f"money rounded half away from zero to {w.places} decimals "
                     f"({model.settings.currency}, ISO 4217 minor unit) per leg component; "
                     "totals are sums of rounded amounts"),
        ("objective precedence", "a shipment's own objective, else the command line, else Settings"),
    ]
    if info.objective_override:
        rows.append(("objective (command line)", info.objective_override))
    s = model.settings
    from costing.contract.inputs import SETTINGS

    for name in (spec.name for spec in SETTINGS):  # every setting, as used (defaults filled in)
        v = getattr(s, name)
        rows.append((f"setting: {name}", "(blank: default)" if v is None else v))
    counts: dict[str, int] = {}
    for x in results:
        counts[x.status] = counts.get(x.status, 0) + 1
    rows += [
        ("shipments", len(results)),
        ("routed", counts.get("routed", 0)),
        ("no_route", counts.get("no_route", 0)),
        ("rejected", counts.get("rejected", 0)),
        ("legs", n_legs),
        ("problems: errors / warnings / info",
         "{} / {} / {}".format(*(sum(p.severity == k for p in problems) for k in (ERROR, WARNING, INFO)))),
    ]
    from costing.price.rates import DEFAULT_INTENSITY
    from costing.price.rules import rules_for

    rules = rules_for(s)
    if rules:
        rows += [
            ("driving rules",
             f"{rules.name}: break of {rules.break_hours:g} h after {rules.break_after:g} h driving; "
             f"daily rest of {rules.daily_rest:g} h after {rules.daily_driving:g} h driving "
             "(road legs; one driver per vehicle)"),
            ("driving rules: source", rules.source),
            ("driving rules: route choice", "routes are chosen on driving and handling hours; breaks and "
                                            "rests are then added to the chosen route and costed"),
        ]
    else:
        rows.append(("driving rules", "none: hours are driving plus handling, no breaks or rests"))
    if any(leg.co2e_basis != "fuel" for x in results for leg in x.legs):
        for mode, (g, source) in DEFAULT_INTENSITY.items():
            rows.append((f"default CO2e intensity: {mode}", f"{g:g} g CO2e per tonne-km; {source}"))
    st = info.stats
    rows += [
        ("searches (A*)", st.searches),
        ("nodes settled", st.settled),
        ("nodes pushed", st.pushed),
        ("compact networks built", st.networks),
        ("batched searches", f"{st.batches} one-to-many searches answered {st.batched} shipment searches "
                             "(shipments sharing an origin and a profile, 3 or more to a group; smaller "
                             "groups use A* per shipment)"),
    ]
    rows += _bound_rows(st.bounds)
    if os.environ.get("SOURCE_DATE_EPOCH"):
        rows.append(("seconds", "not recorded: SOURCE_DATE_EPOCH is set, so the output is reproducible "
                                "byte for byte"))
    else:
        for stage, secs in st.seconds.items():
            rows.append((f"seconds: {stage}", round(secs, 3)))
    rows.append(("reproducible?", reproducibility_note()))
    for k, v in info.extra.items():
        rows.append((k, v))
    ws.write_string(0, 0, "item", f["head"])
    ws.write_string(0, 1, "value", f["head"])
    r = 1
    for r, (k, v) in enumerate(rows, start=1):
        ws.write_string(r, 0, k, f["bold"])
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            text = _text(v)
            ws.write_string(r, 1, text, f["wrap"])
            if len(text) > 95:  # wrapped text needs a taller row in print
                ws.set_row(r, 15 * min(20, -(-len(text) // 95)))
        else:
            ws.write_number(r, 1, v)
    # reconciliation: the totals tie out
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    routed = [x for x in results if x.status == ROUTED]
    leg_total = round_money(sum(leg.leg_cost for x in routed for leg in x.legs), w.places)
    uplift = round_money(sum(x.min_charge_uplift for x in routed), w.places)
    total = round_money(sum(x.total_cost for x in routed), w.places)
    r += 2
    ws.write_string(r, 0, "reconciliation", f["bold"])
    recon = [
        ("sum of Legs leg_cost", w.round_f("+".join(
            f"SUM({_sheet_ref(sheet)}!{L['leg_cost']}2:{L['leg_cost']}{max(last, 2)})"
            for sheet, last in w.legs_last.items())), leg_total),
        ("plus sum of min_charge_uplift",
         w.round_f(f"SUM(Summary!{S['min_charge_uplift']}2:{S['min_charge_uplift']}{last + 1})"), uplift),
        ("equals Summary total_cost (TOTAL row)", f"Summary!{S['total_cost']}{last + 2}", total),
    ]
    for k, expr, value in recon:
        r += 1
        ws.write_string(r, 0, k)
        ws.write_formula(r, 1, "=" + expr, f["money"], value)
    r += 1
    ws.write_string(r, 0, "difference (must be 0)")
    ws.write_formula(r, 1, "=" + w.round_f(f"B{r - 2}+B{r - 1}-B{r}"), f["money"],
                     round_money(leg_total + uplift - total, w.places))
