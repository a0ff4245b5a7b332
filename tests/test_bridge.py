"""The cost bridge (costing.compare.bridge, costing.sheets.bridge): a two-week example worked by
hand step by step, the steps adding up to the change exactly on seeded random rate changes, the
workbook's live formulas recalculated by LibreOffice, and what is given without the inputs.

The networks, rates and shipments are invented inputs. Expected amounts are worked out by hand in
the comments (the costing formulas are those of the README: ROUND(vehicles x km x per_km) and so
on, half away from zero to the cent); the random test's oracle is plain integer arithmetic on the
results' totals, sharing no code with the bridge."""

from __future__ import annotations

import random

import openpyxl
import pytest

from costing import pipeline
from costing.compare.bridge import MOVES, STEP_KEYS, bridge_results, bridge_workbooks
from costing.compare.diff import compare, read_costed, write_comparison
from costing.contract.outputs import BRIDGE, BRIDGE_SHIPMENTS, BRIDGE_STEPS
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from tests.spreadsheet_app import recalc_mismatches

# ---------------------------------------------------------------------------------------------
# the two weeks, by hand
#
# Depots A, H, B, X (kind depot, no handling). Lanes, two-way, stated km and hours:
#   L1 A-B 100 km 2.0 h;  L2 A-H 60 km 1.0 h;  L3 H-B 80 km 1.5 h;  L4 A-X 50 km 1.0 h
# One rate card, truck/road: per_km 1.00, per_hour 30, payload 20 t, 30 l/100 km, fuel included
# in the rate at 1.50 per litre, no trip charge, no minimum charge. No driving-time rules.
# A leg costs n x km x per_km + n x hours x per_hour + n x km x 30/100 x (fuel price - 1.50),
# each ROUND to the cent, with n = ceil(weight / 20).
#
# Week 1 (fuel 1.50: no surcharge):
#   S1 A->B 10 t, n=1: via L1 100 x 1.00 + 2 x 30 = 160.00 (via H: 140 + 2.5 x 30 = 215.00)
#   S2 A->B 30 t, n=2: via L1 2 x 160.00                 = 320.00
#   S3 A->H  5 t, n=1: L2 60 + 30                        =  90.00
#   S5 A->X  5 t, n=1: L4 50 + 30                        =  80.00
#   total                                                   650.00
# Week 2: per_km 1.10, fuel price 1.70 (surcharge 0.3 x 0.20 = 0.06 per vehicle-km), L1 and L4
# closed, S3 gone, S4 H->B 8 t new, S2 now 50 t (n=3):
#   S1 via H: L2 66.00 + 30.00 + 3.60, L3 88.00 + 45.00 + 4.80      = 237.40
#   S2 via H, n=3: 3 x each of those components                     = 712.20
#   S4 H->B: L3 88.00 + 45.00 + 4.80                                = 137.80
#   S5: no route (L4 closed)                                        =   0
#   total                                                             1,087.40   change +437.40
# The bridge, in its fixed order:
#   removed        S3                                       -90.00
#   added          S4                                      +137.80
#   route_status   S5 lost its route                        -80.00
#   rates          old route L1 at per_km 1.10, fuel 1.50, old weight:
#                  S1 110 + 60 = 170.00 (+10.00); S2 2 x 170 = 340.00 (+20.00)   +30.00
#   fuel           the same at 1.70: + n x 100 x 0.06 = 6.00 per vehicle:
#                  S1 176.00 (+6.00); S2 352.00 (+12.00)                          +18.00
#   load           S2 at 50 t on L1: 3 x 176.00 = 528.00 (+176.00)               +176.00
#   reroute        S1 237.40 - 176.00 = +61.40; S2 712.20 - 528.00 = +184.20      +245.60
#   vehicle, not_separated, consolidation                                           0
#   650.00 - 90.00 + 137.80 - 80.00 + 30.00 + 18.00 + 176.00 + 245.60 = 1,087.40
HAND = {"start": 65000, "removed": -9000, "added": 13780, "route_status": -8000, "rates": 3000,
        "fuel": 1800, "load": 17600, "reroute": 24560, "vehicle": 0, "not_separated": 0,
        "consolidation": 0, "end": 108740}
HAND_BY_SHIPMENT = {  # (step, shipment) -> minor units, from the lines above
    ("removed", "S3"): -9000, ("added", "S4"): 13780, ("route_status", "S5"): -8000,
    ("rates", "S1"): 1000, ("rates", "S2"): 2000, ("fuel", "S1"): 600, ("fuel", "S2"): 1200,
    ("load", "S2"): 17600, ("reroute", "S1"): 6140, ("reroute", "S2"): 18420,
}


def week(n: int) -> dict:
    """Input rows of week `n` (1 or 2), as the comment above describes them."""
    lanes = [("L1", "A", "B", 100, 2.0), ("L2", "A", "H", 60, 1.0), ("L3", "H", "B", 80, 1.5),
             ("L4", "A", "X", 50, 1.0)]
    data = {
        # consolidate = no: the steps worked by hand above price each shipment alone
        "Settings": [{"setting": "currency", "value": "EUR"}, {"setting": "objective", "value": "cost"},
                     {"setting": "fuel_price_per_litre", "value": 1.5 if n == 1 else 1.7},
                     {"setting": "consolidate", "value": "no"}],
        "Depots": [{"depot_id": d, "name": f"Depot {d}", "latitude": lat, "longitude": lon}
                   for d, lat, lon in (("A", 52.0, 5.0), ("H", 52.3, 5.4), ("B", 52.6, 5.9),
                                       ("X", 51.8, 4.7))],
        "Lanes": [{"lane_id": i, "from_depot": a, "to_depot": b, "mode": "road", "distance_km": km,
                   "drive_hours": h, "open": not (n == 2 and i in ("L1", "L4"))}
                  for i, a, b, km, h in lanes],
        "Rates": [{"vehicle": "truck", "mode": "road", "per_km": 1.0 if n == 1 else 1.1, "per_hour": 30,
                   "payload_t": 20, "fuel_l_per_100km": 30, "co2e_kg_per_litre": 2.5,
                   "fuel_included_at": 1.5}],
        "Shipments": [{"shipment_id": "S1", "origin": "A", "destination": "B", "weight_t": 10},
                      {"shipment_id": "S2", "origin": "A", "destination": "B",
                       "weight_t": 30 if n == 1 else 50}]
        + ([{"shipment_id": "S3", "origin": "A", "destination": "H", "weight_t": 5}] if n == 1 else
           [{"shipment_id": "S4", "origin": "H", "destination": "B", "weight_t": 8}])
        + [{"shipment_id": "S5", "origin": "A", "destination": "X", "weight_t": 5}],
    }
    return data


@pytest.fixture(scope="module")
def weeks(tmp_path_factory):
    """{week: (input path, costed path)}, each costed once by `costing run`."""
    from costing.cli import main
    from costing.workbook.template import write_template

    folder = tmp_path_factory.mktemp("weeks")
    out = {}
    for n in (1, 2):
        inp, costed = str(folder / f"week{n}-input.xlsx"), str(folder / f"week{n}-costed.xlsx")
        write_template(inp, week(n))
        assert main(["run", inp, "-o", costed, "--quiet"]) == 0
        out[n] = (inp, costed)
    return out


def loaded(path):
    model, problems, _sha = pipeline.load(path)
    assert model is not None and not [p for p in problems if p.severity == "error"], problems
    return model


def test_hand_worked_two_weeks_step_by_step(weeks):
    old, new = read_costed(weeks[1][1]), read_costed(weeks[2][1])
    # the runs cost what the comment works out by hand
    assert {s: round(r.total_cost * 100) for s, r in old.shipments.items()} == \
        {"S1": 16000, "S2": 32000, "S3": 9000, "S5": 8000}
    assert {s: round((r.total_cost or 0) * 100) for s, r in new.shipments.items()} == \
        {"S1": 23740, "S2": 71220, "S4": 13780, "S5": 0}
    b = bridge_workbooks(old, new, old_model=loaded(weeks[1][0]), new_model=loaded(weeks[2][0]))
    assert [s.key for s in b.steps] == list(STEP_KEYS) == [k for k, _l, _m in BRIDGE_STEPS]
    assert {s.key: s.units for s in b.steps} == HAND
    c = b.contributions.set_index("shipment_id")
    got = {(k, sid): int(c.loc[sid, k]) for k in MOVES for sid in c.index if c.loc[sid, k] != 0}
    assert got == HAND_BY_SHIPMENT
    # the old route priced at the new rates: S2 340.00, 352.00 at the new fuel price, 528.00 at 50 t
    assert (c.loc["S2", "rates_units"], c.loc["S2", "fuel_units"], c.loc["S2", "load_units"]) == \
        (34000, 35200, 52800)
    assert b.step("reroute").top[0][:2] == ("S2", 18420)
    assert not b.step("consolidation").available and b.step("consolidation").units == 0
    assert b.warnings == []


def test_the_new_input_alone_separates_as_much(weeks):
    """Without the OLD input, the OLD weights come from OLD's Summary and its fuel price from its
    Run sheet: the same steps as with both inputs."""
    old, new = read_costed(weeks[1][1]), read_costed(weeks[2][1])
    b = bridge_workbooks(old, new, new_model=loaded(weeks[2][0]))
    assert {s.key: s.units for s in b.steps} == HAND


def test_without_inputs_the_costed_workbooks_give_what_they_can(weeks):
    old, new = read_costed(weeks[1][1]), read_costed(weeks[2][1])
    b = bridge_workbooks(old, new)
    units = {s.key: s.units for s in b.steps}
    # S1 and S2 changed route: their whole change is not separated, 237.40 - 160.00 = 77.40 and
    # 712.20 - 320.00 = 392.20 (hand, from the comment above); no shipment kept its route
    assert units == {**HAND, "rates": 0, "fuel": 0, "load": 0, "reroute": 0, "not_separated": 46960}
    na = {s.key for s in b.steps if not s.available}
    assert na == {"fuel", "load", "reroute", "vehicle", "consolidation"}
    assert "NEW input" in b.step("reroute").note


def test_scenario_bridge_from_pipeline_results(weeks):
    """The base case against a scenario: two pipeline results and their Models."""
    m1, m2 = loaded(weeks[1][0]), loaded(weeks[2][0])
    options = pipeline.Options(analyses=False, scenarios=False)
    r1, r2 = pipeline.run(m1, options), pipeline.run(m2, options)
    b = bridge_results(r1.results, r2.results, m1, m2, "week 1", "week 2")
    assert {s.key: s.units for s in b.steps} == HAND


def test_same_run_twice_moves_nothing(weeks):
    run = read_costed(weeks[2][1])
    b = bridge_workbooks(run, run, old_model=loaded(weeks[2][0]), new_model=loaded(weeks[2][0]))
    assert all(s.units == 0 for s in b.steps[1:-1]) and b.start_units == b.end_units == 108740


# ---------------------------------------------------------------------------------------------
# random rate changes: the steps add up to the change exactly


def random_model(rng: random.Random, depots: int = 6) -> Model:
    ids = [f"D{i}" for i in range(depots)]
    ds = tuple(Depot(d, d, 52 + rng.random(), 5 + rng.random(), rng.choice(["depot", "hub"]),
                     round(rng.uniform(0, 40), 2), 0.5) for d in ids)
    lanes = []
    for i in range(depots):  # a ring, so every pair is connected, and a few chords
        lanes.append((ids[i], ids[(i + 1) % depots]))
    for _ in range(depots):
        a, b = rng.sample(ids, 2)
        lanes.append((a, b))
    ls = tuple(Lane(f"L{k}", a, b, "road", round(rng.uniform(20, 200), 1), round(rng.uniform(0.3, 3), 2),
                    toll=round(rng.choice([0, 0, rng.uniform(1, 30)]), 2)) for k, (a, b) in enumerate(lanes))
    cards = tuple(RateCard(v, "road", round(rng.uniform(0.4, 1.5), 2), round(rng.uniform(20, 45), 2), pay,
                           per_trip=round(rng.uniform(0, 60), 2), fuel_l_per_100km=rng.choice([10, 22, 31]),
                           co2e_kg_per_litre=2.51, min_charge=round(rng.choice([0, 100, 250]), 2),
                           fuel_included_at=1.45)
                  for v, pay in (("van", 1.5), ("rigid", 9.0), ("artic", 24.5)))
    ships = tuple(Shipment(f"S{k}", *rng.sample(ids, 2), round(rng.uniform(0.5, 60), 1)) for k in range(12))
    return Model(Settings(currency="EUR", fuel_price_per_litre=round(rng.uniform(1.3, 1.9), 3),
                          driving_rules=rng.choice(["none", "eu_561_2006"])), ds, ls, cards, ships)


def changed(rng: random.Random, m: Model) -> Model:
    """Next week: rates up or down, another fuel price, a lane or two closed, tolls changed, some
    shipments gone, new ones, weights changed (plain arithmetic on the records)."""
    import dataclasses as dc

    rates = tuple(dc.replace(r, per_km=round(r.per_km * rng.uniform(0.8, 1.3), 2),
                             per_hour=round(r.per_hour * rng.uniform(0.9, 1.2), 2),
                             min_charge=rng.choice([r.min_charge, 0.0, 300.0])) for r in m.rates)
    closed = set(rng.sample([ln.lane_id for ln in m.lanes], 2))
    lanes = tuple(dc.replace(ln, open=ln.lane_id not in closed,
                             toll=round(ln.toll * rng.choice([1, 1, 1.5]), 2)) for ln in m.lanes)
    ships = [dc.replace(s, weight_t=round(s.weight_t * rng.choice([1, 1, 0.5, 2]), 1))
             for s in m.shipments if rng.random() > 0.15]
    ids = [d.depot_id for d in m.depots]
    ships += [Shipment(f"N{k}", *rng.sample(ids, 2), round(rng.uniform(0.5, 30), 1)) for k in range(3)]
    fuel = rng.choice([None, round(rng.uniform(1.3, 2.1), 3)])
    return dc.replace(m, settings=dc.replace(m.settings, fuel_price_per_litre=fuel), rates=rates,
                      lanes=lanes, shipments=tuple(ships))


@pytest.mark.parametrize("seed", range(12))
def test_steps_add_up_to_the_change_on_random_rate_changes(seed):
    rng = random.Random(seed)
    m1 = random_model(rng)
    m2 = changed(rng, m1)
    options = pipeline.Options(analyses=False, scenarios=False)
    r1, r2 = pipeline.run(m1, options).results, pipeline.run(m2, options).results
    b = bridge_results(r1, r2, m1, m2)
    # oracle: plain integer cents of the two runs' totals
    old_cents = sum(round(r.total_cost * 100) for r in r1 if r.status == "routed")
    new_cents = sum(round(r.total_cost * 100) for r in r2 if r.status == "routed")
    assert b.start_units == old_cents and b.end_units == new_cents
    assert sum(s.units for s in b.steps[1:-1]) == new_cents - old_cents
    assert b.step("not_separated").units == 0  # every cause separated: same tool, the inputs given
    # each shipment's shares add up to its own change (no step absorbs a remainder)
    c = b.contributions
    assert (c[list(MOVES)].sum(axis=1) == c["new_units"] - c["old_units"]).all()
    # rates, fuel and load are measured on the old routes: a shipment that kept its route,
    # vehicle and weight has no re-routing or vehicle share
    olds = {r.shipment.shipment_id: r for r in r1}
    news = {r.shipment.shipment_id: r for r in r2}
    for sid in set(olds) & set(news):
        o, n = olds[sid], news[sid]
        if o.status == n.status == "routed" and [leg.use.key for leg in o.legs] == \
                [leg.use.key for leg in n.legs]:
            row = c[c.shipment_id == sid].iloc[0]
            assert row["reroute"] == 0


def test_unchanged_model_prices_every_old_route_as_it_was():
    """Each route priced again at its own Model's rates costs what the run said: the bridge of a
    run against itself is all zero (20 random networks)."""
    for seed in range(20):
        m = random_model(random.Random(100 + seed))
        r = pipeline.run(m, pipeline.Options(analyses=False, scenarios=False)).results
        b = bridge_results(r, r, m, m)
        assert all(s.units == 0 for s in b.steps[1:-1]), seed


# ---------------------------------------------------------------------------------------------
# the workbook


def write_bridge_workbook(weeks, path):
    old, new = read_costed(weeks[1][1]), read_costed(weeks[2][1])
    b = bridge_workbooks(old, new, old_model=loaded(weeks[1][0]), new_model=loaded(weeks[2][0]))
    write_comparison(str(path), compare(old, new), b)
    return b


def test_bridge_sheet_has_live_formulas_and_cached_values(weeks, tmp_path):
    out = tmp_path / "diff.xlsx"
    write_bridge_workbook(weeks, out)
    formulas = openpyxl.load_workbook(out)
    cached = openpyxl.load_workbook(out, data_only=True)
    assert cached.sheetnames == ["Changes", "Overview", BRIDGE, BRIDGE_SHIPMENTS]
    ws, wsf = cached[BRIDGE], formulas[BRIDGE]
    header_row = next(r for r in range(1, 10) if ws.cell(r, 1).value == "step")
    header = [c.value for c in ws[header_row]]
    col = {h: i + 1 for i, h in enumerate(header) if h}
    rows = {ws.cell(r, 1).value: r for r in range(header_row + 1, header_row + 13)}
    assert list(rows) == list(STEP_KEYS)
    for key, r in rows.items():
        amount = ws.cell(r, col["amount"]).value
        assert round(amount * 100) == HAND[key], key
        assert str(wsf.cell(r, col["amount"]).value).startswith("=ROUND(SUM('Bridge shipments'!")
        assert str(wsf.cell(r, col["running_total"]).value).startswith("=")
    assert round(ws.cell(rows["end"], col["running_total"]).value * 100) == 108740
    check = rows["end"] + 1
    assert ws.cell(check, col["label"]).value.startswith("check") and ws.cell(check, col["amount"]).value == 0
    # the order of the steps is stated on the sheet
    assert "fixed order" in ws.cell(2, 1).value and "Re-routing" in ws.cell(2, 1).value
    # the largest shipments behind each step: S2's re-routing share, 184.20, ranked first
    lists = [r for r in ws.iter_rows(values_only=True) if r[0] == "reroute" and r[1] == "S2"]
    assert lists and round(lists[0][2] * 100) == 18420
    # the chart: a stacked column chart whose first series (the base) has no fill and no border
    chart = wsf._charts[0]
    assert chart.grouping == "stacked"
    base = chart.series[0]
    assert base.graphicalProperties.noFill and base.graphicalProperties.line.noFill
    assert len(chart.series) == 4
    # per-shipment rows tie out: old + steps - new = 0 by a live formula
    rs = cached[BRIDGE_SHIPMENTS]
    head = [c.value for c in rs[1]]
    checks = [r[head.index("check")] for r in rs.iter_rows(min_row=2, values_only=True)]
    assert checks and all(v == 0 for v in checks)


@pytest.mark.needs_soffice  # skips locally without LibreOffice, fails in CI (conftest.py)
def test_libreoffice_recalculates_the_bridge(weeks, tmp_path):
    out = tmp_path / "diff.xlsx"
    write_bridge_workbook(weeks, out)
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(out), str(tmp_path / "recalc"), tolerance=1e-9)
    assert checked > 60
    assert not mismatches, mismatches[:10]


def test_compare_command_with_inputs(weeks, cli, tmp_path):
    out = tmp_path / "diff.xlsx"
    code, stdout, err = cli("compare", weeks[1][1], weeks[2][1], "-o", str(out),
                            "--old-input", weeks[1][0], "--new-input", weeks[2][0])
    assert code == 0, err
    assert "bridge: removed -90.00, added +137.80, route lost / found -80.00, rates +30.00, fuel price " \
           "+18.00, load +176.00, re-routing +245.60; n/a: consolidation" in stdout
    assert BRIDGE in openpyxl.load_workbook(out).sheetnames
    # an input that is not the one the workbook was costed from is refused, naming both
    code, _o, err = cli("compare", weeks[1][1], weeks[2][1], "-o", str(tmp_path / "d2.xlsx"),
                        "--new-input", weeks[1][0])
    assert code == 1 and "week1-input.xlsx is not the input week2-costed.xlsx was costed from" in err
    assert not (tmp_path / "d2.xlsx").exists()
    code, stdout, err = cli("compare", weeks[1][1], weeks[2][1], "-o", str(tmp_path / "d3.xlsx"))
    assert code == 0 and "n/a: fuel price, load, re-routing, vehicle / carrier, consolidation" in stdout


def _with_standalone(path, out, totals: dict[str, float]):
    """A copy of a costed workbook (values only) whose Summary gains a standalone_cost column
    holding each shipment's total_cost, and whose total_cost is then set from `totals` (as a run
    that shares vehicles would write them)."""
    wb = openpyxl.load_workbook(path, data_only=True)
    ws = wb["Summary"]
    header = [c.value for c in ws[1]]
    cost, sid = header.index("total_cost") + 1, header.index("shipment_id") + 1
    extra = ws.max_column + 1
    ws.cell(1, extra, "standalone_cost")
    for r in range(2, ws.max_row + 1):
        key = ws.cell(r, sid).value
        if key and key != "TOTAL":
            ws.cell(r, extra, ws.cell(r, cost).value)
            if key in totals:
                ws.cell(r, cost, totals[key])
    wb.save(out)
    return str(out)


def test_consolidation_step_from_standalone_cost(weeks, tmp_path):
    # week 2 as if S2 shared vehicles and paid 700.00 instead of its stand-alone 712.20 (invented):
    # consolidation = (700.00 - 712.20) - 0 = -12.20, every other step as by hand, end 1,075.20
    new = _with_standalone(weeks[2][1], tmp_path / "shared.xlsx", {"S2": 700.0})
    b = bridge_workbooks(read_costed(weeks[1][1]), read_costed(new), new_model=loaded(weeks[2][0]))
    assert {s.key: s.units for s in b.steps} == {**HAND, "consolidation": -1220, "end": 107520}
    assert b.step("consolidation").available and b.step("consolidation").top[0][:2] == ("S2", -1220)


def test_scenario_bridges_in_the_costed_workbook(cli, tmp_path):
    """The demo's two scenarios: a fuel price rise (+12 %) and a closed rail line. Expected from
    what each scenario changes: a fuel price alone moves only the fuel step (rates at the old fuel
    price are the base rates, so the rates step is exactly 0); closing lanes changes no price, so
    rates, fuel and load are 0 and the change is re-routing and lost routes. Totals: the oracle is
    the sum of the Summary's total_cost cells and of each scenario run's totals (pipeline.run on
    the scenario's Model), plain integer cents."""
    from costing.check.scenarios import apply_scenario

    out, inp = tmp_path / "demo.xlsx", tmp_path / "demo-input.xlsx"
    assert cli("demo", "-o", str(out), "--input-copy", str(inp))[0] == 0
    wb = openpyxl.load_workbook(out, data_only=True)
    assert "Scenario bridge" in wb.sheetnames and "Scenario bridge shipments" in wb.sheetnames
    ws = wb["Scenario bridge"]
    blocks, current = {}, None
    for row in ws.iter_rows(values_only=True):
        if row[0] == "scenario" and row[1]:
            current = blocks.setdefault(row[1], {})
        elif current is not None and row[0] in STEP_KEYS and isinstance(row[2], (int, float)) \
                and row[0] not in current:
            current[row[0]] = round(row[2] * 100)
    assert set(blocks) == {"fuel_up_12", "blerick_rail_closed"}
    model = loaded(str(inp))
    options = pipeline.Options(analyses=False, scenarios=False)
    base_results = pipeline.run(model, options).results
    base = sum(round(r.total_cost * 100) for r in base_results if r.status == "routed")
    for sc in model.scenarios:
        steps = blocks[sc.name]
        assert list(steps) == list(STEP_KEYS)
        new = pipeline.run(apply_scenario(model, sc), options).results
        total = sum(round(r.total_cost * 100) for r in new if r.status == "routed")
        assert steps["start"] == base and steps["end"] == total
        assert sum(steps[k] for k in MOVES) == total - base
    fuel, rail = blocks["fuel_up_12"], blocks["blerick_rail_closed"]
    assert fuel["fuel"] > 0 and fuel["rates"] == fuel["load"] == fuel["removed"] == fuel["added"] == 0
    assert rail["rates"] == rail["fuel"] == rail["load"] == 0
    assert rail["reroute"] + rail["route_status"] == rail["end"] - rail["start"] != 0
    # the amounts are live formulas over the shipments sheet, matched by the scenario's name
    wsf = openpyxl.load_workbook(out)["Scenario bridge"]
    amounts = [c.value for c in wsf["C"] if isinstance(c.value, str) and "SUMPRODUCT" in c.value]
    assert len(amounts) == 2 * len(STEP_KEYS)
    assert all("'Scenario bridge shipments'!" in a for a in amounts)


def _costed(tmp_path, data, name):
    from costing.cli import main
    from costing.workbook.template import write_template

    inp, out = str(tmp_path / f"{name}-input.xlsx"), str(tmp_path / f"{name}-costed.xlsx")
    write_template(inp, data)
    assert main(["run", inp, "-o", out, "--quiet"]) == 0
    return inp, out


def test_a_lane_the_new_input_dropped_is_priced_as_the_old_run_had_it(weeks, tmp_path):
    # week 2 with lane L1 deleted instead of closed: the old route over L1 is priced from OLD's
    # Legs sheet (100 km, 2.0 h, no toll) or from the OLD input: the same steps as by hand
    data = week(2)
    data["Lanes"] = [ln for ln in data["Lanes"] if ln["lane_id"] != "L1"]
    inp, out = _costed(tmp_path, data, "dropped")
    old = read_costed(weeks[1][1])
    for old_model in (None, loaded(weeks[1][0])):
        b = bridge_workbooks(old, read_costed(out), old_model=old_model, new_model=loaded(inp))
        assert {s.key: s.units for s in b.steps} == HAND


def test_a_vehicle_the_new_input_dropped(weeks, tmp_path):
    # week 2 with the truck renamed "lorry" (same figures, per_km 1.10): the old routes' card is
    # gone from the new input. With the OLD input the old card (per_km 1.00) prices the old
    # routes, so the rate rise shows as part of the change of vehicle; by hand:
    #   rates: S1 L1 100 + 60 = 160.00 (+0); S2 2 x 160.00 = 320.00 (+0)                     0
    #   fuel:  + 6.00 per vehicle: S1 166.00 (+6.00), S2 332.00 (+12.00)                  +18.00
    #   load:  S2 3 x 166.00 = 498.00 (+166.00)                                          +166.00
    #   vehicle: none (the lanes changed too); reroute S1 237.40 - 166.00 = +71.40,
    #            S2 712.20 - 498.00 = +214.20                                              +285.60
    data = week(2)
    data["Rates"][0]["vehicle"] = "lorry"
    inp, out = _costed(tmp_path, data, "lorry")
    old, new = read_costed(weeks[1][1]), read_costed(out)
    b = bridge_workbooks(old, new, old_model=loaded(weeks[1][0]), new_model=loaded(inp))
    assert {s.key: s.units for s in b.steps} == {**HAND, "rates": 0, "fuel": 1800, "load": 16600,
                                                  "reroute": 28560}
    # without the OLD input the old card is unknown: those shipments are not separated, and said so
    b = bridge_workbooks(old, new, new_model=loaded(inp))
    assert b.step("not_separated").units == 23740 + 71220 - 16000 - 32000
    assert any("rate card truck/road is in neither input" in w for w in b.warnings)
    assert sum(s.units for s in b.steps[1:-1]) == b.end_units - b.start_units


def test_a_workbook_without_legs_is_compared_by_its_summary(weeks, tmp_path):
    wb = openpyxl.load_workbook(weeks[2][1], data_only=True)
    wb.remove(wb["Legs"])
    bare = tmp_path / "no-legs.xlsx"
    wb.save(bare)
    b = bridge_workbooks(read_costed(weeks[1][1]), read_costed(bare), new_model=loaded(weeks[2][0]))
    # as without inputs (see above): S1 and S2 changed route, 469.60 not separated
    assert {s.key: s.units for s in b.steps} == {**HAND, "rates": 0, "fuel": 0, "load": 0, "reroute": 0,
                                                 "not_separated": 46960}
    assert any("no Legs sheet" in w for w in b.warnings)


def test_workbook_path_agrees_with_the_pipeline_path_on_the_demo(cli, tmp_path):
    """The demo (intermodal rail with transfers, hubs with handling, driving-time rules, minimum
    charges) against a second week made from it by its own scenario changes: the bridge read
    from the two costed workbooks (Summary and Legs read back, routes grouped into vehicle runs
    again) equals the bridge of the two pipeline results, step by step; the demo against itself
    moves nothing."""
    import dataclasses as dc

    from costing.workbook.template import write_template

    out, inp = tmp_path / "demo.xlsx", tmp_path / "demo-input.xlsx"
    assert cli("demo", "-o", str(out), "--input-copy", str(inp))[0] == 0
    model = loaded(str(inp))
    same = bridge_workbooks(read_costed(out), read_costed(out), old_model=model, new_model=model)
    assert all(s.units == 0 for s in same.steps[1:-1]) and not same.warnings

    # week 2: both demo scenarios at once, a heavier first shipment, the last one gone
    wb = openpyxl.load_workbook(inp)
    rows = [[c.value for c in r] for r in wb["Scenarios"].iter_rows(min_row=2)]
    data = {ws.title: [dict(zip([c.value for c in ws[1]], [c.value for c in r]))
                       for r in ws.iter_rows(min_row=2)] for ws in wb}
    data.pop("Scenarios")
    for row in data["Settings"]:
        if row["setting"] == "fuel_price_per_litre":
            row["value"] = round(row["value"] * 1.12, 4)
    closed = {r[2] for r in rows if r[3] == "open"}
    for lane in data["Lanes"]:
        if lane["lane_id"] in closed:
            lane["open"] = "no"
    data["Shipments"][0]["weight_t"] = data["Shipments"][0]["weight_t"] + 20
    data["Shipments"] = data["Shipments"][:-1]
    inp2, out2 = str(tmp_path / "week2-input.xlsx"), str(tmp_path / "week2.xlsx")
    write_template(inp2, data)
    assert cli("run", inp2, "-o", out2, "--quiet")[0] == 0
    model2 = loaded(inp2)
    from_books = bridge_workbooks(read_costed(out), read_costed(out2), old_model=model, new_model=model2)
    options = pipeline.Options(analyses=False, scenarios=False)
    no_scenarios = dc.replace(model, scenarios=())
    r1 = pipeline.run(no_scenarios, options).results
    r2 = pipeline.run(model2, options).results
    from_runs = bridge_results(r1, r2, no_scenarios, model2)
    assert {s.key: s.units for s in from_books.steps} == {s.key: s.units for s in from_runs.steps}
    moved = {s.key for s in from_books.steps[1:-1] if s.units}
    assert {"removed", "fuel", "load", "reroute"} <= moved and from_books.step("not_separated").units == 0


def test_check_refuses_a_bridge_that_does_not_add_up(weeks):
    """No step is a balancing entry: a share moved off by one cent is caught, per shipment and in
    total, rather than absorbed by the last step."""
    b = bridge_workbooks(read_costed(weeks[1][1]), read_costed(weeks[2][1]), new_model=loaded(weeks[2][0]))
    b.check()
    b.contributions.loc[b.contributions.shipment_id == "S1", "fuel"] += 1
    with pytest.raises(AssertionError, match="S1"):
        b.check()
    b.contributions.loc[b.contributions.shipment_id == "S1", "fuel"] -= 1
    b.step("fuel").units += 1
    with pytest.raises(AssertionError):
        b.check()
