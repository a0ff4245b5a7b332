"""The Currency conversion sheet: every money figure the run took in another currency than its
own, in that currency beside its Currencies rate, and converted by live formulas.

Rows, in input order:

- **Rates**: per rate card given in another currency, each money field (per_km, per_hour,
  per_trip, min_charge, fuel_included_at; those not 0) as typed (``RateCard.given``). ``converted`` =
  amount x rate, unrounded: the figure the run prices with (a rate card is converted when the
  workbook is read, and every amount computed from it is rounded where it is computed, e.g.
  km_cost = ROUND(vehicles x km x per_km)). ``converted_rounded`` = ROUND(converted, places),
  the figure in the run currency's minor unit.
- **Tariffs**: per Carrier charges row priced by a tariff row in another currency (a shipment
  priced whole, or a part of a route bought), the price of the consignment in the tariff's
  currency (a reference to its Carrier charges price cell). ``converted_rounded`` =
  ROUND(price x rate, places) is the charge the run used (Carrier charges charge).

Each currency's rate is typed once, in its first row; its other rows refer to that cell, so
changing it there recomputes every conversion of that currency on the sheet (the run's own
figures on the other sheets keep the rate they were costed at).

``places`` is the ISO 4217 minor unit of the run's currency (``costing.money.minor_unit``: JPY
0, EUR 2, KWD 3), rounding half away from zero as ``costing.money.round_money`` does. Every
formula carries its cached value: the value the run used (``converted`` of a rate card field is
the converted field of the card; ``converted_rounded`` of a tariff price is the charge), so a
recalculation changes nothing.
"""

from __future__ import annotations

from dataclasses import dataclass

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import CARRIER_CHARGES, CARRIER_COL, CURRENCY_COL, CURRENCY_COLUMNS
from costing.model import RATE_CARD_MONEY_FIELDS
from costing.money import round_money
from costing.sheets.formats import Writer, cell_text, sheet_ref


@dataclass(frozen=True)
class ConversionRow:
    """One row of the sheet.

    Attributes
    ----------
    source : str
        ``Rates`` or ``Tariffs``.
    input_row : int
        Row of the input sheet.
    item, figure : str
        What is converted.
    currency : str
        ISO 4217 code of `amount`.
    amount : float
        The figure in `currency`.
    rate : float
        Units of the run's currency per unit of `currency`.
    converted : float
        What the run used, unrounded (amount x rate).
    converted_rounded : float
        ROUND(converted) to the run currency's minor unit.
    used_as : str
        How the run uses it.
    carrier_row : int or None
        The 1-based Carrier charges row whose price is `amount` (tariffs)."""

    source: str
    input_row: int
    item: str
    figure: str
    currency: str
    amount: float
    rate: float
    converted: float
    converted_rounded: float
    used_as: str
    carrier_row: int | None = None


def conversion_rows(model, results, carrier_rows: dict, places: int) -> list[ConversionRow]:
    """The sheet's rows (module docstring); empty when nothing is in another currency.

    Parameters
    ----------
    model : Model
        Rate cards and the run's currency.
    results : list of CostedShipment
        Their carrier quotes and bought parts.
    carrier_rows : dict
        ``costing.sheets.carrier_charges.carrier_rows``: key -> Carrier charges row.
    places : int
        Minor unit of the run's currency.
    """
    run_cur = model.settings.currency
    out: list[ConversionRow] = []
    for card in model.rates:
        if not card.currency or card.currency == run_cur:
            continue
        given = dict(card.given)
        for name in RATE_CARD_MONEY_FIELDS:
            used = getattr(card, name)
            if not used:  # not given, or 0 (nothing to convert)
                continue
            amount = given.get(name, used / card.fx_rate)
            out.append(ConversionRow(
                "Rates", card.row, f"{card.vehicle} ({card.mode})", name, card.currency, amount, card.fx_rate,
                used, round_money(used, places),
                "rate card figure: the run prices with converted (unrounded) and rounds each amount it "
                "computes from it"))
    for res in results:
        sid = res.shipment.shipment_id
        priced = [(sid, res.quote, "whole", "bought" if res.bought else "priced for comparison")] \
            if res.quote is not None else []
        priced += [((sid, p.role), p.quote, p.role, f"bought ({p.from_depot} > {p.to_depot})")
                   for p in res.parts]
        for key, q, part, how in priced:
            if q.currency == run_cur:
                continue
            t = q.tariff
            out.append(ConversionRow(
                "Tariffs", t.row, f"{t.carrier} {q.from_zone} > {q.to_zone}: {sid} {part}", "price",
                q.currency, q.price.price, q.rate, q.price.price * q.rate, q.charge,
                f"carrier charge, {how}: ROUND(price x rate), the Carrier charges charge",
                carrier_rows.get(key)))
    return out


def write_currency_conversion(w: Writer, ws, rows: list[ConversionRow]) -> None:
    """Write the sheet's rows (`conversion_rows`) with their live formulas."""
    w.header(ws, CURRENCY_COLUMNS)
    c = CURRENCY_COL
    L = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    price = xl_col_to_name(CARRIER_COL["price"])
    cur = w.model.settings.currency
    firsts: dict = {}
    r = 0
    for r, row in enumerate(rows, start=1):
        x = r + 1
        for col, value in (("source", row.source), ("item", row.item), ("figure", row.figure),
                           ("currency", row.currency), ("run_currency", cur), ("used_as", row.used_as)):
            ws.write_string(r, c[col], cell_text(value))
        ws.write_number(r, c["input_row"], row.input_row, f["int"])
        if row.carrier_row is not None:
            ws.write_formula(r, c["amount"], f"={sheet_ref(CARRIER_CHARGES)}!{price}{row.carrier_row}",
                             f["rate"], row.amount)
        else:
            ws.write_number(r, c["amount"], row.amount, f["rate"])
        first = firsts.setdefault((row.currency, row.rate), x)
        if first == x:  # the currency's rate is typed once; its other rows refer to it
            ws.write_number(r, c["rate"], row.rate)
        else:
            ws.write_formula(r, c["rate"], f"=${L['rate']}${first}", None, row.rate)
        ws.write_number(r, c["places"], w.places, f["int"])
        ws.write_formula(r, c["converted"], f"={L['amount']}{x}*{L['rate']}{x}", f["plain"], row.converted)
        ws.write_formula(r, c["converted_rounded"], f"=ROUND({L['converted']}{x},{L['places']}{x})",
                         f["money"], row.converted_rounded)
    ws.autofilter(0, 0, max(r, 1), len(CURRENCY_COLUMNS) - 1)
