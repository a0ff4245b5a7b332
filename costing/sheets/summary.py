"""The Summary sheet: one row per shipment, totals summed from its Legs rows by formula, and a TOTAL
row that is the sum of the rows above (so it ties out to the cent)."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LEG, RATIOS, SUM, SUMMARY_COLUMNS, SUMMED
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text, sheet_ref, shipment_value


def write_summary(w: Writer, ws, results, ranges) -> int:
    """One row per shipment, its totals as SUMs over its Legs rows (`ranges`: shipment id ->
    (Legs sheet, first row, last row)), and the TOTAL row. Returns the 0-based index of the last
    shipment row; the TOTAL row follows it."""
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
            ws.write_string(r, c[col], cell_text(value))
        ws.write_number(r, c["weight_t"], s.weight_t)
        if res.status != ROUTED:
            ws.write_number(r, c["legs"], 0)
            continue
        sheet, a, b = ranges[s.shipment_id]
        sh = sheet_ref(sheet)
        ws.write_number(r, c["vehicles"], res.vehicles)
        ws.write_formula(r, c["legs"], f"=COUNT({sh}!{L['seq']}{a}:{L['seq']}{b})", f["int"],
                         len(res.legs))
        for col, legs_cols in SUMMED.items():
            kind = SUMMARY_COLUMNS[c[col]][2]
            expr = "+".join(f"SUM({sh}!{L[lc]}{a}:{L[lc]}{b})" for lc in legs_cols)
            if kind == "money":
                expr = w.round_f(expr)
            ws.write_formula(r, c[col], "=" + expr, f[kind], shipment_value(res, col))
        for col, (num, den, k) in RATIOS.items():  # e.g. g CO2e per tonne-km
            ws.write_formula(r, c[col], f"=IF({S[den]}{x}=0,0,{S[num]}{x}*{k}/{S[den]}{x})", f["plain"],
                             getattr(res, col))
        ws.write_number(r, c["min_charge"], res.min_charge, f["money"])
        ws.write_formula(r, c["min_charge_uplift"],
                         "=" + w.round_f(f"MAX(0,{S['min_charge']}{x}-{S['subtotal']}{x})"),
                         f["money"], res.min_charge_uplift)
        ws.write_formula(r, c["total_cost"],
                         "=" + w.round_f(f"{S['subtotal']}{x}+{S['min_charge_uplift']}{x}"),
                         f["money"], res.total_cost)
        route = " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])
        ws.write_string(r, c["route"], cell_text(route))
    last = r
    # totals row: each column's sum, cached from the same figures
    t = last + 1
    ws.write_string(t, 0, "TOTAL", f["total_text"])
    routed = [x for x in results if x.status == ROUTED]
    totals: dict[str, float] = {col: sum(shipment_value(x, col) for x in routed) for col in SUMMED}
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
    for col, (num, den, k) in RATIOS.items():
        n, d = totals[num], totals[den]
        ws.write_formula(t, c[col], f"=IF({S[den]}{t + 1}=0,0,{S[num]}{t + 1}*{k}/{S[den]}{t + 1})",
                         f["total_text"], n * k / d if d else 0.0)
    ws.autofilter(0, 0, max(last, 1), len(SUMMARY_COLUMNS) - 1)
    ws.conditional_format(1, c["status"], max(last, 1), c["status"],
                          {"type": "cell", "criteria": "!=", "value": '"routed"',
                           "format": f["warning"]})
    return last
