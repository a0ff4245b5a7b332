"""The Vehicle runs sheet: one row per vehicle run (vehicles of one rate card on one lane step on
one day), with the loads it carries, its fill rates, its cost components for its vehicles as
live formulas (the Legs formulas, for the run's vehicles), and its tonne-km and emissions, which
the Legs rows of its loads share by tonne-km. Run R0001 is on row 2, R0002 on row 3, ..."""

from __future__ import annotations

import datetime as _dt

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LEG, RUN_COL, RUN_COLUMNS
from costing.money import round_money
from costing.price.rates import fuel_use
from costing.sheets.formats import Writer, cell_text, sheet_ref
from costing.sheets.legs import LEG_CELLS
from costing.sheets.rowxml import RowSink


def _fill(amount: float, vehicles: int, capacity: float | None) -> float | None:
    """amount / (vehicles x capacity), in the order of the fill formulas; None without a capacity."""
    if not capacity:
        return None
    return amount / (vehicles * capacity)


def write_vehicle_runs(w: Writer, ws, runs, ranges: dict, key: tuple[str, list[str]] | None = None) -> int:
    """Write one row per run. `ranges` (from ``write_legs``): shipment id -> (Legs sheet, first
    row, last row), to refer to each load's Legs row. With `key` = (header, one text per run) a
    first column holds each run's key (a scenario's name), the columns follow one to the right,
    and `ranges` are keyed by (key, shipment id), as ``write_legs`` keys them. Returns the last
    data row (1-based)."""
    shift = 0 if key is None else 1
    columns = RUN_COLUMNS if key is None else [(key[0], 14, "text"), *RUN_COLUMNS]
    w.header(ws, columns)
    f = w.f
    R = {name: xl_col_to_name(i + shift) for name, i in RUN_COL.items()}
    L = {name: xl_col_to_name(i + shift) for name, i in LEG.items()}
    COL = {name: i + shift for name, i in RUN_COL.items()}
    out = RowSink(ws, 1)  # the rows as worksheet XML (costing.sheets.rowxml)
    # each formula with the row's cells as {x}, made once: a row fills in its row number only
    row_refs = {name: f"{col}{{x}}" for name, col in R.items()}
    row_refs["d"] = str(w.places)
    cost_names = ("km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                  "handling_start_cost", "handling_end_cost", "trip_cost")
    T = {name: "=" + LEG_CELLS[name][1].format(**row_refs) for name in cost_names}
    T["run_cost"] = "=" + LEG_CELLS["leg_cost"][1].format(**row_refs)
    T["load_factor"] = "=MIN(1,{tonnes}/{vehicles}/{payload_t})".format(**row_refs)
    T["fuel_used_l_per_100km"] = (
        '=IF({co2e_basis}="fuel",IF({fuel_empty_l_per_100km}="",{fuel_l_per_100km},'
        "{fuel_empty_l_per_100km}+({fuel_l_per_100km}-{fuel_empty_l_per_100km})*{load_factor}),0)"
    ).format(**row_refs)
    T["co2e_kg"] = ('=IF({co2e_basis}="fuel",{vehicles}*{distance_km}*{fuel_used_l_per_100km}/100*'
                    "{wtw_co2e_kg_per_litre},{tonne_km}*{intensity_g_per_tkm}/1000)").format(**row_refs)
    r = 0
    for r, run in enumerate(runs, start=1):
        x = r + 1
        if key is not None:
            out.write_string(r, 0, cell_text(key[1][r - 1]))
        k = None if key is None else key[1][r - 1]
        g, card = run.leg, run.leg.card

        def legs_sum(col: str, run=run, k=k) -> str:
            """The loads' Legs cells of column `col`, added in load order."""
            at = [ranges[sid if k is None else (k, sid)] for sid in run.loads]
            return "+".join(f"{sheet_ref(a[0])}!{L[col]}{a[1] + own.seq - 1}"
                            for a, own in zip(at, run.load_legs))

        shipments = ", ".join(run.loads) if run.loads else "empty return for " + ", ".join(run.empty_for)
        text = {"run_id": run.run_id, "lane_id": g.use.lane.lane_id, "from_depot": g.use.from_depot,
                "to_depot": g.use.to_depot, "mode": g.use.lane.mode, "vehicle": card.vehicle,
                "shipments": shipments, "co2e_basis": g.co2e_basis}
        for name, value in text.items():
            out.write_string(r, COL[name], cell_text(value))
        if run.day is not None:
            out.write_datetime(r, COL["date"], _dt.datetime.combine(run.day, _dt.time()), f["date"])
        pallets = sum(run.pallets)
        volume = sum(run.volumes)
        numbers = {"vehicles": run.vehicles, "loads": len(run.loads), "pallets": pallets,
                   "volume_m3": volume, "payload_t": card.payload_t, "pallet_places": card.pallet_places,
                   "capacity_m3": card.volume_m3, "distance_km": g.use.km, "drive_hours": g.use.hours,
                   "paid_stop_hours": g.paid_stop_hours}
        for name in ("per_km", "per_hour", "toll", "fixed_cost_rate", "fuel_l_per_100km", "fuel_price",
                     "fuel_included_at", "handling_start_rate", "handling_end_rate", "per_trip",
                     "co2e_kg_per_litre", "intensity_g_per_tkm"):
            numbers[name] = LEG_CELLS[name][0](None, g)
        for name, value in numbers.items():
            if value is not None:
                out.write_number(r, COL[name], value)
        if run.loads:
            out.write_formula(r, COL["tonnes"], "=" + legs_sum("weight_t"), f["plain"], run.tonnes)
        else:  # an empty return
            out.write_number(r, COL["tonnes"], 0.0)
        fills = (("fill_weight", "tonnes", run.tonnes, card.payload_t),
                 ("fill_pallets", "pallets", pallets, card.pallet_places),
                 ("fill_volume", "volume_m3", volume, card.volume_m3))
        for name, amount_col, amount, cap in fills:
            cap_col = {"fill_weight": "payload_t", "fill_pallets": "pallet_places",
                       "fill_volume": "capacity_m3"}[name]
            value = _fill(amount, run.vehicles, cap)
            if value is not None:
                fill = f"={R[amount_col]}{x}/({R['vehicles']}{x}*{R[cap_col]}{x})"
                out.write_formula(r, COL[name], fill, f["pct"], value)
        for name in cost_names:
            out.write_formula(r, COL[name], T[name].format(x=x), f["money"], LEG_CELLS[name][0](None, g))
        out.write_formula(r, COL["run_cost"], T["run_cost"].format(x=x), f["money"], run.run_cost)
        if not run.loads:  # an empty return: no loads, no tonne-km, shared as Summary empty_return_cost
            out.write_number(r, COL["tonne_km"], 0.0)
        else:
            standalone = round_money(run.standalone_cost, w.places)
            out.write_formula(r, COL["standalone_cost"], "=" + w.round_f(legs_sum("leg_cost")), f["money"],
                             standalone)
            saving = w.round_f(f"{R['standalone_cost']}{x}-{R['run_cost']}{x}")
            out.write_formula(r, COL["saving"], "=" + saving, f["money"],
                             round_money(standalone - run.run_cost, w.places))
            out.write_formula(r, COL["tonne_km"], "=" + legs_sum("tonne_km"), f["km"], run.tonne_km)
        # emissions of the run's vehicles at the run's load (the Legs formulas, for the run)
        lf = min(1.0, run.tonnes / run.vehicles / card.payload_t)
        out.write_formula(r, COL["load_factor"], T["load_factor"].format(x=x), f["plain"], lf)
        if card.fuel_empty_l_per_100km is not None:
            out.write_number(r, COL["fuel_empty_l_per_100km"], card.fuel_empty_l_per_100km)
        if g.wtw_kg_per_litre is not None:
            out.write_number(r, COL["wtw_co2e_kg_per_litre"], g.wtw_kg_per_litre)
        fuel = fuel_use(card, lf) if g.co2e_basis == "fuel" else 0.0
        out.write_formula(r, COL["fuel_used_l_per_100km"], T["fuel_used_l_per_100km"].format(x=x), f["plain"],
                         fuel)
        out.write_formula(r, COL["co2e_kg"], T["co2e_kg"].format(x=x), f["kg"], run.co2e_kg)
    out.finish()
    ws.autofilter(0, 0, max(r, 1), len(columns) - 1)
    return r + 1
