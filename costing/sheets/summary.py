"""The Summary sheet: one row per shipment, totals summed from its Legs rows by formula, and a TOTAL
row that is the sum of the rows above (so it ties out to the cent)."""

from __future__ import annotations

import datetime as _dt

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LEG, RATIOS, SUM, SUMMARY_COLUMNS, SUMMED
from costing.money import round_money
from costing.plan.week import late_hours
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text, sheet_ref, shipment_values, travels_with
from costing.sheets.rowxml import RowSink


def write_summary(w: Writer, ws, results, ranges, carrier_rows=None) -> int:
    """One row per shipment, its totals as SUMs over its Legs rows (`ranges`: shipment id ->
    (Legs sheet, first row, last row)), and the TOTAL row. `carrier_rows` (shipment id -> its
    1-based row on the Carrier charges sheet) gives buy_cost, and total_cost of a shipment
    bought from a carrier. Returns the 0-based index of the last shipment row; the TOTAL row
    follows it."""
    w.header(ws, SUMMARY_COLUMNS)
    c = SUM
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    f = w.f
    out = RowSink(ws, 1)  # the shipment rows as worksheet XML (costing.sheets.rowxml)
    r = 0
    # the TOTAL row's summed columns, added shipment by shipment in the order of the rows (the
    # order of the sum of the rows above); nothing is kept per shipment
    summed = dict.fromkeys(SUMMED, 0)
    for r, res in enumerate(results, start=1):
        x = r + 1
        s = res.shipment
        for col, value in (("shipment_id", s.shipment_id), ("status", res.status), ("origin", s.origin),
                           ("destination", s.destination), ("objective", res.objective),
                           ("vehicle", res.vehicle), ("customer", s.customer), ("note", res.message)):
            out.write_string(r, c[col], cell_text(value))
        out.write_number(r, c["weight_t"], s.weight_t)
        out.write_string(r, c["travels_with"], travels_with(res))
        for col, day in (("ready_date", s.ready_date or w.first_day), ("due_date", s.due_date)):
            if day is not None:
                out.write_datetime(r, c[col], _dt.datetime.combine(day, _dt.time()), f["date"])
        write_chargeable_kg(w, out, r, s, S)
        write_make_or_buy(w, out, r, res, S, carrier_rows or {})
        write_revenue(w, out, r, res, S)
        if res.status != ROUTED:
            out.write_number(r, c["legs"], 0)
            continue
        values = shipment_values(res)
        for col in SUMMED:
            summed[col] += values[col]
        if res.bought:
            write_bought(w, out, r, res, S)
            continue
        sheet, a, b = ranges[s.shipment_id]
        sh = sheet_ref(sheet)
        out.write_number(r, c["vehicles"], res.vehicles)
        out.write_formula(r, c["legs"], f"=COUNT({sh}!{L['seq']}{a}:{L['seq']}{b})", f["int"],
                         len(res.legs))
        for col, legs_cols in SUMMED.items():
            kind = SUMMARY_COLUMNS[c[col]][2]
            expr = "+".join(f"SUM({sh}!{L[lc]}{a}:{L[lc]}{b})" for lc in legs_cols)
            if kind == "money":
                expr = w.round_f(expr)
            out.write_formula(r, c[col], "=" + expr, f[kind], values[col])
        for col, (num, den, k) in RATIOS.items():  # e.g. g CO2e per tonne-km
            out.write_formula(r, c[col], f"=IF({S[den]}{x}=0,0,{S[num]}{x}*{k}/{S[den]}{x})", f["plain"],
                             getattr(res, col))
        write_cost_cells(w, out, r, res, c, S, parts_ref(res, carrier_rows or {}))
        late = late_hours(res, w.first_day)
        if late is not None:
            out.write_number(r, c["late_hours"], late, f["hours"])
        out.write_string(r, c["route"], cell_text(route_with_parts(res)))
    out.finish()
    last = r
    # totals row: each column's sum, cached from the same figures
    t = last + 1
    ws.write_string(t, 0, "TOTAL", f["total_text"])
    routed = [x for x in results if x.status == ROUTED]
    totals: dict[str, float] = dict(summed)
    totals["legs"] = sum(len(x.legs) for x in routed)
    totals["weight_t"] = sum(x.shipment.weight_t for x in results)
    totals["min_charge_uplift"] = sum(x.min_charge_uplift for x in routed)
    totals["total_cost"] = sum(x.total_cost for x in routed)
    totals["standalone_cost"] = sum(x.standalone_cost for x in routed)
    totals["empty_return_cost"] = sum(x.empty_return_cost for x in routed)
    totals["empty_return_alone"] = sum(x.empty_return_alone for x in routed)
    totals["carrier_parts_cost"] = sum(x.parts_cost for x in routed)
    totals["saving"] = sum(x.saving for x in routed)
    for col, value in totals.items():
        kind = SUMMARY_COLUMNS[c[col]][2]
        expr = f"SUM({S[col]}2:{S[col]}{last + 1})"
        if kind == "money":
            expr = w.round_f(expr)
            value = round_money(value, w.places)
        fmt = f.get("total_" + kind, f["total_text"])
        ws.write_formula(t, c[col], "=" + expr, fmt, value)
    write_revenue_totals(w, ws, t, last, results)
    for col, (num, den, k) in RATIOS.items():
        n, d = totals[num], totals[den]
        ws.write_formula(t, c[col], f"=IF({S[den]}{t + 1}=0,0,{S[num]}{t + 1}*{k}/{S[den]}{t + 1})",
                         f["total_text"], n * k / d if d else 0.0)
    ws.autofilter(0, 0, max(last, 1), len(SUMMARY_COLUMNS) - 1)
    ws.conditional_format(1, c["status"], max(last, 1), c["status"],
                          {"type": "cell", "criteria": "!=", "value": '"routed"',
                           "format": f["warning"]})
    return last


def write_chargeable_kg(w: Writer, ws, r: int, s, S: dict) -> None:
    """Summary chargeable_kg of shipment `s` on 0-based row `r`: MAX(weight_t x 1000, volume_m3 x
    volumetric_kg_per_m3, loading_metres x kg_per_loading_metre), the input figures and Settings
    factors written into the formula (costing.price.tariffs.chargeable_kg caches its value)."""
    from costing.price.tariffs import shipment_chargeable_kg

    st = w.model.settings
    expr = (f"MAX({S['weight_t']}{r + 1}*1000,{s.volume_m3 or 0:.15g}*{st.volumetric_kg_per_m3:.15g},"
            f"{s.loading_metres or 0:.15g}*{st.kg_per_loading_metre:.15g})")
    ws.write_formula(r, SUM["chargeable_kg"], "=" + expr, w.f["kg"], shipment_chargeable_kg(s, st))


def write_make_or_buy(w: Writer, ws, r: int, res, S: dict, carrier_rows: dict) -> None:
    """make_cost, buy_cost (a reference to the Carrier charges row of the whole shipment),
    make_or_buy and its why (also for a shipment with parts of its route bought)."""
    from costing.contract.outputs import CARRIER_CHARGES, CARRIER_COL

    if res.quote is None and not res.parts:
        return
    f = w.f
    if res.quote is not None:
        row = carrier_rows[res.shipment.shipment_id]
        ref = f"{sheet_ref(CARRIER_CHARGES)}!{xl_col_to_name(CARRIER_COL['charge'])}{row}"
        ws.write_formula(r, SUM["buy_cost"], "=" + ref, f["money"], res.quote.charge)
    if res.make_cost is not None:
        if res.bought or res.parts:  # its own route alone, not this total
            ws.write_number(r, SUM["make_cost"], res.make_cost, f["money"])
        else:
            ws.write_formula(r, SUM["make_cost"], f"={S['total_cost']}{r + 1}", f["money"], res.make_cost)
    ws.write_string(r, SUM["make_or_buy"], res.chosen)
    ws.write_string(r, SUM["make_or_buy_why"], cell_text(res.why))


def parts_ref(res, carrier_rows: dict) -> str | None:
    """The sum of the Carrier charges cells of the shipment's bought parts (None without parts)."""
    from costing.contract.outputs import CARRIER_CHARGES, CARRIER_COL

    if not res.parts:
        return None
    letter = xl_col_to_name(CARRIER_COL["charge"])
    return "+".join(f"{sheet_ref(CARRIER_CHARGES)}!{letter}{carrier_rows[(res.shipment.shipment_id, p.role)]}"
                    for p in res.parts)


def route_with_parts(res) -> str:
    """The route as ``A > B > C``, a bought part shown as ``A > H (carrier X)``."""
    first = [p for p in res.parts if p.role == "collection"]
    last = [p for p in res.parts if p.role == "delivery"]
    text = " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])
    if first:
        text = f"{first[0].from_depot} > {text} (carrier {first[0].quote.carrier} to {first[0].to_depot})"
    if last:
        text += f" > {last[0].to_depot} (carrier {last[0].quote.carrier} from {last[0].from_depot})"
    return text


def write_cost_cells(w: Writer, ws, r: int, res, col: dict, S: dict, parts: str | None = None) -> None:
    """The cost cells a shipment row shares with Scenario shipments: min_charge, its uplift, the
    empty returns, carrier_parts_cost, standalone_cost, total_cost and saving, as live formulas over
    the row's own subtotal, allocated_cost, travels_with and carrier_parts_cost (`col`: column ->
    index; `S`: column -> letter). `parts`: the formula of carrier_parts_cost (the Carrier charges
    cells); without it a shipment with bought parts gets their sum as a number."""
    f, x = w.f, r + 1
    if res.parts:
        if parts:
            ws.write_formula(r, col["carrier_parts_cost"], "=" + w.round_f(parts), f["money"], res.parts_cost)
        else:
            ws.write_number(r, col["carrier_parts_cost"], res.parts_cost, f["money"])
    ws.write_number(r, col["min_charge"], res.min_charge, f["money"])
    ws.write_formula(r, col["min_charge_uplift"],
                     "=" + w.round_f(f"MAX(0,{S['min_charge']}{x}-{S['subtotal']}{x})"),
                     f["money"], res.min_charge_uplift)
    ws.write_number(r, col["empty_return_alone"], res.empty_return_alone, f["money"])
    ws.write_number(r, col["empty_return_cost"], res.empty_return_cost, f["money"])
    ws.write_formula(r, col["standalone_cost"], "=" + w.round_f(
        f"{S['subtotal']}{x}+{S['min_charge_uplift']}{x}+{S['empty_return_alone']}{x}"
        f"+{S['carrier_parts_cost']}{x}"),
        f["money"], res.standalone_cost)
    ws.write_formula(r, col["total_cost"], "=" + w.round_f(
        f"{S['allocated_cost']}{x}+{S['empty_return_cost']}{x}"
        f"+IF({S['travels_with']}{x}=\"\",{S['min_charge_uplift']}{x},0)+{S['carrier_parts_cost']}{x}"),
        f["money"], res.total_cost)
    ws.write_formula(r, col["saving"], "=" + w.round_f(f"{S['standalone_cost']}{x}-{S['total_cost']}{x}"),
                     f["money"], res.saving)


def write_bought(w: Writer, ws, r: int, res, S: dict) -> None:
    """A shipment bought from a carrier: no legs; total_cost and standalone_cost are its
    buy_cost (the Carrier charges row), saving 0."""
    f = w.f
    x = r + 1
    c = SUM
    ws.write_number(r, c["legs"], 0)
    ws.write_formula(r, c["total_cost"], f"={S['buy_cost']}{x}", f["money"], res.total_cost)
    ws.write_formula(r, c["standalone_cost"], f"={S['buy_cost']}{x}", f["money"], res.standalone_cost)
    ws.write_formula(r, c["saving"], "=" + w.round_f(f"{S['standalone_cost']}{x}-{S['total_cost']}{x}"),
                     f["money"], res.saving)
    s = res.shipment
    ws.write_string(r, c["route"], cell_text(f"{s.origin} > {s.destination} (carrier {res.vehicle})"))


def write_revenue(w: Writer, ws, r: int, res, S: dict) -> None:
    """pallets, quoted_price and margin (routed), invoiced and invoice_difference of one shipment."""
    f = w.f
    s = res.shipment
    x = r + 1
    if s.pallets is not None:
        ws.write_number(r, SUM["pallets"], s.pallets)
    if s.quoted_price is not None:
        ws.write_number(r, SUM["quoted_price"], s.quoted_price, f["money"])
        if res.status == ROUTED:
            ws.write_formula(r, SUM["margin"],
                             "=" + w.round_f(f"{S['quoted_price']}{x}-{S['total_cost']}{x}"),
                             f["money"], round_money(s.quoted_price - res.total_cost, w.places))
    if s.invoiced is not None:
        ws.write_number(r, SUM["invoiced"], s.invoiced, f["money"])
        ws.write_formula(r, SUM["invoice_difference"],
                         "=" + w.round_f(f"{S['invoiced']}{x}-{S['total_cost']}{x}"), f["money"],
                         invoice_difference(res, w.places))


def invoice_difference(res, places: int) -> float:
    """invoiced - total_cost (0 for a shipment not routed), currency."""
    total = res.total_cost if res.status == ROUTED else 0.0
    return round_money(res.shipment.invoiced - total, places)


def write_revenue_totals(w: Writer, ws, t: int, last: int, results) -> None:
    """TOTAL row cells of pallets, quoted_price, margin, invoiced and invoice_difference."""
    f = w.f
    routed = [x for x in results if x.status == ROUTED]
    d = w.places
    totals = {
        "pallets": (sum(x.shipment.pallets or 0.0 for x in results), "plain"),
        "quoted_price": (round_money(sum(x.shipment.quoted_price or 0.0 for x in results), d), "money"),
        "margin": (round_money(sum(round_money(x.shipment.quoted_price - x.total_cost, d)
                                   for x in routed if x.shipment.quoted_price is not None), d), "money"),
        "invoiced": (round_money(sum(x.shipment.invoiced or 0.0 for x in results), w.places), "money"),
        "invoice_difference": (round_money(sum(invoice_difference(x, w.places) for x in results
                                               if x.shipment.invoiced is not None), w.places), "money"),
    }
    for col, (value, kind) in totals.items():
        letter = xl_col_to_name(SUM[col])
        expr = f"SUM({letter}2:{letter}{last + 1})"
        if kind == "money":
            expr = w.round_f(expr)
        ws.write_formula(t, SUM[col], "=" + expr, f.get("total_" + kind, f["total_text"]), value)
