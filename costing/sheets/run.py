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
from costing.contract.outputs import LEG, SUM
from costing.model import ERROR, INFO, WARNING, Model
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import CAUTION, Writer, cell_text, sheet_ref


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
               n_legs: int) -> None:
    """The Run sheet: tool, time, input SHA-256, every setting used, statistics, cautions, and
    the reconciliation (legs + uplifts = Summary TOTAL, difference 0) as live formulas.
    `last` is the 0-based index of the last Summary shipment row (`write_summary`), `n_legs`
    the number of legs."""
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
             "vehicle states; larger ones choose on driving hours); distance, emissions and the "
             "trade-offs do not carry it. Planning estimate, not compliance advice."
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
    routed = [x for x in results if x.status == ROUTED]
    leg_total = round_money(sum(leg.leg_cost for x in routed for leg in x.legs), w.places)
    uplift = round_money(sum(x.min_charge_uplift for x in routed), w.places)
    total = round_money(sum(x.total_cost for x in routed), w.places)
    r += 2
    ws.write_string(r, 0, "reconciliation", f["bold"])
    recon = [
        ("sum of Legs leg_cost", w.round_f("+".join(
            f"SUM({sheet_ref(sheet)}!{L['leg_cost']}2:{L['leg_cost']}{max(last, 2)})"
            for sheet, last in w.legs_last.items())), leg_total),
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
