"""The Invoice check sheet: the shipments with an invoiced amount (Shipments invoiced), largest
absolute difference from the computed cost first (ties: input order), each figure a reference
to or a formula over its Summary row with its value cached: the audit finance does every week.
Written only when some shipment gives an invoiced amount."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import INVOICE_COL, INVOICE_COLUMNS, SUM
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text


def invoiced_rows(results, places: int) -> list[tuple[int, object, float]]:
    """(Summary row 1-based, result, invoice difference) of every invoiced shipment, largest
    absolute difference first (ties: input order)."""
    rows = []
    for i, res in enumerate(results):
        inv = res.shipment.invoiced
        if inv is None:
            continue
        total = res.total_cost if res.status == ROUTED else 0.0
        rows.append((i + 2, res, round_money(inv - total, places)))
    return sorted(rows, key=lambda t: -abs(t[2]))


def write_invoice_check(w: Writer, ws, results) -> None:
    """Write the sheet (module docstring)."""
    w.header(ws, INVOICE_COLUMNS)
    c = INVOICE_COL
    C = {name: xl_col_to_name(i) for name, i in c.items()}
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    f = w.f
    r = 0
    for r, (srow, res, diff) in enumerate(invoiced_rows(results, w.places), start=1):
        x = r + 1
        s = res.shipment
        ws.write_string(r, c["shipment_id"], cell_text(s.shipment_id))
        ws.write_string(r, c["customer"], cell_text(s.customer))
        ws.write_string(r, c["vehicle"], cell_text(res.vehicle))
        ws.write_string(r, c["make_or_buy"], res.chosen)
        total = res.total_cost if res.status == ROUTED else 0.0
        ws.write_formula(r, c["total_cost"], f"=N(Summary!{S['total_cost']}{srow})", f["money"], total)
        ws.write_formula(r, c["invoiced"], f"=Summary!{S['invoiced']}{srow}", f["money"], s.invoiced)
        ws.write_formula(r, c["invoice_difference"],
                         "=" + w.round_f(f"{C['invoiced']}{x}-{C['total_cost']}{x}"), f["money"], diff)
        if total:
            ws.write_formula(r, c["difference_pct"], f"={C['invoice_difference']}{x}/{C['total_cost']}{x}",
                             f["pct"], diff / total)
    ws.autofilter(0, 0, max(r, 1), len(INVOICE_COLUMNS) - 1)
