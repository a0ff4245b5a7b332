"""The Run sheet: what was run on what (input SHA-256, settings, statistics, cautions) and the
reconciliation that proves the totals (difference 0)."""

from __future__ import annotations

import datetime as _dt
import os
import re
from dataclasses import dataclass, field

from xlsxwriter.utility import xl_col_to_name

from costing import __version__
from costing.contract import outputs as out
from costing.contract.outputs import LEG, RUN_COL, SUM
from costing.model import ERROR, INFO, WARNING, Model
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import CAUTION, Writer, cell_text, leg_value, sheet_ref


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


def bound_rows(bounds: dict[str, str]) -> list[tuple[str, str]]:
    """The A* bounds used, one line per objective: how many networks, the range of r_min, and
    any network searched without a bound."""

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


def write_run(w: Writer, ws, model: Model, results, problems, info: RunInfo, last: int,
               n_legs: int, runs=(), n_carrier: int = 0) -> None:
    """The Run sheet: tool, time, input SHA-256, every setting used, statistics, cautions, and
    the reconciliation as live formulas: the vehicle runs' costs equal the legs' shares
    (difference 0), and runs + minimum-charge uplifts of shipments sharing no vehicle + the
    Carrier charges used (shipments and parts of routes bought) equal the Summary TOTAL
    (difference 0).
    `last` is the 0-based index of the last Summary shipment row (`write_summary`), `n_legs` the
    number of legs, `runs` the vehicle runs, `n_carrier` the number of Carrier charges rows."""
    ws.fit_to_pages(1, 0)  # one page wide, as many long as it takes
    ws.set_column(0, 0, 36)
    ws.set_column(1, 1, 90, w.f["wrap"])
    f = w.f
    rows: list[tuple[str, object]] = [
        (out.RUN_TOOL, f"costing {__version__}"),
        (out.RUN_AT, info.created.strftime("%Y-%m-%d %H:%M:%S")),
        (out.RUN_INPUT_NAME, info.input_name),
        (out.RUN_INPUT_SHA256, info.input_sha256),
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
        rows.append((f"{out.RUN_SETTING_PREFIX}{name}", "(blank: default)" if v is None else v))
    counts: dict[str, int] = {}
    for x in results:
        counts[x.status] = counts.get(x.status, 0) + 1
    rows += [
        ("shipments", len(results)),
        ("routed", counts.get("routed", 0)),
        ("no_route", counts.get("no_route", 0)),
        ("rejected", counts.get("rejected", 0)),
        ("legs", n_legs),
        ("vehicle runs", f"{len(runs)} runs, {sum(r.vehicles for r in runs)} vehicles; "
                         f"{sum(len(r.loads) > 1 for r in runs)} runs carry more than one shipment "
                         f"(consolidate = {s.consolidate})"),
        ("consolidation", "shipments ready on the same day share vehicle runs on the lane steps they have "
                          "in common (same rate card and per-vehicle charges), packed by weight, pallet "
                          "places and volume; each pays a tonne-km share of its runs, never more than its "
                          "leg alone (costing.plan.week)" if s.consolidate == "yes" else
                          "off: every shipment has vehicles of its own"),
        ("carrier tariffs", f"{len(model.tariffs)} tariff rows; {n_carrier} Carrier charges rows: "
                            f"{sum(1 for x in results if x.bought)} shipments bought whole, "
                            f"{sum(len(x.parts) for x in results)} parts of routes bought (collection or "
                            "delivery, the trunk on own vehicles); each shipment goes the way that costs "
                            "the week less (costing.plan.buy)"
         if model.tariffs else "none: every shipment on own vehicles"),
        *_currency_rows(model),
        ("problems: errors / warnings / info",
         "{} / {} / {}".format(*(len({(p.sheet, p.cell, p.message) for p in problems if p.severity == k})
                                 for k in (ERROR, WARNING, INFO)))),
    ]
    from costing.price.rates import DEFAULT_FACTORS, DIESEL_WTT_KG_PER_LITRE, DIESEL_WTT_SOURCE
    from costing.price.rules import rules_for

    rules = rules_for(s)
    if rules:
        rows += [
            ("driving rules",
             f"{rules.name}: break of {rules.break_hours:g} h after {rules.break_after:g} h driving; "
             f"daily rest of {rules.daily_rest:g} h after {rules.daily_driving:g} h driving"
             + (f", {rules.extended_driving:g} h on at most {rules.extended_days} days"
                if rules.extended_driving else "")
             + (f"; rests of {rules.reduced_rest:g} h at most {rules.reduced_rests} times"
                if rules.reduced_rest else "")
             + (f"; no driving after {rules.duty_window:g} h on duty (loading, driving and breaks "
                "count)" if rules.duty_window else "")
             + " (road legs; one driver per vehicle, rested at each change of vehicle; stops as "
               "soon as due; weekly limits not modelled)"),
            ("driving rules: source", rules.source),
            ("driving rules: route choice",
             "the search carries the driving clock (driving since the last break, driving today): "
             "the time, cost and blended objectives choose routes with their breaks and rests and "
             "their pay, exact under the stop model above (on networks of up to 50,000 depot and "
             "vehicle states; larger ones choose on driving hours); the cost-time trade-offs carry "
             "it too (elapsed hours, stop pay); distance and emissions do not. Planning estimate, "
             "not compliance advice."
             if s.driving_clock_in_search == "yes" else
             "routes are chosen on driving and handling hours; breaks and rests are then added to "
             "the chosen route and costed"),
        ]
    else:
        rows.append(("driving rules", "none: hours are driving plus handling, no breaks or rests"))
    rows += [
        ("emissions basis", "well-to-wheel (WTW) CO2e, as ISO 14083:2023 and the GLEC Framework ask, "
                            "with its tank-to-wheel (TTW) part beside it (co2e_kg, co2e_ttw_kg), per "
                            "leg and shipment, with tonne-km (weight_t x km) and g CO2e per tonne-km. "
                            "Planning estimate, not compliance advice."),
        ("emissions: fuel basis", "litres = vehicles x km x fuel use at the leg's load / 100 (straight "
                                  "line from fuel_empty_l_per_100km empty to fuel_l_per_100km fully "
                                  "laden, as the DEFRA 2007 load-dependent road table is); TTW = litres "
                                  "x co2e_kg_per_litre, WTW = litres x wtw_co2e_kg_per_litre"),
        ("emissions: well-to-tank of diesel", "used where a rate card's wtw_co2e_kg_per_litre is blank: "
                                              f"co2e_kg_per_litre + {DIESEL_WTT_KG_PER_LITRE:g} kg CO2e "
                                              f"per litre; {DIESEL_WTT_SOURCE}"),
    ]
    for mode, fct in DEFAULT_FACTORS.items():
        rows.append((f"default CO2e intensity: {mode}",
                     f"{fct.wtw:g} g CO2e per tonne-km WTW ({fct.ttw:g} TTW); source: {fct.source}; "
                     f"year: {fct.year}; basis: {fct.basis}"))
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
    rows += bound_rows(st.bounds)
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
            text = cell_text(v)
            ws.write_string(r, 1, text, f["wrap"])
            if len(text) > 95:  # wrapped text needs a taller row in print
                ws.set_row(r, 15 * min(20, -(-len(text) // 95)))
        else:
            ws.write_number(r, 1, v)
    # reconciliation: the totals tie out
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}
    S = {name: xl_col_to_name(i) for name, i in SUM.items()}
    R = {name: xl_col_to_name(i) for name, i in RUN_COL.items()}
    routed = [x for x in results if x.status == ROUTED]
    run_total = round_money(sum(run.run_cost for run in runs), w.places)
    share_total = round_money(sum(leg_value(leg, "cost_share") for x in routed for leg in x.legs)
                              + sum(x.empty_return_cost for x in routed), w.places)
    uplift = round_money(sum(x.min_charge_uplift for x in routed if not x.shared_with), w.places)
    bought = round_money(sum(x.total_cost for x in routed if x.bought)
                         + sum(x.parts_cost for x in routed if x.parts), w.places)
    total = round_money(sum(x.total_cost for x in routed), w.places)
    r += 2
    ws.write_string(r, 0, "reconciliation", f["bold"])
    vr = sheet_ref(out.VEHICLE_RUNS)
    n_summary = last + 1
    recon = [
        ("sum of Vehicle runs run_cost",
         w.round_f(f"SUM({vr}!{R['run_cost']}2:{R['run_cost']}{max(len(runs) + 1, 2)})"), run_total),
        ("sum of Legs cost_share and Summary empty_return_cost", w.round_f("+".join(
            f"SUM({sheet_ref(sheet)}!{L['cost_share']}2:{L['cost_share']}{max(last, 2)})"
            for sheet, last in w.legs_last.items())
            + f"+SUM(Summary!{S['empty_return_cost']}2:{S['empty_return_cost']}{last + 1})"), share_total),
    ]
    r = _recon_rows(w, ws, r, recon)
    r += 1
    ws.write_string(r, 0, "difference runs - shares (must be 0)")
    ws.write_formula(r, 1, "=" + w.round_f(f"B{r - 1}-B{r}"), f["money"],
                     round_money(run_total - share_total, w.places))
    runs_row = r - 1  # 1-based row of the runs' total is r - 1 (0-based r - 2)
    recon = [
        ("plus min_charge_uplift of shipments sharing no vehicle",
         w.round_f(f"SUMPRODUCT((Summary!{S['travels_with']}2:{S['travels_with']}{n_summary}=\"\")*"
                   f"(Summary!{S['min_charge_uplift']}2:{S['min_charge_uplift']}{n_summary}))"), uplift),
        ("plus Carrier charges used (shipments and parts of routes bought from carriers)",
         _bought_expr(w, n_carrier), bought),
        ("equals Summary total_cost (TOTAL row)", f"Summary!{S['total_cost']}{last + 2}", total),
    ]
    r = _recon_rows(w, ws, r, recon)
    r += 1
    ws.write_string(r, 0, "difference (must be 0)")
    ws.write_formula(r, 1, "=" + w.round_f(f"B{runs_row}+B{r - 2}+B{r - 1}-B{r}"), f["money"],
                     round_money(run_total + uplift + bought - total, w.places))


def _recon_rows(w: Writer, ws, r: int, rows) -> int:
    """Write reconciliation rows (label, formula, cached value) below row `r`; returns the last row."""
    for label, expr, value in rows:
        r += 1
        ws.write_string(r, 0, label)
        ws.write_formula(r, 1, "=" + expr, w.f["money"], value)
    return r


def _currency_rows(model: Model) -> list[tuple[str, str]]:
    """One row per exchange rate of the Currencies sheet: the rate and which input rows use it."""
    cur = model.settings.currency
    rows = []
    for code, rate in model.currencies.items():
        cards = [str(c.row) for c in model.rates if c.currency == code]
        tariffs = [str(t.row) for t in model.tariffs if t.currency == code]
        uses = []
        if cards:
            uses.append(f"Rates rows {', '.join(cards)}: per_km, per_hour, per_trip, min_charge and "
                        f"fuel_included_at converted at input (the Legs and Vehicle runs show them in "
                        f"{cur}; each figure as typed and converted on the Currency conversion sheet)")
        if tariffs:
            uses.append(f"Tariffs rows {', '.join(tariffs)}: priced in {code}, converted on the Carrier "
                        f"charges and Currency conversion sheets (charge = ROUND(price x rate), {cur}'s "
                        "minor unit)")
        rows.append((f"exchange rate: {code}", f"{rate:.10g} {cur} per {code}"
                     + ("; " + "; ".join(uses) if uses else "; not used")))
    return rows


def _bought_expr(w: Writer, n_carrier: int) -> str:
    """ROUND(SUMIFS(charge, used, "yes")) over the Carrier charges rows; 0 without the sheet."""
    if not n_carrier:
        return w.round_f("0")
    cc = sheet_ref(out.CARRIER_CHARGES)
    col = {name: xl_col_to_name(i) for name, i in out.CARRIER_COL.items()}
    last = n_carrier + 1
    return w.round_f(f"SUMIFS({cc}!{col['charge']}2:{col['charge']}{last},"
                     f"{cc}!{col['used']}2:{col['used']}{last},\"yes\")")
