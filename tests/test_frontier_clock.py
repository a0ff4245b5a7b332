"""The cost-time trade-offs with the driving clock (issue 12): the frontier compares routes with
their breaks and rests (time: elapsed hours; cost: with the stops' pay as Settings say).

Sources of truth:
- The regulations' own numbers, applied in this file by a quarter-hour simulation written for
  the test (it imports nothing of costing.price.rules or costing.network.clock):
  EU, Regulation (EC) No 561/2006 (../shared/references.md 3.1; article numbers [MEM] there):
  a break of 45 minutes after a driving period of 4.5 h, unless a rest is taken (Art. 7);
  daily driving at most 9 h, extended to 10 h at most twice a week (Art. 6(1)); a regular daily
  rest of 11 h, reduced to 9 h at most three times between weekly rests (Art. 4(g), Art. 8).
  US, 49 CFR 395.3 (references.md 3.2): a 30-minute break once 8 h of driving have passed
  ((a)(3)(ii)); 11 h of driving ((a)(3)(i)); no driving after the 14th hour on duty ((a)(2));
  10 h off duty ((a)(1)).
  Applied under the product's stated planning model (costing.price.rules docstring): one driver
  per vehicle run, a stop as soon as it is due and more driving follows, a longer day used as
  soon as 9 h are reached, reduced rests first; handling is not a break (EU) and loading counts
  as time on duty (US).
- networkx (reference library, 3.6.1): every simple route by all_simple_paths on a graph built
  here, every choice among parallel lanes; the non-dominated (cost, time) pairs are taken here
  by brute force (pairwise comparison).
- Hand-worked figures in the comments (our arithmetic from the numbers above).
Money is summed here with decimal.Decimal, ROUND_HALF_UP per charge (the spreadsheet ROUND).
Driving-time rules are planning estimates, not legal or compliance advice. Inputs invented.
"""

from __future__ import annotations

import random
from dataclasses import replace
from decimal import ROUND_HALF_UP, Decimal
from itertools import product

import networkx as nx
import pytest

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.network.build import build_graph
from costing.plan.route import Router

Q = 4  # quarter-hours per hour: every duration in these tests is a whole number of quarters


# ---------------------------------------------------------------------------------------------
# the oracle: stops by the regulations' numbers, quarter-hour by quarter-hour


def eu_stops(legs_q: list[int]) -> list[tuple[int, int]]:
    """(break quarters, rest quarters) taken on each leg of one vehicle run under 561/2006,
    starting from a rested driver. Before each quarter of driving: at the day's limit a longer
    day if one is left (9 h -> 10 h, twice), else a daily rest (9 h reduced, three times, then
    11 h); else after 4.5 h of driving a 45-minute break."""
    since = today = extended = reduced = 0
    limit = 9 * Q
    out = []
    for q in legs_q:
        brk = rest = 0
        for _ in range(q):
            if today == limit and limit == 9 * Q and extended < 2:
                limit, extended = 10 * Q, extended + 1
            if today == limit:
                rest += 9 * Q if reduced < 3 else 11 * Q
                reduced += reduced < 3
                since = today = 0
                limit = 9 * Q
            elif since == 18:  # 4.5 h
                brk += 3  # 45 min
                since = 0
            since += 1
            today += 1
        out.append((brk, rest))
    return out


def us_stops(legs_q: list[int], loading_q: int) -> list[tuple[int, int]]:
    """The same under 49 CFR 395.3: the driver comes on duty for the loading (`loading_q`); before
    each quarter of driving: 10 h off when 11 h have been driven, or the 14th hour on duty is
    reached, or a break would reach it; else a 30-minute break when 8 h have been driven since
    the last one."""
    since = today = 0
    duty = loading_q
    out = []
    for q in legs_q:
        brk = rest = 0
        for _ in range(q):
            if today == 11 * Q or duty >= 14 * Q or (since >= 8 * Q and duty + 2 >= 14 * Q):
                rest += 10 * Q
                since = today = duty = 0
            elif since >= 8 * Q:
                brk += 2
                since = 0
                duty += 2
            since += 1
            today += 1
            duty += 1
        out.append((brk, rest))
    return out


def test_the_oracle_stops_match_the_regulation_numbers():
    # references.md 3.1: a 9 h day = 4.5 + 0.75 + 4.5; a 10 h day has a second break at 9 h
    assert eu_stops([36]) == [(3, 0)]
    assert eu_stops([40]) == [(6, 0)]
    # 11.25 h: the 10 h day (two breaks), a reduced 9 h rest, then 1.25 h
    assert eu_stops([45]) == [(6, 36)]
    # a stop is taken where driving goes on: 4.5 h then 0.25 h on the next leg
    assert eu_stops([18, 1]) == [(0, 0), (3, 0)]
    # references.md 3.2 (FMCSA guide): 8 h, a 30-minute break, 3 h more = 11 h of driving
    assert us_stops([44], 0) == [(2, 0)]
    # 11 h reached: 10 h off before more driving
    assert us_stops([45], 0) == [(2, 40)]
    # 4 h loading + 11 h driving: the 14th hour on duty comes first (issue 12's case)
    assert us_stops([44], 16) == [(2, 40)]


def rnd(x: Decimal) -> Decimal:
    return x.quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)


def D(x: float) -> Decimal:
    return Decimal(repr(x))


def run_figures(model: Model, card: RateCard, lanes: list[Lane]) -> tuple[Decimal, Decimal, Decimal]:
    """(cost, elapsed hours, stop hours) of one vehicle run of `card` (one vehicle: the loads
    are light) over `lanes`, with its stops and the handling at both its ends (loading,
    unloading); every charge rounded to the cent, then summed."""
    st = model.settings
    dep = {d.depot_id: d for d in model.depots}
    first, last = dep[lanes[0].from_depot], dep[lanes[-1].to_depot]
    quarters = [int(ln.drive_hours * Q) for ln in lanes]
    assert [q / Q for q in quarters] == [ln.drive_hours for ln in lanes]
    if st.driving_rules == "eu_561_2006":
        stops = eu_stops(quarters)
    elif st.driving_rules == "us_49cfr395":
        stops = us_stops(quarters, int(first.handling_hours * Q))
    else:
        stops = [(0, 0)] * len(quarters)
    ph = D(card.per_hour)
    cost = rnd(D(first.handling_cost)) + rnd(D(card.per_trip)) + rnd(D(last.handling_cost))
    hours = D(first.handling_hours) + D(last.handling_hours)
    for ln, (b, r) in zip(lanes, stops):
        paid = (Decimal(b) / Q if st.break_hours_paid == "yes" else 0) + \
            (Decimal(r) / Q if st.rest_hours_paid == "yes" else 0)
        cost += rnd(D(ln.distance_km) * D(card.per_km)) + rnd(D(ln.drive_hours) * ph) + \
            rnd(D(ln.toll)) + rnd(D(ln.fixed_cost)) + rnd(paid * ph)
        hours += D(ln.drive_hours) + Decimal(b + r) / Q
    return cost, hours, Decimal(sum(b + r for b, r in stops)) / Q


def routes_by_brute_force(model: Model, s: Shipment):
    """Every simple route from s.origin to s.destination, every choice of parallel lanes and of
    vehicle on each leg, the vehicle changing only at a hub (a cross-dock: a new vehicle run
    with a rested driver): (cost, hours, (lane ids, vehicles), stop hours)."""
    g = nx.MultiDiGraph()
    for ln in model.lanes:
        g.add_edge(ln.from_depot, ln.to_depot, key=(ln.lane_id, "+"), lane=ln)
        if ln.two_way:
            back = Lane(ln.lane_id, ln.to_depot, ln.from_depot, ln.mode, ln.distance_km, ln.drive_hours,
                        ln.toll, ln.fixed_cost)
            g.add_edge(ln.to_depot, ln.from_depot, key=(ln.lane_id, "-"), lane=back)
    hubs = {d.depot_id for d in model.depots if d.kind == "hub"}
    out = []
    if s.origin not in g or s.destination not in g:
        return out
    for path in sorted({tuple(p) for p in nx.all_simple_paths(g, s.origin, s.destination)}):
        hops = [[d["lane"] for d in g[u][v].values()] for u, v in zip(path, path[1:])]
        for lanes in product(*hops):
            for cards in product(model.rates, repeat=len(lanes)):
                if any(a != b and path[i + 1] not in hubs for i, (a, b) in enumerate(zip(cards, cards[1:]))):
                    continue
                runs: list[tuple[RateCard, list[Lane]]] = []
                for card, ln in zip(cards, lanes):
                    if runs and runs[-1][0] == card:
                        runs[-1][1].append(ln)
                    else:
                        runs.append((card, [ln]))
                figs = [run_figures(model, card, run) for card, run in runs]
                out.append((sum(f[0] for f in figs), sum(f[1] for f in figs),
                            (tuple(ln.lane_id for ln in lanes), tuple(c.vehicle for c in cards)),
                            sum(f[2] for f in figs)))
    return out


def pareto_pairs(routes) -> list[tuple[Decimal, Decimal]]:
    """The (cost, hours) pairs no route dominates, by comparing every pair of routes."""
    pts = {(r[0], r[1]) for r in routes}
    return sorted(p for p in pts
                  if not any(q[0] <= p[0] and q[1] <= p[1] and q != p for q in pts))


def tool_pairs(model: Model, s: Shipment, **kw):
    """The trade-offs the product lists for `s`: (total cost, elapsed hours) as cost_route prices
    them (the Trade-offs sheet's total_cost and elapsed_hours), whether capped, the router."""
    router = Router(model, build_graph(model))
    routes, capped = router.frontier(s, 50, **kw)
    return [(round(r.total_cost, 2), round(r.elapsed_hours, 9)) for r in routes], capped, router, routes


def as_floats(pairs):
    return [(float(c), round(float(t), 9)) for c, t in pairs]


# ---------------------------------------------------------------------------------------------
# seeded random networks


def random_model(seed: int, rules: str) -> Model:
    rng = random.Random(seed)
    n = rng.randint(4, 7)
    depots = tuple(Depot(f"D{i}", "", 50 + rng.random() * 2, 4 + rng.random() * 4,
                         "hub" if rng.random() < 0.35 else "depot",
                         rng.choice([0.0, 12.5]), rng.choice([0.0, 0.25, 0.5, 1.0]))
                   for i in range(n))
    lanes = []
    long = rules == "us_49cfr395"
    for k in range(rng.randint(n + 1, 2 * n + 2)):
        a, b = rng.sample(range(n), 2)
        hours = rng.choice([1.0, 2.25, 3.5, 4.25, 4.75, 5.5, 6.0] + ([7.75, 8.5] if long else []))
        fast = rng.random() < 0.5  # fast tolled lanes against slow free ones: real trade-offs
        km = round(hours * (rng.choice([80, 95]) if fast else rng.choice([40, 55])))
        lanes.append(Lane(f"L{k}", depots[a].depot_id, depots[b].depot_id, "road", float(km), hours,
                          toll=rng.choice([60.0, 150.0, 280.0]) if fast else 0.0,
                          fixed_cost=rng.choice([0.0, 9.5]), two_way=rng.random() < 0.6))
    # per_hour 30 and 40 make each stop's pay a whole number of cents (the search may then
    # compare clocks by their driving since the break); 30.01 and 41.37 do not (equal clocks)
    cards = [RateCard("artic", "road", 1.0, rng.choice([30.0, 40.0, 30.01]), 24.0,
                      per_trip=rng.choice([0.0, 25.0]))]
    if rng.random() < 0.7:
        cards.append(RateCard("rigid", "road", 0.8, rng.choice([30.0, 41.37]), 9.0))
    pairs = [(a, b) for a in range(n) for b in range(n) if a != b]
    ships = tuple(Shipment(f"S{i}", depots[a].depot_id, depots[b].depot_id, 5.0)
                  for i, (a, b) in enumerate(rng.sample(pairs, 3)))
    settings = Settings(objective="cost", driving_rules=rules,
                        break_hours_paid=rng.choice(["yes", "yes", "no"]),
                        rest_hours_paid=rng.choice(["no", "no", "yes"]))
    return Model(settings, depots, tuple(lanes), tuple(cards), ships)


EU_SEEDS = range(60)
US_SEEDS = range(30)


@pytest.mark.parametrize("rules,seed", [("eu_561_2006", s) for s in EU_SEEDS] +
                         [("us_49cfr395", s) for s in US_SEEDS])
def test_frontier_matches_brute_force_with_stops(rules, seed):
    model = random_model(seed, rules)
    for s in model.shipments:
        want = as_floats(pareto_pairs(routes_by_brute_force(model, s)))
        got, capped, router, _routes = tool_pairs(model, s)
        assert not capped
        assert got == want, (s.shipment_id, got, want)
        assert not getattr(router, "frontier_fallbacks", set())


@pytest.mark.parametrize("seed", range(20))
def test_frontier_without_the_clock_is_on_driving_and_handling_hours(seed):
    # driving_clock_in_search = no: the trade-offs compare drive + handling hours, as before;
    # their routes are still priced with their stops (cost_route)
    base = random_model(seed, "eu_561_2006")
    model = Model(Settings(objective="cost", driving_rules="eu_561_2006", driving_clock_in_search="no",
                           break_hours_paid=base.settings.break_hours_paid,
                           rest_hours_paid=base.settings.rest_hours_paid),
                  base.depots, base.lanes, base.rates, base.shipments)
    plain = Model(Settings(objective="cost"), base.depots, base.lanes, base.rates, base.shipments)
    for s in model.shipments:
        want = as_floats(pareto_pairs(routes_by_brute_force(plain, s)))
        router = Router(model, build_graph(model))
        routes, capped = router.frontier(s, 50)
        got = [(round(r.subtotal - r.component("stop_cost"), 2), round(r.drive_hours + r.handling_hours, 9))
               for r in routes]
        assert got == want and not capped


def test_the_random_cases_are_not_trivial():
    """Guard against a vacuous comparison: many routes stop, many frontiers have several routes,
    and in many the stops change the frontier (its pairs are not the pairs without stops)."""
    several = moved = stopped = total = 0
    for rules, seeds in (("eu_561_2006", EU_SEEDS), ("us_49cfr395", US_SEEDS)):
        for seed in seeds:
            model = random_model(seed, rules)
            plain = Model(Settings(objective="cost"), model.depots, model.lanes, model.rates, model.shipments)
            for s in model.shipments:
                routes = routes_by_brute_force(model, s)
                if not routes:
                    continue
                total += 1
                with_stops = pareto_pairs(routes)
                several += len(with_stops) > 1
                stopped += any(r[3] > 0 for r in routes)
                # the old way: the frontier without stops, its routes then priced with stops
                bare = routes_by_brute_force(plain, s)
                front = set(pareto_pairs(bare))
                shown = {(r[0], r[1]) for r, b in zip(routes, bare) if (b[0], b[1]) in front}
                moved += with_stops != pareto_pairs([(c, t) for c, t in shown])
    # at the time of writing: 250 shipments, 61 frontiers of several routes, 225 with stops on
    # some route, 17 where the old way (no stops in the search) lists a different frontier
    assert total >= 200 and several >= 40 and stopped >= total // 2 and moved >= 10, \
        (total, several, stopped, moved)


# ---------------------------------------------------------------------------------------------
# hand-worked cases


def test_a_route_dominated_without_stops_joins_the_frontier_with_them():
    # EU rules, break pay on (the default), rests unpaid. Cards: rigid per_km 0.90, per_hour
    # 30.00; artic per_km 1.00, per_hour 30.00; 5 t: one vehicle of either. Hub H: 10.00 and
    # 0.1 h per vehicle handled; A and D: nothing.
    # X: A -> D direct on the rigid, 330 km, 4.75 h: 297.00 + 142.50 = 439.50, 4.75 h; a 45-minute
    #    break falls due at 4.5 h with driving left (Art. 7): + 0.75 x 30.00 = 22.50, + 0.75 h
    #    -> 462.00 and 5.5 h with stops.
    # Y: A -> H on the rigid, H -> D on the artic (165 km, 2.5 h each; a new run, a rested
    #    driver at H): 148.50 + 75.00, 165.00 + 75.00, handling at H 10.00 off and 10.00 on
    #    -> 483.50; 5.0 + 0.1 + 0.1 = 5.2 h; no run reaches 4.5 h: no stop. (The artic then the
    #    rigid is the same pair.)
    # Others: A -> H -> D on one rigid: 447.00 + 22.50 = 469.50, 5.75 h; the artic direct:
    #    472.50 + 22.50 = 495.00, 5.5 h: both dominated by X, with or without stops.
    # Without stops X (439.50, 4.75 h) dominates Y (483.50, 5.2 h): the old trade-offs list X
    # alone. With stops X is (462.00, 5.5 h) and Y (483.50, 5.2 h): both are trade-offs.
    depots = (Depot("A", "A", 51.0, 4.0), Depot("H", "H", 51.5, 5.0, "hub", 10.0, 0.1),
              Depot("D", "D", 52.0, 6.0))
    lanes = (Lane("AD", "A", "D", "road", 330.0, 4.75), Lane("AH", "A", "H", "road", 165.0, 2.5),
             Lane("HD", "H", "D", "road", 165.0, 2.5))
    rates = (RateCard("artic", "road", 1.0, 30.0, 24.0), RateCard("rigid", "road", 0.9, 30.0, 9.0))
    ship = Shipment("S", "A", "D", 5.0)
    on = Model(Settings(driving_rules="eu_561_2006"), depots, lanes, rates, (ship,))
    got, capped, _router, routes = tool_pairs(on, ship)
    assert got == [(462.0, 5.5), (483.5, 5.2)] and not capped
    assert routes[0].break_hours == 0.75 and routes[1].break_hours == 0
    assert [leg.use.lane.lane_id for leg in routes[1].legs] == ["AH", "HD"]
    assert len({leg.card.vehicle for leg in routes[1].legs}) == 2  # a change of vehicle at H
    # the brute force agrees
    assert got == as_floats(pareto_pairs(routes_by_brute_force(on, ship)))
    # the setting off: the trade-offs compare drive + handling hours, X alone (priced with its stop)
    off = Model(Settings(driving_rules="eu_561_2006", driving_clock_in_search="no"), depots, lanes, rates,
                (ship,))
    got_off, _c, _r, _routes = tool_pairs(off, ship)
    assert got_off == [(462.0, 5.5)]


def test_a_tired_cheap_route_rests_where_a_fresh_one_pays_a_break():
    # US rules (the 14-hour window makes the search compare equal clocks only), break pay on,
    # rest unpaid. One card, per_km 1.00, per_hour 30.00, 5 t. One-way lanes:
    #   AV 2.9 h 203 km, toll 810.00: 203 + 87 + 810 = 1100.00
    #   AW 8.0 h 560 km: 560 + 240 = 800.00;  WV 2.9 h 203 km: 203 + 87 = 290.00
    #   VD 5.2 h 364 km: 364 + 156 = 520.00
    # P1 = AV + VD: at V the driver has driven 2.9 h; on VD 8 h of driving pass with 0.1 h left:
    #   a 30-minute break ((a)(3)(ii)), paid 15.00 -> 1100 + 520 + 15 = 1635.00, 2.9 + 5.2 +
    #   0.5 = 8.6 h.
    # P2 = AW + WV + VD: a paid break at the start of WV (8 h driven) -> 1105.00 at V, with
    #   10.9 h driven; on VD the 11th hour comes after 0.1 h ((a)(3)(i)): 10 h off duty, unpaid,
    #   then 5.1 h -> 1105 + 520 = 1625.00, 8 + 0.5 + 2.9 + 10 + 5.2 = 26.6 h.
    # At V, P1 (1100.00, 2.9 h) is cheaper, quicker and less tired than P2 (1105.00, 11.4 h);
    # a search that let the less-driven clock cover the other would drop P2, yet P2 ends cheaper.
    depots = (Depot("A", "A", 40.0, -90.0), Depot("V", "V", 40.0, -87.0), Depot("W", "W", 41.0, -89.0),
              Depot("D", "D", 40.0, -84.0))
    lanes = (Lane("AV", "A", "V", "road", 203.0, 2.9, toll=810.0, two_way=False),
             Lane("AW", "A", "W", "road", 560.0, 8.0, two_way=False),
             Lane("WV", "W", "V", "road", 203.0, 2.9, two_way=False),
             Lane("VD", "V", "D", "road", 364.0, 5.2, two_way=False))
    rates = (RateCard("tractor", "road", 1.0, 30.0, 24.0),)
    ship = Shipment("S", "A", "D", 5.0)
    model = Model(Settings(driving_rules="us_49cfr395"), depots, lanes, rates, (ship,))
    got, capped, _router, routes = tool_pairs(model, ship)
    assert got == [(1625.0, 26.6), (1635.0, 8.6)] and not capped
    assert (routes[0].break_hours, routes[0].rest_hours) == (0.5, 10.0)
    assert (routes[1].break_hours, routes[1].rest_hours) == (0.5, 0.0)


def test_too_many_clock_labels_fall_back_to_the_plain_trade_offs():
    model = random_model(16, "eu_561_2006")
    s = model.shipments[1]
    router = Router(model, build_graph(model))
    routes, _capped = router.frontier(s, 50, clock_labels=2)
    assert router.frontier_fallbacks == {s.shipment_id}
    assert any("trade-offs compared on drive + handling hours" in p.message for p in router.problems)
    off = Model(replace(model.settings, driving_clock_in_search="no"), model.depots, model.lanes,
                model.rates, model.shipments)
    plain, _c = Router(off, build_graph(off)).frontier(s, 50)
    def pairs(rs):
        return [(r.total_cost, r.elapsed_hours) for r in rs]

    assert pairs(routes) == pairs(plain)


@pytest.mark.parametrize("rules,seed", [("eu_561_2006", s) for s in range(0, 60, 3)] +
                         [("us_49cfr395", s) for s in range(0, 30, 3)])
def test_the_search_values_are_the_priced_figures(monkeypatch, rules, seed):
    # each route's (cost, time) in the clock-labelled search equals what cost_route gives it
    # (subtotal and elapsed hours: the Trade-offs sheet's total_cost without a minimum charge,
    # and its elapsed_hours)
    import costing.network.pareto_clock as pareto_clock

    seen = []
    real = pareto_clock.clock_frontier

    def spy(*a, **kw):
        res = real(*a, **kw)
        seen.append(res)
        return res

    monkeypatch.setattr(pareto_clock, "clock_frontier", spy)
    model = random_model(seed, rules)
    for s in model.shipments:
        seen.clear()
        routes, _capped = Router(model, build_graph(model)).frontier(s, 50)
        for res in seen:
            assert [(round(r.cost, 2), round(r.time, 9)) for r in res.routes] == \
                [(r.subtotal, round(r.elapsed_hours, 9)) for r in routes]


@pytest.mark.parametrize("seed", range(40))
def test_the_core_without_a_clock_is_the_plain_frontier(seed):
    # costing.network.pareto_clock with a state that never changes and adds nothing lists the
    # same (cost, time) pairs as costing.network.pareto (itself checked against networkx brute
    # force in tests/test_pareto.py); weights invented
    from costing.network.pareto import FrontierNetwork
    from costing.network.pareto_clock import clock_frontier

    rng = random.Random(seed)
    n = rng.randint(5, 10)
    adj: list[list[tuple[int, float, float, int]]] = [[] for _ in range(n)]
    e = 0
    for _ in range(rng.randint(n + 2, 3 * n)):
        u, v = rng.sample(range(n), 2)
        adj[u].append((v, round(rng.uniform(0, 20), 2), round(rng.uniform(0, 9), 2), e))
        e += 1
    net = FrontierNetwork(adj)
    starts = [(0, 1.0, 0.5)]
    exits = {n - 1: (2.0, 0.25)}
    want = net.frontier(starts, exits, max_routes=50)
    hc, ht = net.bounds(exits)
    got = clock_frontier(adj, [(0, 1.0, 0.5, None)], exits, hc, ht, lambda st, v, e: (0.0, 0.0, None),
                         lambda st: (None, ()), max_routes=50)
    assert [(r.cost, r.time) for r in got.routes] == [(r.cost, r.time) for r in want.routes]
    assert got.capped == want.capped


def test_the_trade_offs_sheet_shows_the_priced_figures(tmp_path):
    # the hand-worked case above through the pipeline and the writer: the Trade-offs sheet's cost
    # and hours are cost_route's total and elapsed hours, and the read-out compares elapsed hours
    # (462.00 -> 483.50: pay 21.50 more; 5.5 h -> 5.2 h: 0.30 h sooner)
    import openpyxl

    from costing import pipeline
    from costing.sheets.run import RunInfo, run_time
    from costing.sheets.writer import write_costed

    depots = (Depot("A", "A", 51.0, 4.0), Depot("H", "H", 51.5, 5.0, "hub", 10.0, 0.1),
              Depot("D", "D", 52.0, 6.0))
    lanes = (Lane("AD", "A", "D", "road", 330.0, 4.75), Lane("AH", "A", "H", "road", 165.0, 2.5),
             Lane("HD", "H", "D", "road", 165.0, 2.5))
    rates = (RateCard("artic", "road", 1.0, 30.0, 24.0), RateCard("rigid", "road", 0.9, 30.0, 9.0))
    ship = Shipment("S", "A", "D", 5.0)
    model = Model(Settings(driving_rules="eu_561_2006"), depots, lanes, rates, (ship,))
    c = pipeline.run(model, pipeline.Options(scenarios=False))
    path = str(tmp_path / "out.xlsx")
    write_costed(path, model, c.results, c.problems, RunInfo("in.xlsx", "0", None, run_time(), c.stats),
                 c.analysis, None, c.scenarios, c.runs)
    ws = openpyxl.load_workbook(path, data_only=True)["Trade-offs"]
    rows = list(ws.iter_rows(values_only=True))
    col = {name: i for i, name in enumerate(rows[0])}
    routes, _capped = c.analysis.frontiers["S"]
    assert len(rows) == 1 + len(routes) == 3
    for row, r in zip(rows[1:], routes):
        assert row[col["total_cost"]] == r.total_cost
        assert row[col["hours"]] == pytest.approx(r.elapsed_hours, abs=1e-12)
        assert row[col["elapsed_hours"]] == pytest.approx(r.elapsed_hours, abs=1e-12)
    assert [row[col["total_cost"]] for row in rows[1:]] == [462.0, 483.5]
    assert rows[2][col["hours_sooner"]] == pytest.approx(0.3)
    assert rows[2][col["read_out"]] == "pay 21.50 EUR more, arrive 0.30 h sooner"


@pytest.mark.parametrize("rules,seed", [("eu_561_2006", s) for s in range(60)] +
                         [("us_49cfr395", s) for s in range(30)])
def test_the_clock_route_search_weight_is_the_priced_route(monkeypatch, rules, seed):
    # the single-objective search with the clock (costing.network.clock.clock_astar): the weight
    # of the route it finds equals that route priced by cost_route (the subtotal, before any
    # minimum charge). A change of vehicle and back at a hub before driving would reset the
    # driver's clock in the search while the priced route keeps one run: not offered (EU seed
    # 16 once gave a search weight of 1236.19 for a route priced 1211.19).
    import costing.network.clock as clock

    seen = []
    real = clock.clock_astar

    def spy(*a, **kw):
        res = real(*a, **kw)
        seen.append(res)
        return res

    monkeypatch.setattr(clock, "clock_astar", spy)
    model = random_model(seed, rules)
    for s in model.shipments:
        seen.clear()
        res = Router(model, build_graph(model)).route(s, "cost", notes=False)
        if seen and res.status == "routed":
            assert round(seen[-1].weight, 2) == pytest.approx(res.subtotal, abs=0.005)
