"""Write the costed workbook: Summary, Legs, Problems, Run. Every audited figure is a live
formula with its value cached; every string from the input is written as text.
Knows xlsxwriter; knows nothing of the search."""

from __future__ import annotations

import datetime as _dt
import os
from dataclasses import dataclass, field

import xlsxwriter
from xlsxwriter.utility import xl_col_to_name

from . import __version__
from .cost import ROUTED, CostedShipment
from .model import ERROR, INFO, WARNING, Model, Problem

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


# (header, width, kind) - kind: text | int | km | hours | money | rate | kg | plain
LEG_COLUMNS = [
    ("shipment_id", 12, "text"), ("seq", 5, "int"), ("lane_id", 9, "text"),
    ("from_depot", 11, "text"), ("to_depot", 11, "text"), ("mode", 9, "text"),
    ("vehicle", 12, "text"), ("vehicles", 8, "int"), ("distance_km", 11, "km"),
    ("km_basis", 10, "text"), ("drive_hours", 11, "hours"), ("hours_basis", 11, "text"),
    ("per_km", 9, "rate"), ("per_hour", 9, "rate"), ("toll", 9, "rate"), ("fixed_cost_rate", 10, "rate"),
    ("handling_start_rate", 12, "rate"), ("handling_end_rate", 12, "rate"), ("per_trip", 9, "rate"),
    ("km_cost", 11, "money"), ("hour_cost", 11, "money"), ("toll_cost", 10, "money"),
    ("fixed_cost", 10, "money"), ("handling_start_cost", 12, "money"),
    ("handling_end_cost", 12, "money"), ("trip_cost", 10, "money"), ("leg_cost", 12, "money"),
    ("handling_hours", 10, "hours"), ("fuel_l_per_100km", 10, "plain"),
    ("co2e_kg_per_litre", 10, "plain"), ("co2e_kg", 10, "kg"),
]
LEG = {name: i for i, (name, _w, _k) in enumerate(LEG_COLUMNS)}

SUMMARY_COLUMNS = [
    ("shipment_id", 12, "text"), ("status", 9, "text"), ("origin", 10, "text"),
    ("destination", 11, "text"), ("objective", 10, "text"), ("vehicle", 12, "text"),
    ("vehicles", 8, "int"), ("legs", 6, "int"), ("distance_km", 11, "km"), ("drive_hours", 11, "hours"),
    ("handling_hours", 10, "hours"), ("transit_hours", 10, "hours"), ("km_cost", 11, "money"),
    ("hour_cost", 11, "money"), ("toll_cost", 10, "money"), ("fixed_cost", 10, "money"),
    ("handling_cost", 11, "money"), ("trip_cost", 10, "money"), ("subtotal", 12, "money"),
    ("min_charge", 10, "money"), ("min_charge_uplift", 11, "money"), ("total_cost", 12, "money"),
    ("co2e_kg", 10, "kg"), ("weight_t", 9, "plain"), ("customer", 18, "text"),
    ("route", 40, "text"), ("note", 60, "text"),
]
SUM = {name: i for i, (name, _w, _k) in enumerate(SUMMARY_COLUMNS)}

HEADER_NOTES = {
    "km_basis": "stated: from the Lanes sheet; estimated: straight line x detour_factor.",
    "hours_basis": "stated: from the Lanes sheet; estimated: km / default_speed_kmh.",
    "vehicles": "Vehicles needed = ceil(weight_t / payload_t of the rate card).",
    "km_cost": "ROUND(vehicles x distance_km x per_km)",
    "hour_cost": "ROUND(vehicles x drive_hours x per_hour)",
    "toll_cost": "ROUND(vehicles x toll)",
    "fixed_cost": "ROUND(vehicles x fixed cost per vehicle)",
    "handling_start_cost": "ROUND(vehicles x handling at the origin); first leg only.",
    "handling_end_cost": "ROUND(vehicles x handling at to_depot) where it is a hub or the destination.",
    "trip_cost": "ROUND(vehicles x per_trip) on the first leg priced by each rate card.",
    "leg_cost": "Sum of the leg's cost components.",
    "co2e_kg": "vehicles x km x fuel_l_per_100km / 100 x co2e_kg_per_litre; 0 where the rate card "
               "has no fuel figures. Planning estimate.",
    "subtotal": "Sum of the shipment's leg_cost on the Legs sheet.",
    "min_charge": "Largest min_charge of the rate cards the route uses.",
    "min_charge_uplift": "MAX(0, min_charge - subtotal)",
    "total_cost": "subtotal + min_charge_uplift",
    "transit_hours": "drive_hours + handling_hours (no driving-time breaks unless set).",
    "status": "routed; no_route (no usable lanes connect origin and destination; see note); "
              "rejected (nothing to route).",
}


def _text(value: object) -> str:
    s = "" if value is None else str(value)
    if len(s) > MAX_CELL_TEXT:
        s = s[: MAX_CELL_TEXT - 40] + " ... [truncated at the cell limit]"
    return s


class _Writer:
    def __init__(self, path: str, model: Model, created: _dt.datetime):
        self.wb = xlsxwriter.Workbook(path, {"strings_to_formulas": False, "strings_to_urls": False,
                                             "strings_to_numbers": False, "nan_inf_to_errors": True})
        self.wb.set_properties({"title": "Costed routes", "created": created,
                                "comments": f"Written by costing {__version__}"})
        self.model = model
        cur = model.settings.currency
        from .money import minor_unit

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
                 info: RunInfo) -> None:
    w = _Writer(path, model, info.created)
    summary = w.wb.add_worksheet("Summary")
    legs_ws = w.wb.add_worksheet("Legs")
    problems_ws = w.wb.add_worksheet("Problems")
    run_ws = w.wb.add_worksheet("Run")
    n_legs = sum(len(r.legs) for r in results)
    if n_legs + 1 > MAX_ROWS or len(results) + 2 > MAX_ROWS:
        raise ValueError(f"{n_legs} legs do not fit in one sheet ({MAX_ROWS:,} rows); "
                         "cost the shipments in smaller batches")
    ranges = _write_legs(w, legs_ws, results)
    last_row = _write_summary(w, summary, results, ranges)
    _write_problems(w, problems_ws, problems)
    _write_run(w, run_ws, model, results, problems, info, last_row, n_legs)
    summary.activate()
    w.wb.close()


def _write_legs(w: _Writer, ws, results) -> dict[str, tuple[int, int]]:
    w.header(ws, LEG_COLUMNS)
    c = LEG
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    f = w.f
    ranges: dict[str, tuple[int, int]] = {}
    r = 1
    for res in results:
        if not res.legs:
            continue
        first = r
        sid = _text(res.shipment.shipment_id)
        for leg in res.legs:
            x = r + 1  # spreadsheet row number
            u = leg.use
            ws.write_string(r, c["shipment_id"], sid)
            ws.write_number(r, c["seq"], leg.seq)
            ws.write_string(r, c["lane_id"], _text(u.lane.lane_id))
            ws.write_string(r, c["from_depot"], _text(u.from_depot))
            ws.write_string(r, c["to_depot"], _text(u.to_depot))
            ws.write_string(r, c["mode"], u.lane.mode)
            ws.write_string(r, c["vehicle"], _text(res.vehicle))
            ws.write_number(r, c["vehicles"], leg.vehicles)
            ws.write_number(r, c["distance_km"], u.km)
            ws.write_string(r, c["km_basis"], "estimated" if u.km_estimated else "stated")
            ws.write_number(r, c["drive_hours"], u.hours)
            ws.write_string(r, c["hours_basis"], "estimated" if u.hours_estimated else "stated")
            ws.write_number(r, c["per_km"], leg.card.per_km)
            ws.write_number(r, c["per_hour"], leg.card.per_hour)
            ws.write_number(r, c["toll"], u.lane.toll)
            ws.write_number(r, c["fixed_cost_rate"], u.lane.fixed_cost)
            ws.write_number(r, c["handling_start_rate"], leg.start_handling_rate)
            ws.write_number(r, c["handling_end_rate"], leg.end_handling_rate)
            ws.write_number(r, c["per_trip"], leg.trip_rate)
            n = f"{L['vehicles']}{x}"
            for col, expr, value in (
                ("km_cost", f"{n}*{L['distance_km']}{x}*{L['per_km']}{x}", leg.km_cost),
                ("hour_cost", f"{n}*{L['drive_hours']}{x}*{L['per_hour']}{x}", leg.hour_cost),
                ("toll_cost", f"{n}*{L['toll']}{x}", leg.toll_cost),
                ("fixed_cost", f"{n}*{L['fixed_cost_rate']}{x}", leg.fixed_cost),
                ("handling_start_cost", f"{n}*{L['handling_start_rate']}{x}", leg.start_handling_cost),
                ("handling_end_cost", f"{n}*{L['handling_end_rate']}{x}", leg.end_handling_cost),
                ("trip_cost", f"{n}*{L['per_trip']}{x}", leg.trip_cost),
            ):
                ws.write_formula(r, c[col], "=" + w.round_f(expr), f["money"], value)
            ws.write_formula(r, c["leg_cost"],
                             "=" + w.round_f(f"SUM({L['km_cost']}{x}:{L['trip_cost']}{x})"),
                             f["money"], leg.leg_cost)
            ws.write_number(r, c["handling_hours"], leg.handling_hours)
            fuel, factor = leg.card.fuel_l_per_100km, leg.card.co2e_kg_per_litre
            if fuel is not None:
                ws.write_number(r, c["fuel_l_per_100km"], fuel)
            if factor is not None:
                ws.write_number(r, c["co2e_kg_per_litre"], factor)
            fc, kc = f"{L['fuel_l_per_100km']}{x}", f"{L['co2e_kg_per_litre']}{x}"
            ws.write_formula(r, c["co2e_kg"],
                             f'=IF(OR({fc}="",{kc}=""),0,{n}*{L["distance_km"]}{x}*{fc}/100*{kc})',
                             f["kg"], leg.co2e_kg)
            r += 1
        ranges[res.shipment.shipment_id] = (first + 1, r)  # 1-based inclusive rows
    ws.autofilter(0, 0, max(r - 1, 1), len(LEG_COLUMNS) - 1)
    return ranges


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
        ws.write_string(r, c["shipment_id"], _text(s.shipment_id))
        ws.write_string(r, c["status"], res.status)
        ws.write_string(r, c["origin"], _text(s.origin))
        ws.write_string(r, c["destination"], _text(s.destination))
        ws.write_string(r, c["objective"], res.objective)
        ws.write_string(r, c["vehicle"], _text(res.vehicle))
        ws.write_number(r, c["weight_t"], s.weight_t)
        ws.write_string(r, c["customer"], _text(s.customer))
        note = res.message
        ws.write_string(r, c["note"], _text(note))
        if res.status != ROUTED:
            ws.write_number(r, c["legs"], 0)
            continue
        a, b = ranges[s.shipment_id]

        def legsum(col: str, a: int = a, b: int = b) -> str:
            return f"SUM(Legs!{L[col]}{a}:{L[col]}{b})"

        ws.write_number(r, c["vehicles"], res.vehicles)
        ws.write_formula(r, c["legs"], f"=COUNT(Legs!{L['seq']}{a}:{L['seq']}{b})", f["int"],
                         len(res.legs))
        ws.write_formula(r, c["distance_km"], "=" + legsum("distance_km"), f["km"], res.distance_km)
        ws.write_formula(r, c["drive_hours"], "=" + legsum("drive_hours"), f["hours"], res.drive_hours)
        ws.write_formula(r, c["handling_hours"], "=" + legsum("handling_hours"), f["hours"],
                         res.handling_hours)
        ws.write_formula(r, c["transit_hours"], f"={S['drive_hours']}{x}+{S['handling_hours']}{x}",
                         f["hours"], res.drive_hours + res.handling_hours)
        for col in ("km_cost", "hour_cost", "toll_cost", "fixed_cost", "trip_cost"):
            ws.write_formula(r, c[col], "=" + w.round_f(legsum(col)), f["money"], res.component(col))
        handling = res.component("start_handling_cost") + res.component("end_handling_cost")
        ws.write_formula(r, c["handling_cost"],
                         "=" + w.round_f(legsum("handling_start_cost") + "+" + legsum("handling_end_cost")),
                         f["money"], round(handling, w.places))
        ws.write_formula(r, c["subtotal"], "=" + w.round_f(legsum("leg_cost")), f["money"], res.subtotal)
        ws.write_number(r, c["min_charge"], res.min_charge, f["money"])
        ws.write_formula(r, c["min_charge_uplift"],
                         "=" + w.round_f(f"MAX(0,{S['min_charge']}{x}-{S['subtotal']}{x})"),
                         f["money"], res.min_charge_uplift)
        ws.write_formula(r, c["total_cost"],
                         "=" + w.round_f(f"{S['subtotal']}{x}+{S['min_charge_uplift']}{x}"),
                         f["money"], res.total_cost)
        ws.write_formula(r, c["co2e_kg"], "=" + legsum("co2e_kg"), f["kg"], res.co2e_kg)
        route = " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])
        ws.write_string(r, c["route"], _text(route))
    last = r
    # totals row
    t = last + 1
    ws.write_string(t, 0, "TOTAL", f["total_text"])
    routed = [x for x in results if x.status == ROUTED]
    totals = {
        "vehicles": None, "legs": sum(len(x.legs) for x in routed),
        "distance_km": sum(x.distance_km for x in routed),
        "drive_hours": sum(x.drive_hours for x in routed),
        "handling_hours": sum(x.handling_hours for x in routed),
        "transit_hours": sum(x.drive_hours + x.handling_hours for x in routed),
        "co2e_kg": sum(x.co2e_kg for x in routed),
        "weight_t": sum(x.shipment.weight_t for x in results),
    }
    from .money import round_money

    for col in ("km_cost", "hour_cost", "toll_cost", "fixed_cost", "trip_cost", "subtotal",
                "min_charge_uplift", "total_cost"):
        totals[col] = round_money(sum(x.component(col) if col.endswith("_cost") and col != "total_cost"
                                      else getattr(x, col) for x in routed), w.places)
    totals["handling_cost"] = round_money(sum(x.component("start_handling_cost")
                                              + x.component("end_handling_cost") for x in routed),
                                          w.places)
    for col, value in totals.items():
        if value is None:
            continue
        kind = SUMMARY_COLUMNS[c[col]][2]
        expr = f"SUM({S[col]}2:{S[col]}{last + 1})"
        if kind == "money":
            expr = w.round_f(expr)
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


def _write_run(w: _Writer, ws, model: Model, results, problems, info: RunInfo, last: int,
               n_legs: int) -> None:
    ws.set_column(0, 0, 34)
    ws.set_column(1, 1, 90)
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
    for name in ("currency", "objective", "detour_factor", "default_speed_kmh",
                 "value_of_time_per_hour", "driving_rules", "fuel_price_per_litre"):
        v = getattr(s, name)
        rows.append((f"setting: {name}", "" if v is None else v))
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
    st = info.stats
    rows += [
        ("searches (A*)", st.searches),
        ("nodes settled", st.settled),
        ("nodes pushed", st.pushed),
        ("compact networks built", st.networks),
    ]
    for label, note in st.bounds.items():
        rows.append((f"bound: {label}", note))
    for stage, secs in st.seconds.items():
        rows.append((f"seconds: {stage}", round(secs, 3)))
    for k, v in info.extra.items():
        rows.append((k, v))
    ws.write_string(0, 0, "item", f["head"])
    ws.write_string(0, 1, "value", f["head"])
    r = 1
    for r, (k, v) in enumerate(rows, start=1):
        ws.write_string(r, 0, k, f["bold"])
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            ws.write_string(r, 1, _text(v), f["wrap"] if k == "caution" else None)
        else:
            ws.write_number(r, 1, v)
    # reconciliation: the totals tie out
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    routed = [x for x in results if x.status == ROUTED]
    from .money import round_money

    leg_total = round_money(sum(leg.leg_cost for x in routed for leg in x.legs), w.places)
    uplift = round_money(sum(x.min_charge_uplift for x in routed), w.places)
    total = round_money(sum(x.total_cost for x in routed), w.places)
    r += 2
    ws.write_string(r, 0, "reconciliation", f["bold"])
    lr = n_legs + 1
    recon = [
        ("sum of Legs leg_cost", w.round_f(f"SUM(Legs!{L['leg_cost']}2:{L['leg_cost']}{max(lr, 2)})"),
         leg_total),
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
