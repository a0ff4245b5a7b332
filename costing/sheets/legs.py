"""The Legs sheet: one row per leg, every cost component a live formula over the leg's own cells with
its value cached; Legs continue on further sheets at the row limit (Legs 2, ...)."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LEG, LEG_COLUMNS, LEGS, RUN_COL, VEHICLE_RUNS
from costing.errors import OutputLimitError
from costing.sheets import rowxml
from costing.sheets.formats import MAX_ROWS, Writer, basis, cell_text, leg_value, sheet_ref
from costing.sheets.rowxml import FORMULA, NUMBER, TEXT, Column, RowBlock, Shape

# Per Legs column: the cached value (from the result r and leg g) and the formula, if any.
LEG_CELLS = {
    "shipment_id": (lambda r, g: r.shipment.shipment_id, None),
    "seq": (lambda r, g: g.seq, None),
    "lane_id": (lambda r, g: g.use.lane.lane_id, None),
    "from_depot": (lambda r, g: g.use.from_depot, None),
    "to_depot": (lambda r, g: g.use.to_depot, None),
    "mode": (lambda r, g: g.use.lane.mode, None),
    "vehicle": (lambda r, g: g.card.vehicle, None),
    "vehicles": (lambda r, g: g.vehicles, None),
    "weight_t": (lambda r, g: g.weight_t, None),
    "distance_km": (lambda r, g: g.use.km, None),
    "km_basis": (lambda r, g: basis(g.use.km_estimated), None),
    "drive_hours": (lambda r, g: g.use.hours, None),
    "hours_basis": (lambda r, g: basis(g.use.hours_estimated), None),
    "break_hours": (lambda r, g: g.break_hours, None),
    "rest_hours": (lambda r, g: g.rest_hours, None),
    "handling_hours": (lambda r, g: g.handling_hours, None),
    "elapsed_hours": (lambda r, g: g.elapsed_hours,
                      "{drive_hours}+{break_hours}+{rest_hours}+{handling_hours}"),
    "paid_stop_hours": (lambda r, g: g.paid_stop_hours, None),
    "per_km": (lambda r, g: g.card.per_km, None),
    "per_hour": (lambda r, g: g.card.per_hour, None),
    "toll": (lambda r, g: g.toll_rate, None),  # of the card's toll class
    "fixed_cost_rate": (lambda r, g: g.use.lane.fixed_cost, None),
    "fuel_l_per_100km": (lambda r, g: g.card.fuel_l_per_100km, None),
    "fuel_price": (lambda r, g: g.fuel_price, None),
    "fuel_included_at": (lambda r, g: g.card.fuel_included_at if g.fuel_price is not None else None,
                         None),
    "handling_start_rate": (lambda r, g: g.start_handling_rate, None),
    "handling_end_rate": (lambda r, g: g.end_handling_rate, None),
    "per_trip": (lambda r, g: g.trip_rate, None),
    "km_cost": (lambda r, g: g.km_cost, "ROUND({vehicles}*{distance_km}*{per_km},{d})"),
    "hour_cost": (lambda r, g: g.hour_cost, "ROUND({vehicles}*{drive_hours}*{per_hour},{d})"),
    "toll_cost": (lambda r, g: g.toll_cost, "ROUND({vehicles}*{toll},{d})"),
    "fixed_cost": (lambda r, g: g.fixed_cost, "ROUND({vehicles}*{fixed_cost_rate},{d})"),
    "fuel_surcharge": (lambda r, g: g.fuel_surcharge,
        'IF(OR({fuel_price}="",{fuel_included_at}="",{fuel_l_per_100km}=""),0,'
        "ROUND({vehicles}*{distance_km}*{fuel_l_per_100km}/100*({fuel_price}-{fuel_included_at}),{d}))"),
    "stop_cost": (lambda r, g: g.stop_cost, "ROUND({vehicles}*{paid_stop_hours}*{per_hour},{d})"),
    "handling_start_cost": (lambda r, g: g.start_handling_cost,
                            "ROUND({vehicles}*{handling_start_rate},{d})"),
    "handling_end_cost": (lambda r, g: g.end_handling_cost, "ROUND({vehicles}*{handling_end_rate},{d})"),
    "trip_cost": (lambda r, g: g.trip_cost, "ROUND({vehicles}*{per_trip},{d})"),
    "leg_cost": (lambda r, g: g.leg_cost, "ROUND(SUM({km_cost}:{trip_cost}),{d})"),
    "co2e_kg_per_litre": (lambda r, g: g.card.co2e_kg_per_litre, None),
    "co2e_basis": (lambda r, g: g.co2e_basis, None),
    "intensity_g_per_tkm": (lambda r, g: g.intensity_g_per_tkm, None),
    "co2e_kg": (lambda r, g: g.co2e_kg,
        'IF({co2e_basis}="fuel",{vehicles}*{distance_km}*{fuel_used_l_per_100km}/100*'
        "{wtw_co2e_kg_per_litre},{weight_t}*{distance_km}*{intensity_g_per_tkm}/1000)"),
    # emissions on a stated basis (issue 12)
    "payload_t": (lambda r, g: g.card.payload_t, None),
    "load_factor": (lambda r, g: g.load_factor, "MIN(1,{weight_t}/{vehicles}/{payload_t})"),
    "fuel_empty_l_per_100km": (lambda r, g: g.card.fuel_empty_l_per_100km, None),
    "fuel_used_l_per_100km": (lambda r, g: g.fuel_used_l_per_100km or 0.0,
        'IF({co2e_basis}="fuel",IF({fuel_empty_l_per_100km}="",{fuel_l_per_100km},'
        "{fuel_empty_l_per_100km}+({fuel_l_per_100km}-{fuel_empty_l_per_100km})*{load_factor}),0)"),
    "wtw_co2e_kg_per_litre": (lambda r, g: g.wtw_kg_per_litre, None),
    "ttw_intensity_g_per_tkm": (lambda r, g: g.ttw_intensity_g_per_tkm, None),
    "co2e_ttw_kg": (lambda r, g: g.co2e_ttw_kg,
        'IF({co2e_basis}="fuel",{vehicles}*{distance_km}*{fuel_used_l_per_100km}/100*'
        "{co2e_kg_per_litre},{weight_t}*{distance_km}*{ttw_intensity_g_per_tkm}/1000)"),
    "tonne_km": (lambda r, g: g.tonne_km, "{weight_t}*{distance_km}"),
    "co2e_g_per_tkm": (lambda r, g: g.co2e_g_per_tkm, "IF({tonne_km}=0,0,{co2e_kg}*1000/{tonne_km})"),
    "toll_class": (lambda r, g: g.toll_class, None),
    "run_id": (lambda r, g: g.run_id, None),
    # the leg's share of its run (Vehicle runs): tonne-km share of run_cost, in the order of
    # costing.plan.week._quota, plus the largest-remainder (and cap) adjustment
    "cost_share": (lambda r, g: leg_value(g, "cost_share"),
        "ROUND(IF({run_tkm}={tonne_km},{run_cost},IF({run_tkm}=0,{run_cost}/{run_loads},"
        "{run_cost}*{tonne_km}/{run_tkm})),{d})+{share_adjust}"),
    "share_adjust": (lambda r, g: g.share_adjust, None),
    "co2e_share": (lambda r, g: leg_value(g, "co2e_share"),
        "IF({run_tkm}={tonne_km},{run_co2e},IF({run_tkm}=0,{run_co2e}/{run_loads},"
        "{run_co2e}*{tonne_km}/{run_tkm}))"),
}
LEG_SPEC = [(name, width, kind, *LEG_CELLS[name]) for name, width, kind in LEG_COLUMNS]


# data rows per Legs sheet; more legs continue on "Legs 2", "Legs 3", ...
LEGS_SHEET_ROWS = MAX_ROWS - 1


# The formulas of a leg's own cells written as shared formulas over up to rowxml.SHARED_ROWS rows
# next to each other (the fast path only); False: every cell with its own formula text.
SHARED = True


# width of the key column of a long sheet of several runs (write_legs' `key`), characters
KEY_WIDTH = 14


# from this many legs on, rows are streamed to disk instead of held in memory
STREAMING_LEGS = 100_000


# Cost components collapsed when 0 on every leg written, each with the rate columns that only
# feed it (hidden with them when they are empty or 0 on every leg too); the columns stay, grouped
# (outline level 1) and hidden, one click on the outline's + shows them.
COLLAPSIBLE = {
    "toll_cost": ("toll",),
    "fixed_cost": ("fixed_cost_rate",),
    "fuel_surcharge": ("fuel_price", "fuel_included_at"),
    "stop_cost": ("paid_stop_hours",),
    "handling_start_cost": ("handling_start_rate",),
    "handling_end_cost": ("handling_end_rate",),
    "trip_cost": ("per_trip",),
}


# the columns COLLAPSIBLE names, which zero_columns looks at
WATCHED = tuple(dict.fromkeys(name for cost, rates in COLLAPSIBLE.items() for name in (cost, *rates)))


def zero_columns(results, zeros: set[str] | None = None) -> list[str]:
    """The LEG_COLUMNS names to collapse on a sheet of these results' legs: each cost component
    of COLLAPSIBLE that is 0 on every leg, and those of its rate columns that are empty or 0 on
    every leg. `zeros`: the WATCHED names known empty or 0 on every leg (the writer tracks them
    as it writes); None: found from the results. Nothing when there are no legs."""
    if not any(res.legs for res in results):
        return []
    if zeros is None:
        legs = [(res, leg) for res in results for leg in res.legs]
        zeros = {name for name in WATCHED if all(not LEG_CELLS[name][0](res, leg) for res, leg in legs)}

    out = []
    for cost, rates in COLLAPSIBLE.items():
        if cost in zeros:
            out.append(cost)
            out.extend(r for r in rates if r in zeros)
    return out


def collapse(ws, columns: list[str], shift: int = 0) -> None:
    """Group and hide the Legs `columns` of `ws` (LEG_COLUMNS names; `shift` columns to the
    right on a keyed sheet); their widths stay the layout's."""
    lay = getattr(ws, "_costing_layout", None)
    for name in columns:
        c = LEG[name] + shift
        info = ws.col_info.get(c)  # the column's format and declared width stay
        ws.set_column(c, c, lay.declared.get(c) if lay is not None else None,
                      info.column_format if info is not None else None, {"level": 1, "hidden": True})
    if columns:
        ws.outline_settings(True, False, True, False)  # the + above the columns shows them


def legs_sheet_names(results, base: str = LEGS) -> list[str]:
    """Names of the Legs sheets the results need (Legs, Legs 2, ...; `base`, `base` 2, ... for
    another long sheet of legs), at most LEGS_SHEET_ROWS legs each; a shipment's legs are never
    split across two sheets."""
    names, used = [base], 0
    for res in results:
        n = len(res.legs)
        if n > LEGS_SHEET_ROWS:
            raise OutputLimitError(f"shipment {res.shipment.shipment_id} has {n:,} legs, more than a sheet "
                                   "holds", "check the lanes of this shipment")
        if used + n > LEGS_SHEET_ROWS:
            names.append(f"{base} {len(names) + 1}")
            used = 0
        used += n
    return names


def _shapes(w: Writer, shift: int, letters: dict[str, str], runs: str, run_letter: dict[str, str],
            keyed: bool) -> dict[bool, Shape]:
    """The two row shapes of a Legs sheet (costing.sheets.rowxml): a leg of a vehicle run (its
    share formulas name the run's row ``{rr}`` on the runs sheet) and a leg that is its own run.
    The formulas are LEG_CELLS' own, with this row as ``{r}``; those that name no run cell refer
    to the leg's own row only and are the same in both shapes, so they are shared (SHARED)."""
    own = {name: f"{col}{{r}}" for name, col in letters.items()}
    own["d"] = str(w.places)
    planned = {**own, **{ref: f"{runs}!{col}{{rr}}" for ref, col in run_letter.items()}}
    alone = {**own, "run_cost": own["leg_cost"], "run_tkm": own["tonne_km"], "run_co2e": own["co2e_kg"],
             "run_loads": "1"}
    shapes = {}
    for is_planned, refs in ((True, planned), (False, alone)):
        cols = [Column(0, TEXT)] if keyed else []
        for c, (_name, _width, kind, _value_of, formula) in enumerate(LEG_SPEC, start=shift):
            if formula is not None:  # a formula of the leg's own cells only: filled down, shared
                cols.append(Column(c, FORMULA, w.f[kind], formula.format(**refs),
                                   shared=SHARED and "{run_" not in formula))
            else:
                cols.append(Column(c, TEXT if kind == "text" else NUMBER))
        shapes[is_planned] = Shape(cols)
    return shapes


def _attr_path(fn) -> tuple[int, str] | None:
    """(0 for the result, 1 for the leg, "a.b") when the cell function `fn` only reads an attribute
    chain of one of its two arguments (``lambda r, g: g.card.per_km`` is (1, "card.per_km")), read
    from its bytecode; None for any other function."""
    import dis

    code = getattr(fn, "__code__", None)
    if code is None or code.co_argcount != 2:
        return None
    ins = [i for i in dis.get_instructions(fn) if i.opname not in ("RESUME", "NOP", "CACHE", "PRECALL")]
    if len(ins) < 3 or ins[0].opname != "LOAD_FAST" or ins[-1].opname != "RETURN_VALUE":
        return None
    if ins[0].argval not in code.co_varnames[:2] or any(i.opname != "LOAD_ATTR" for i in ins[1:-1]):
        return None
    return code.co_varnames.index(ins[0].argval), ".".join(i.argval for i in ins[1:-1])


def _compile_row_values():
    """A function (result, leg) -> the values of the leg's Legs row, in LEG_COLUMNS order, as
    ``[cell_text(f(res, leg)) if text else f(res, leg) for each column's cell function f]``, in one
    list expression: a cell function that only reads attributes (`_attr_path`) is read in line,
    the others are called."""
    scope = {"cell_text": cell_text}
    items = []
    for k, (_name, _width, kind, fn, _formula) in enumerate(LEG_SPEC):
        path = _attr_path(fn)
        if path is None:
            scope[f"f{k}"] = fn
            expr = f"f{k}(r, g)"
        else:
            expr = ("r", "g")[path[0]] + "." + path[1]
        items.append(f"cell_text({expr})" if kind == "text" else expr)
    source = f"def row_values(r, g):\n    return [{', '.join(items)}]\n"
    exec(compile(source, "<costing.sheets.legs row values>", "exec"), scope)  # noqa: S102
    return scope["row_values"]


row_values = _compile_row_values()


def write_legs(w: Writer, legs_sheets, results, key: tuple[str, list[str]] | None = None,
               runs_sheet: str = VEHICLE_RUNS, run_row=None, runs_shift: int = 0,
               fast: bool | None = None) -> tuple[dict, dict[str, int]]:
    """Legs rows, continuing on further sheets at the row limit. Returns shipment id ->
    (sheet, first row, last row) (1-based) and sheet -> its last data row.

    `key` = (header, one text per result) writes a long sheet of several runs (the scenarios):
    a first column of that header holds each result's key, the Legs columns follow with the same
    formulas, and the ranges are keyed by (key, shipment id).

    Each leg's share formulas refer to its vehicle run's row on `runs_sheet` (Vehicle runs, whose
    run R0001 is on row 2; `run_row(key or None, run_id)` gives the row on another such sheet,
    whose columns start `runs_shift` columns to the right).

    `fast` writes the rows as XML from the two row shapes (costing.sheets.rowxml); False writes
    them cell by cell through xlsxwriter (the reference the fast path is tested against); None
    takes costing.sheets.rowxml.FAST_ROWS."""
    fast = rowxml.FAST_ROWS if fast is None else fast
    columns = LEG_COLUMNS if key is None else [(key[0], KEY_WIDTH, "text"), *LEG_COLUMNS]
    shift = len(columns) - len(LEG_COLUMNS)
    letters = {name: xl_col_to_name(i + shift) for name, i in LEG.items()}
    runs = sheet_ref(runs_sheet)
    run_letter = {ref: xl_col_to_name(RUN_COL[name] + runs_shift) for ref, name in
                  (("run_cost", "run_cost"), ("run_tkm", "tonne_km"), ("run_co2e", "co2e_kg"),
                   ("run_loads", "loads"))}
    if run_row is None:
        def run_row(_key, run_id):
            return int(run_id[1:]) + 1
    ranges: dict = {}
    last: dict[str, int] = {}
    k = 0
    name, ws = legs_sheets[0]
    w.header(ws, columns)
    shapes = _shapes(w, shift, letters, runs, run_letter, key is not None) if fast else None
    block = RowBlock(ws, 1) if fast else None
    watched = [LEG[name] for name in WATCHED]  # fast path: those still empty or 0 on every leg
    r = 1
    for i, res in enumerate(results):
        if not res.legs:
            continue
        if r - 1 + len(res.legs) > LEGS_SHEET_ROWS:
            if block is not None:
                block.finish()
            ws.autofilter(0, 0, max(r - 1, 1), len(columns) - 1)
            last[name] = r
            k += 1
            name, ws = legs_sheets[k]
            w.header(ws, columns)
            block = RowBlock(ws, 1) if fast else None
            r = 1
        first = r
        if block is not None:
            row_key = [cell_text(key[1][i])] if key is not None else []
            for leg in res.legs:
                values = row_values(res, leg)
                if watched:
                    watched = [j for j in watched if not values[j]]
                if leg.run_id:
                    block.add(r, shapes[True], row_key + values,
                              run_row(None if key is None else key[1][i], leg.run_id))
                else:
                    block.add(r, shapes[False], row_key + values)
                r += 1
            sid = res.shipment.shipment_id
            ranges[sid if key is None else (key[1][i], sid)] = (name, first + 1, r)
            continue
        for leg in res.legs:
            refs = {col_name: f"{col}{r + 1}" for col_name, col in letters.items()}
            refs["d"] = str(w.places)
            if key is not None:
                ws.write_string(r, 0, cell_text(key[1][i]))
            if leg.run_id:
                rr = run_row(None if key is None else key[1][i], leg.run_id)
                refs.update({ref: f"{runs}!{col}{rr}" for ref, col in run_letter.items()})
            else:  # not planned: the leg is its own run
                refs.update(run_cost=refs["leg_cost"], run_tkm=refs["tonne_km"], run_co2e=refs["co2e_kg"],
                            run_loads="1")
            for c, (_name, _width, kind, value_of, formula) in enumerate(LEG_SPEC, start=shift):
                value = value_of(res, leg)
                if formula is not None:
                    ws.write_formula(r, c, "=" + formula.format(**refs), w.f[kind], value)
                elif kind == "text":
                    ws.write_string(r, c, cell_text(value))
                elif value is not None:
                    ws.write_number(r, c, value)
            r += 1
        sid = res.shipment.shipment_id
        ranges[sid if key is None else (key[1][i], sid)] = (name, first + 1, r)  # 1-based inclusive rows
    if block is not None:
        block.finish()
    ws.autofilter(0, 0, max(r - 1, 1), len(columns) - 1)
    last[name] = r
    hidden = zero_columns(results, {LEG_SPEC[j][0] for j in watched} if fast else None)
    for _name, sheet in legs_sheets[:k + 1]:
        collapse(sheet, hidden, shift)
    return ranges, last
