"""The Cost per customer sheet: per customer (the Shipments customer; blank is "(no customer)"),
its shipments, tonnes, pallets, tonne-km, total cost, cost per tonne, per pallet and per shipment,
kg CO2e and, where shipments give a quoted_price, the margin and margin %; and the invoiced
amounts with their difference from the computed cost.

Every figure is a live formula over the Summary rows (SUMPRODUCT over the customer's routed
shipments: a text comparison with ``=``, so names with * or ? are not wildcards), with its value
cached from a pandas grouping of the same figures.

Customers are grouped as the formulas match them: a spreadsheet's ``=`` compares text without
regard to case, so "Acme" and "ACME" are one customer. The grouping key is ``str.lower()`` of the
name; the row shows the first spelling in input order, and ``spellings`` lists every spelling
when there is more than one. Measured against LibreOffice Calc's ``=`` (tests/test_customers.py):
they agree on ASCII, accented Latin, Greek (final sigma) and keep "Straße" apart from "STRASSE";
a ligature such as "ﬁ" matches "FI" in Calc but not here (two rows whose formulas would then
each count both). Money sums are rounded to the
currency's minor unit after summing rounded amounts, as the formulas do. Tonne-km and kg CO2e
are those of own vehicles (a carrier's km and emissions are not known). Customers are listed
by total cost, largest first (then by name).
"""

from __future__ import annotations

import pandas as pd
from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import CUSTOMER_COL, CUSTOMER_COLUMNS, SUM
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text

NO_CUSTOMER = "(no customer)"


def customer_key(name: str | None) -> str:
    """The grouping key of a customer name: ``str.lower()`` (blank: ""), so names that differ
    only in case are one customer, as the sheet's ``=`` formulas match them (module docstring)."""
    return (name or "").lower()


def customer_table(results, places: int) -> pd.DataFrame:
    """One row per customer with the sheet's figures (module docstring), largest total first.

    Parameters
    ----------
    results : list of CostedShipment
    places : int
        Minor unit of the run's currency.
    """
    rows = []
    for res in results:
        s = res.shipment
        routed = res.status == ROUTED
        rows.append({
            "key": customer_key(s.customer), "customer": s.customer or "", "routed": int(routed),
            "tonnes": s.weight_t if routed else 0.0, "pallets": (s.pallets or 0.0) if routed else 0.0,
            "tonne_km": res.tonne_km if routed else 0.0, "total_cost": res.total_cost if routed else 0.0,
            "co2e_kg": res.co2e_kg if routed else 0.0,
            "quoted_price": (s.quoted_price or 0.0) if routed else 0.0,
            "margin": round_money(s.quoted_price - res.total_cost, places)
            if routed and s.quoted_price is not None else 0.0,
            "invoiced": s.invoiced or 0.0,
            "invoice_difference": round_money(s.invoiced - (res.total_cost if routed else 0.0), places)
            if s.invoiced is not None else 0.0,
        })
    columns = ["key", "customer", "routed", "tonnes", "pallets", "tonne_km", "total_cost", "co2e_kg",
               "quoted_price", "margin", "invoiced", "invoice_difference"]
    df = pd.DataFrame(rows, columns=columns)
    g = df.groupby("key", sort=False)
    out = g.sum(numeric_only=True)
    out.insert(0, "shipments", g.size())
    out.insert(0, "customer", g["customer"].first())  # the first spelling in input order
    out["spellings"] = [", ".join(names) if len(names) > 1 else ""
                        for names in g["customer"].agg(lambda x: list(dict.fromkeys(x)))]
    for col in ("total_cost", "quoted_price", "margin", "invoiced", "invoice_difference"):
        out[col] = [round_money(v, places) for v in out[col]]

    def per(num: str, den: str) -> list:
        return [round_money(a / b, places) if b else None for a, b in zip(out[num], out[den])]

    out["cost_per_tonne"] = per("total_cost", "tonnes")
    out["cost_per_pallet"] = per("total_cost", "pallets")
    out["cost_per_shipment"] = per("total_cost", "routed")
    out["margin_pct"] = [m / q if q else None for m, q in zip(out["margin"], out["quoted_price"])]
    out = out.reset_index(drop=True)
    return out.sort_values(["total_cost", "customer"], ascending=[False, True], kind="stable")


def write_cost_per_customer(w: Writer, ws, results, last: int) -> None:
    """Write the sheet; `last` is the 0-based index of the last Summary shipment row."""
    w.header(ws, CUSTOMER_COLUMNS)
    c = CUSTOMER_COL
    C = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    n = last + 1

    def summary(col: str) -> str:
        letter = xl_col_to_name(SUM[col])
        return f"Summary!${letter}$2:${letter}${max(n, 2)}"

    table = customer_table(results, w.places)
    r = 0
    for r, row in enumerate(table.itertuples(index=False), start=1):
        x = r + 1
        name = row.customer
        ws.write_string(r, c["customer"], cell_text(name or NO_CUSTOMER))
        if row.spellings:
            ws.write_string(r, c["spellings"], cell_text(row.spellings))
        key = f'"{name}"' if not name else f"$A{x}"  # blank customer: the Summary cells are empty
        match = f"({summary('customer')}={key})"
        routed = f"({summary('status')}=\"routed\")"
        ws.write_formula(r, c["shipments"], f"=SUMPRODUCT({match}*1)", f["int"], int(row.shipments))
        ws.write_formula(r, c["routed"], f"=SUMPRODUCT({match}*{routed})", f["int"], int(row.routed))
        sums = (("tonnes", "weight_t", "plain", row.tonnes), ("pallets", "pallets", "plain", row.pallets),
                ("tonne_km", "tonne_km", "km", row.tonne_km),
                ("total_cost", "total_cost", "money", row.total_cost),
                ("co2e_kg", "co2e_kg", "kg", row.co2e_kg),
                ("quoted_price", "quoted_price", "money", row.quoted_price),
                ("margin", "margin", "money", row.margin))
        for col, src, kind, value in sums:
            expr = f"SUMPRODUCT({match}*{routed}*{summary(src)})"
            ws.write_formula(r, c[col], "=" + (w.round_f(expr) if kind == "money" else expr), f[kind], value)
        for col, src, value in (("invoiced", "invoiced", row.invoiced),
                                ("invoice_difference", "invoice_difference", row.invoice_difference)):
            ws.write_formula(r, c[col], "=" + w.round_f(f"SUMPRODUCT({match}*{summary(src)})"), f["money"],
                             value)
        total = f"{C['total_cost']}{x}"
        # a ratio is written only where its denominator is not 0 (blank otherwise)
        for col, den in (("cost_per_tonne", "tonnes"), ("cost_per_pallet", "pallets"),
                         ("cost_per_shipment", "routed")):
            value = getattr(row, col)
            if not pd.isna(value):
                ws.write_formula(r, c[col], "=" + w.round_f(f"{total}/{C[den]}{x}"), f["money"], value)
        if not pd.isna(row.margin_pct):
            ws.write_formula(r, c["margin_pct"], f"={C['margin']}{x}/{C['quoted_price']}{x}", f["pct"],
                             row.margin_pct)
    ws.autofilter(0, 0, max(r, 1), len(CUSTOMER_COLUMNS) - 1)
