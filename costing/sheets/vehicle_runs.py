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
from costing.sheets.rowxml import DATE, FORMULA, NUMBER, TEXT, Column, RowSink, Shape


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
    # the row shapes (costing.sheets.rowxml): by whether the run has a day, loads, and each of
    # its three fill rates; each with the list of its columns' names
    tpl = {name: t[1:].replace("{x}", "{r}") for name, t in T.items()}
    if out.fast:  # our functions only: the worksheet would write each text as it is
        assert all(ws._prepare_formula("=" + t) == t for t in tpl.values())
    fills = (("fill_weight", "tonnes", "payload_t"), ("fill_pallets", "pallets", "pallet_places"),
             ("fill_volume", "volume_m3", "capacity_m3"))
    for name, amount_col, cap_col in fills:
        tpl[name] = f"{R[amount_col]}{{r}}/({R['vehicles']}{{r}}*{R[cap_col]}{{r}})"
    tpl["saving"] = w.round_f(f"{R['standalone_cost']}{{r}}-{R['run_cost']}{{r}}")
    texts = ("run_id", "lane_id", "from_depot", "to_depot", "mode", "vehicle", "shipments", "co2e_basis")
    rate_names = ("per_km", "per_hour", "toll", "fixed_cost_rate", "fuel_l_per_100km", "fuel_price",
                  "fuel_included_at", "handling_start_rate", "handling_end_rate", "per_trip",
                  "co2e_kg_per_litre", "intensity_g_per_tkm")
    plain_numbers = ("vehicles", "loads", "pallets", "volume_m3", "payload_t", "pallet_places", "capacity_m3",
                     "distance_km", "drive_hours", "paid_stop_hours", *rate_names,
                     "fuel_empty_l_per_100km", "wtw_co2e_kg_per_litre")
    shapes: dict[tuple, tuple[Shape, list[str]]] = {}

    def shape_of(variant: tuple) -> tuple[Shape, list[str]]:
        dated, loaded, fill_on = variant
        cols = [("key", Column(0, TEXT))] if key is not None else []
        cols += [(name, Column(COL[name], TEXT)) for name in texts]
        if dated:
            cols.append(("date", Column(COL["date"], DATE, f["date"])))
        cols += [(name, Column(COL[name], NUMBER)) for name in plain_numbers]
        cols.append(("tonnes", Column(COL["tonnes"], FORMULA, f["plain"]) if loaded else
                     Column(COL["tonnes"], NUMBER)))
        cols += [(name, Column(COL[name], FORMULA, f["pct"], tpl[name]))
                 for (name, _a, _c), on in zip(fills, fill_on) if on]
        cols += [(name, Column(COL[name], FORMULA, f["money"], tpl[name]))
                 for name in (*cost_names, "run_cost")]
        if loaded:
            cols += [("standalone_cost", Column(COL["standalone_cost"], FORMULA, f["money"])),
                     ("saving", Column(COL["saving"], FORMULA, f["money"], tpl["saving"])),
                     ("tonne_km", Column(COL["tonne_km"], FORMULA, f["km"]))]
        else:
            cols.append(("tonne_km", Column(COL["tonne_km"], NUMBER)))
        cols += [("load_factor", Column(COL["load_factor"], FORMULA, f["plain"], tpl["load_factor"])),
                 ("fuel_used_l_per_100km", Column(COL["fuel_used_l_per_100km"], FORMULA, f["plain"],
                                                  tpl["fuel_used_l_per_100km"])),
                 ("co2e_kg", Column(COL["co2e_kg"], FORMULA, f["kg"], tpl["co2e_kg"]))]
        cols.sort(key=lambda nc: nc[1].col)
        return Shape([c for _n, c in cols]), [n for n, _c in cols]

    r = 0
    for r, run in enumerate(runs, start=1):
        k = None if key is None else key[1][r - 1]
        g, card = run.leg, run.leg.card

        def legs_sum(col: str, run=run, k=k) -> str:
            """The loads' Legs cells of column `col`, added in load order."""
            at = [ranges[sid if k is None else (k, sid)] for sid in run.loads]
            return "+".join(f"{sheet_ref(a[0])}!{L[col]}{a[1] + own.seq - 1}"
                            for a, own in zip(at, run.load_legs))

        shipments = ", ".join(run.loads) if run.loads else "empty return for " + ", ".join(run.empty_for)
        v = {"run_id": run.run_id, "lane_id": g.use.lane.lane_id, "from_depot": g.use.from_depot,
             "to_depot": g.use.to_depot, "mode": g.use.lane.mode, "vehicle": card.vehicle,
             "shipments": shipments, "co2e_basis": g.co2e_basis}
        v = {name: cell_text(value) for name, value in v.items()}
        if key is not None:
            v["key"] = cell_text(k)
        if run.day is not None:
            v["date"] = _dt.datetime.combine(run.day, _dt.time())
        pallets = sum(run.pallets)
        volume = sum(run.volumes)
        v.update({"vehicles": run.vehicles, "loads": len(run.loads), "pallets": pallets, "volume_m3": volume,
                  "payload_t": card.payload_t, "pallet_places": card.pallet_places,
                  "capacity_m3": card.volume_m3, "distance_km": g.use.km, "drive_hours": g.use.hours,
                  "paid_stop_hours": g.paid_stop_hours,
                  "fuel_empty_l_per_100km": card.fuel_empty_l_per_100km,
                  "wtw_co2e_kg_per_litre": g.wtw_kg_per_litre})
        for name in rate_names:
            v[name] = LEG_CELLS[name][0](None, g)
        loaded = bool(run.loads)
        v["tonnes"] = (legs_sum("weight_t"), run.tonnes) if loaded else 0.0  # an empty return: 0
        amounts = {"tonnes": run.tonnes, "pallets": pallets, "volume_m3": volume}
        caps = {"payload_t": card.payload_t, "pallet_places": card.pallet_places,
                "capacity_m3": card.volume_m3}
        fill_on = []
        for name, amount_col, cap_col in fills:
            v[name] = _fill(amounts[amount_col], run.vehicles, caps[cap_col])
            fill_on.append(v[name] is not None)
        for name in cost_names:
            v[name] = LEG_CELLS[name][0](None, g)
        v["run_cost"] = run.run_cost
        if loaded:
            standalone = round_money(run.standalone_cost, w.places)
            v["standalone_cost"] = (w.round_f(legs_sum("leg_cost")), standalone)
            v["saving"] = round_money(standalone - run.run_cost, w.places)
            v["tonne_km"] = (legs_sum("tonne_km"), run.tonne_km)
        else:  # an empty return: no loads, no tonne-km, shared as Summary empty_return_cost
            v["tonne_km"] = 0.0
        # emissions of the run's vehicles at the run's load (the Legs formulas, for the run)
        lf = min(1.0, run.tonnes / run.vehicles / card.payload_t)
        v["load_factor"] = lf
        v["fuel_used_l_per_100km"] = fuel_use(card, lf) if g.co2e_basis == "fuel" else 0.0
        v["co2e_kg"] = run.co2e_kg
        variant = (run.day is not None, loaded, tuple(fill_on))
        made = shapes.get(variant)
        if made is None:
            made = shapes[variant] = shape_of(variant)
        shape, names = made
        out.add_row(r, shape, [v[name] for name in names])
    out.finish()
    ws.autofilter(0, 0, max(r, 1), len(columns) - 1)
    return r + 1
