"""Consolidation: sharing a run's cost to the cent (costing.price.allocate) and the planning core
(costing.plan.consolidate), checked by hand-worked cases, published apportionment examples and
an exact mixed-integer optimum computed here with scipy.optimize.milp (HiGHS).

The loads, routes, costs and capacities below are invented inputs; every expected value is worked
out by hand in a comment, taken from a published example, or computed by the MILP oracle, which
is written in this file and calls nothing of the code under test."""

from __future__ import annotations

import math
import random
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import lil_matrix

from costing.plan.consolidate import Capacity, Load, Step, plan, vehicles_for
from costing.price.allocate import allocate, allocate_units, cap_at_standalone

# A 24 t articulated lorry: 24 t payload, 33 Euro-pallet places, 90 m3 (common practice, no
# source: typical curtain-sider figures); 776.25 EUR per run is an invented rate.
ARTIC = Capacity(payload_t=24.0, pallet_places=33, volume_m3=90.0)
RUN = 776.25


def _direct(km: float = 250.0) -> tuple[tuple[Step, ...], ...]:
    return ((Step("D-C>", "artic", RUN, km),),)


# ---------------------------------------------------------------------------------------------
# (a) hand-worked cases


def test_three_loads_one_day_share_one_artic():
    loads = [Load("S1", "mon", 5, 4, 10, _direct()), Load("S2", "mon", 5, 4, 10, _direct()),
             Load("S3", "mon", 10, 8, 20, _direct())]
    p = plan(loads, {"artic": ARTIC})
    # by hand: 5 + 5 + 10 = 20 t <= 24 t, 16 pallets <= 33, 40 m3 <= 90: one vehicle, 776.25
    assert len(p.runs) == 1 and p.runs[0].vehicles == 1
    assert p.total == pytest.approx(776.25)
    # alone each pays a whole run: 3 x 776.25 = 2328.75
    assert sum(p.standalone.values()) == pytest.approx(2328.75)
    shares = p.runs[0].shares(2)
    # by hand, in cents: 77625 x 5/20 = 19406.25, 19406.25 and 77625 x 10/20 = 38812.5;
    # floors 19406 + 19406 + 38812 = 77624, one cent left, to the largest remainder (.5, S3):
    # 194.06 + 194.06 + 388.13 = 776.25 exactly (largest remainder method, from memory)
    assert shares == {"S1": 194.06, "S2": 194.06, "S3": 388.13}
    assert round(sum(shares.values()), 2) == 776.25
    assert sum(round(v * 100) for v in shares.values()) == 77625


def test_different_days_never_share():
    loads = [Load("S1", "mon", 5, 4, 10, _direct()), Load("S2", "tue", 5, 4, 10, _direct()),
             Load("S3", "wed", 10, 8, 20, _direct())]
    p = plan(loads, {"artic": ARTIC})
    # by hand: three days, three runs of one vehicle: 3 x 776.25 = 2328.75
    assert len(p.runs) == 3 and all(r.vehicles == 1 for r in p.runs)
    assert p.total == pytest.approx(2328.75)
    assert p.shares(2) == {"S1": 776.25, "S2": 776.25, "S3": 776.25}


def test_pallets_bind_before_weight():
    loads = [Load(f"S{i}", "mon", 6, 12, 20, _direct()) for i in range(3)]
    # by hand: 18 t <= 24 t and 60 m3 <= 90 m3 would fit one vehicle, but 36 pallets > 33
    # places: ceil(36 / 33) = 2 vehicles; two loads (24 pallets) fit one, the third another
    p = plan(loads, {"artic": ARTIC})
    assert p.runs[0].vehicles == 2
    assert p.total == pytest.approx(2 * 776.25)


def test_volume_binds_and_oversize_load_splits():
    # by hand: 3 x 35 m3 = 105 m3 > 90 m3: 2 vehicles though 6 t and 6 pallets are small
    assert vehicles_for([(2, 2, 35)] * 3, ARTIC) == 2
    # by hand: 30 t on 24 t payloads: ceil(30 / 24) = 2 vehicles (the weight rule of the legs)
    assert vehicles_for([(30, 10, 20)], ARTIC) == 2
    # by hand: 49 t on 24.5 t payloads is 2 vehicles despite float division
    assert vehicles_for([(49.0, 1, 1)], Capacity(24.5)) == 2


@settings(max_examples=200, deadline=None)
@given(sizes=st.lists(st.tuples(st.floats(0, 40), st.integers(0, 50), st.floats(0, 120)),
                      min_size=1, max_size=15))
def test_packing_bounds(sizes):
    n = vehicles_for(sizes, ARTIC)
    cap = ARTIC.dims()
    # a valid packing respects every capacity, so it needs at least ceil(sum / capacity) vehicles
    # in each dimension (the volume bound of bin packing, common practice, no source) ...
    for d in range(3):
        assert n >= math.ceil(sum(s[d] for s in sizes) / cap[d] - 1e-9)
    # ... and first-fit decreasing opens at most one vehicle per piece, the pieces of a load being
    # max over dimensions of ceil(size / capacity), at least one (worked by hand from the rule)
    assert n <= sum(max(1, *(math.ceil(s[d] / cap[d] - 1e-9) for d in range(3))) for s in sizes)


def test_hub_trunk_shared():
    # load 1: direct A-C 600, or A-H 150 + trunk H-X 300 + X-C 100 = 550 (cheaper alone);
    # load 2: direct B-D 500, or B-H 150 + H-X 300 + X-D 100 = 550 (dearer alone).
    # by hand: alone 550 + 500 = 1050; with load 1 on the trunk, load 2 through the hub adds
    # only 150 + 0 + 100 = 250 < 500, so both go through the hub: 150+150+300+100+100 = 800
    r1 = ((Step("A-C", "artic", 600),), (Step("A-H", "artic", 150), Step("H-X", "artic", 300),
                                         Step("X-C", "artic", 100)))
    r2 = ((Step("B-D", "artic", 500),), (Step("B-H", "artic", 150), Step("H-X", "artic", 300),
                                         Step("X-D", "artic", 100)))
    p = plan([Load(1, "mon", 8, 10, 30, r1), Load(2, "mon", 8, 10, 30, r2)], {"artic": ARTIC})
    assert p.standalone_total == pytest.approx(1050)
    assert p.choice == {1: 1, 2: 1}
    assert p.total == pytest.approx(800)
    trunk = [r for r in p.runs if r.key == "H-X"]
    assert len(trunk) == 1 and trunk[0].loads == (1, 2) and trunk[0].vehicles == 1


def test_pair_move_finds_what_single_moves_cannot():
    # both direct at 500 (1000); both through the hub 150+150+300+100+100 = 800, but either alone
    # through the hub costs 550 > 500, so no single move helps: single moves stay at 1000, the
    # pair move finds 800 (worked by hand)
    r1 = ((Step("A-C", "artic", 500),), (Step("A-H", "artic", 150), Step("H-X", "artic", 300),
                                         Step("X-C", "artic", 100)))
    r2 = ((Step("B-D", "artic", 500),), (Step("B-H", "artic", 150), Step("H-X", "artic", 300),
                                         Step("X-D", "artic", 100)))
    loads = [Load(1, "mon", 8, 10, 30, r1), Load(2, "mon", 8, 10, 30, r2)]
    p = plan(loads, {"artic": ARTIC}, pair_moves=False)
    assert p.total == pytest.approx(1000) and p.moves == 0
    p = plan(loads, {"artic": ARTIC})
    assert p.total == pytest.approx(800) and p.choice == {1: 1, 2: 1} and p.moves == 1
    # on different days the two cannot share the trunk: both stay direct (by hand: 1000)
    p = plan([loads[0], Load(2, "tue", 8, 10, 30, r2)], {"artic": ARTIC})
    assert p.total == pytest.approx(1000)
    # a day with more loads than pair_limit gets single moves only, and the plan says so
    p = plan(loads, {"artic": ARTIC}, pair_limit=1)
    assert p.total == pytest.approx(1000) and "pair_limit" in p.notes[0]


def test_bad_plan_input():
    with pytest.raises(ValueError, match="no candidate route"):
        plan([Load(1, "mon", 1, 1, 1, ())], {"artic": ARTIC})
    with pytest.raises(ValueError, match="no capacity"):
        plan([Load(1, "mon", 1, 1, 1, ((Step("A", "rigid", 1),),))], {"artic": ARTIC})
    with pytest.raises(ValueError, match="weight_t"):
        plan([Load(1, "mon", -1, 1, 1, _direct())], {"artic": ARTIC})
    with pytest.raises(ValueError, match="one cost"):
        plan([Load(1, "mon", 1, 1, 1, ((Step("A", "artic", 1),),)),
              Load(2, "mon", 1, 1, 1, ((Step("A", "artic", 2),),))], {"artic": ARTIC})


# ---------------------------------------------------------------------------------------------
# (b) allocation to the cent


def test_hamilton_seat_example():
    # Largest remainder (Hamilton) method, the worked example of the Wikipedia article "Largest
    # remainder method" (from memory): 100 000 votes 47 000 / 16 000 / 15 800 / 12 000 / 6 100 /
    # 3 100, 10 seats; quotas 4.70 1.60 1.58 1.20 0.61 0.31, automatic seats 4 1 1 1 0 0, the three
    # left to remainders .70 .61 .60: seats 5 2 1 1 1 0
    votes = [47000, 16000, 15800, 12000, 6100, 3100]
    assert allocate_units(10, votes) == [5, 2, 1, 1, 1, 0]


def test_alabama_paradox_example():
    # Alabama paradox under Hamilton's method, textbook example (from memory; re-worked by hand):
    # populations 6, 6, 2. House 10: quotas 4.29 4.29 1.43 -> 4 4 1 + the one left to .43: 4 4 2.
    # House 11: quotas 4.71 4.71 1.57 -> 4 4 1 + two left to .71 .71: 5 5 1 (C loses a seat)
    assert allocate_units(10, [6, 6, 2]) == [4, 4, 2]
    assert allocate_units(11, [6, 6, 2]) == [5, 5, 1]


def test_allocation_edges():
    # by hand: 0.05 EUR = 5 cents over three zero keys, split equally: 2 2 1 (tie: earlier first)
    assert allocate(0.05, [0, 0, 0], 2) == [0.02, 0.02, 0.01]
    # by hand: JPY has no minor unit (ISO 4217 exponent 0): 1000 yen by 1:1:1 -> 334 333 333
    assert allocate(1000, [1, 1, 1], 0) == [334.0, 333.0, 333.0]
    # by hand: a rebate of -0.10 by 1:2 -> quotas -3.33, -6.67 -> -3, -7
    assert allocate(-0.10, [1, 2], 2) == [-0.03, -0.07]
    with pytest.raises(ValueError, match="negative"):
        allocate(10.0, [1, -1], 2)
    with pytest.raises(ValueError, match="minor units"):
        allocate(10.001, [1, 1], 2)
    with pytest.raises(ValueError, match="no loads"):
        allocate(10.0, [], 2)


@settings(max_examples=300, deadline=None)
@given(cents=st.integers(min_value=0, max_value=10**9),
       keys=st.lists(st.floats(min_value=0, max_value=1e6, allow_nan=False), min_size=1, max_size=12),
       places=st.sampled_from([0, 2, 3]))
def test_allocation_adds_up_exactly(cents, keys, places):
    total = cents / 10 ** places
    shares = allocate(total, keys, places)
    units = [round(s * 10 ** places) for s in shares]
    # the defining property (the module's proof): the shares add up to the total in minor units
    assert sum(units) == cents
    assert round(sum(shares), places) == round(total, places)
    # the quota rule of the largest remainder method: each share is the floor or the ceiling of
    # its exact quota (checked with exact rationals here, not with the module's arithmetic)
    ks = [Fraction(k) for k in keys]
    if sum(ks) == 0:
        ks = [Fraction(1)] * len(ks)
    for u, k in zip(units, ks):
        q = cents * k / sum(ks)
        assert math.floor(q) <= u <= math.ceil(q)


def test_cap_at_standalone_hand():
    # by hand: shares 500 / 300 / 200 = 1000; alone 400 / 400 / 400. The first is capped at 400;
    # its 100 excess goes to the others by room 100 : 200 -> 33.33 and 66.67 (10 000 cents by
    # 1:2: quotas 3333.33, 6666.67 -> the cent left to .67): 400 + 333.33 + 266.67 = 1000
    shares, capped = cap_at_standalone([500, 300, 200], [400, 400, 400], 2)
    assert shares == [400.0, 333.33, 266.67] and capped == [0]
    with pytest.raises(ValueError, match="dearer"):
        cap_at_standalone([500, 500], [400, 400], 2)


@settings(max_examples=200, deadline=None)
@given(data=st.data())
def test_cap_keeps_total_and_never_exceeds_alone(data):
    n = data.draw(st.integers(1, 8))
    alone = data.draw(st.lists(st.integers(0, 100000), min_size=n, max_size=n))
    total = data.draw(st.integers(0, sum(alone)))
    keys = data.draw(st.lists(st.integers(0, 1000), min_size=n, max_size=n))
    shares = allocate(total / 100, keys, 2)
    capped, which = cap_at_standalone(shares, [a / 100 for a in alone], 2)
    assert sum(round(c * 100) for c in capped) == total
    assert all(round(c * 100) <= a for c, a in zip(capped, alone))
    assert all(round(shares[i] * 100) > alone[i] for i in which)


# ---------------------------------------------------------------------------------------------
# (c) against an exact optimum: fixed-charge network design with explicit vehicles (MILP)

SITES = {"O1": "origin", "O2": "origin", "H": "hub", "X": "hub", "C1": "customer",
         "C2": "customer", "C3": "customer"}
# per card: (payload t, pallet places, volume m3), EUR per km, EUR per run (invented rates)
CARDS = {"artic": ((24.0, 33, 90.0), 1.45, 90.0), "rigid": ((12.0, 18, 45.0), 1.05, 60.0)}


def _instance(seed: int) -> dict:
    """Plain data only (tuples, dicts, floats): the oracle reads this, not the planner's records."""
    rnd = random.Random(seed)
    cards = ["artic", "rigid"][:rnd.choice([1, 2])]
    km: dict[str, float] = {}

    def step(a: str, b: str) -> str:
        km.setdefault(f"{a}-{b}", float(rnd.randint(40, 400)))
        return f"{a}-{b}"

    def cpv(s: str, card: str) -> float:
        _cap, per_km, per_run = CARDS[card]
        return round(km[s] * per_km + per_run, 2)

    n, days = rnd.randint(3, 6), rnd.choice([1, 1, 2])
    loads = []
    for i in range(n):
        o, c = rnd.choice(["O1", "O2"]), rnd.choice(["C1", "C2", "C3"])
        hub = rnd.choice(["H", "X"])
        options = [[(step(o, c), rnd.choice(cards))],
                   [(step(o, hub), rnd.choice(cards)), (step(hub, c), rnd.choice(cards))],
                   [(step(o, "H"), cards[0]), (step("H", "X"), cards[0]), (step("X", c), cards[-1])]]
        k = rnd.choice([2, 3])
        routes = [[(s, card, cpv(s, card)) for s, card in r] for r in rnd.sample(options, k)]
        # each load fits one vehicle of every card (the smallest is 12 t, 18 pallets, 45 m3)
        loads.append({"id": f"S{i}", "day": rnd.randrange(days), "size": (
            round(rnd.uniform(1, 12), 1), rnd.randint(1, 18), round(rnd.uniform(2, 45), 1)),
            "routes": routes})
    return {"loads": loads, "km": km}


def _milp_optimum(inst: dict) -> float:
    """Exact optimum: binary x[l, r] (load l takes route r), binary z[l, run, v] (load l rides in
    vehicle v of the run), binary u[run, v] (vehicle v of the run is used); y[run] = sum_v u, the
    integer vehicles of each (day, step, card). Every load fits one vehicle, so a run never needs
    more vehicles than the loads that could use it. The capacity rows per vehicle and dimension
    (sum of the loads' size in it <= capacity x u) make this exact bin packing, not the fractional
    relaxation vehicles >= load / capacity."""
    loads = inst["loads"]
    runs: dict[tuple, dict] = {}
    for li, ld in enumerate(loads):
        for route in ld["routes"]:
            for s, card, cost in route:
                runs.setdefault((ld["day"], s, card), {"cost": cost, "card": card, "loads": set()})
                runs[(ld["day"], s, card)]["loads"].add(li)
    var: dict[tuple, int] = {}

    def new(name: tuple) -> int:
        var[name] = len(var)
        return var[name]

    for li, ld in enumerate(loads):
        for r in range(len(ld["routes"])):
            new(("x", li, r))
    for rk, run in runs.items():
        run["V"] = len(run["loads"])
        for v in range(run["V"]):
            new(("u", rk, v))
            for li in run["loads"]:
                new(("z", li, rk, v))
    rows: list[tuple[dict[int, float], float, float]] = []
    for li, ld in enumerate(loads):
        rows.append(({var[("x", li, r)]: 1.0 for r in range(len(ld["routes"]))}, 1, 1))
    for rk, run in runs.items():
        for li in run["loads"]:
            row = {var[("z", li, rk, v)]: 1.0 for v in range(run["V"])}
            for r, route in enumerate(loads[li]["routes"]):
                if any((loads[li]["day"], s, card) == rk for s, card, _c in route):
                    row[var[("x", li, r)]] = -1.0
            rows.append((row, 0, 0))
        cap = CARDS[run["card"]][0]
        for v in range(run["V"]):
            for d in range(3):
                row = {var[("z", li, rk, v)]: loads[li]["size"][d] for li in run["loads"]}
                row[var[("u", rk, v)]] = -cap[d]
                rows.append((row, -np.inf, 0))
            if v + 1 < run["V"]:
                rows.append(({var[("u", rk, v + 1)]: 1.0, var[("u", rk, v)]: -1.0}, -np.inf, 0))
    a = lil_matrix((len(rows), len(var)))
    for i, (row, _lo, _hi) in enumerate(rows):
        for j, coef in row.items():
            a[i, j] = coef
    c = np.zeros(len(var))
    for name, j in var.items():
        if name[0] == "u":
            c[j] = runs[name[1]]["cost"]
    res = milp(c, constraints=LinearConstraint(a.tocsr(), [r[1] for r in rows], [r[2] for r in rows]),
               integrality=np.ones(len(var)), bounds=Bounds(0, 1))
    assert res.status == 0, res.message
    return float(res.fun)


def _alone(inst: dict) -> float:
    # each load fits one vehicle: alone it pays one vehicle per step of its cheapest route
    return sum(min(sum(c for _s, _card, c in r) for r in ld["routes"]) for ld in inst["loads"])


def _planner_input(inst: dict) -> tuple[list[Load], dict]:
    loads = [Load(ld["id"], ld["day"], *ld["size"],
                  tuple(tuple(Step(s, card, cost, inst["km"][s]) for s, card, cost in r)
                        for r in ld["routes"])) for ld in inst["loads"]]
    return loads, {name: Capacity(*cap) for name, (cap, _k, _r) in CARDS.items()}


def test_plan_against_exact_optimum():
    gaps: dict[bool, list[float]] = {True: [], False: []}
    shared = 0
    for seed in range(200):
        inst = _instance(seed)
        opt = _milp_optimum(inst)
        alone = _alone(inst)
        shared += opt < alone - 1e-6
        for pairs in (True, False):
            p = plan(*_planner_input(inst), pair_moves=pairs)
            # a feasible plan can never beat the exact optimum (scipy.optimize.milp, HiGHS)
            assert p.total >= opt - 1e-6, seed
            # never worse than every load alone (computed here from the instance's plain data)
            assert p.total <= alone + 1e-6, seed
            assert p.standalone_total == pytest.approx(alone)
            # the runs' costs are shared to the cent
            for run in p.runs:
                assert sum(round(v * 100) for v in run.shares(2).values()) == round(run.cost * 100)
            gaps[pairs].append((p.total - opt) / opt)
    for pairs, g in gaps.items():
        print(f"\nconsolidation ({'single and pair' if pairs else 'single'} moves) vs exact MILP "
              f"optimum, {len(g)} instances ({shared} where sharing pays): average gap "
              f"{sum(g) / len(g):.3%}, worst {max(g):.3%}, optimal in {sum(x < 1e-9 for x in g)}")
    assert sum(gaps[True]) / len(gaps[True]) <= 0.02
    # pair moves only add moves after the single moves stop: never a worse plan on these
    assert all(a <= b + 1e-12 for a, b in zip(gaps[True], gaps[False]))


def test_a_step_on_two_routes_keeps_each_routes_extras():
    # Hand-worked. One load, two candidate routes through the same step X (same key and card):
    # route 0 ends after X and pays unloading 50 there: 100 + 50 = 150; route 1 goes on to Y
    # (no unloading on X): 100 + 30 = 130. The plan keeps route 1 at 130: the extras of X are
    # those of the route tried, not of whichever candidate was read last.
    r0 = (Step("X", "c", 100.0, 1.0, (0.0, 50.0)),)
    r1 = (Step("X", "c", 100.0, 1.0, (0.0, 0.0)), Step("Y", "c", 30.0, 1.0, (0.0, 0.0)))
    p = plan([Load("L", 0, 1.0, 0.0, 0.0, (r0, r1))], {"c": Capacity(24.0)})
    assert p.choice == {"L": 1} and p.total == 130.0
