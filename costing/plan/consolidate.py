"""Consolidation: which loads share vehicles, and on which route each load goes.

A pure planning core, independent of workbooks and graphs. Each load has a day, a size in three
dimensions (weight t, pallets, volume m3) and a few candidate routes; a candidate route is a
sequence of lane steps, each with the rate card that runs it and that card's per-vehicle cost
of the step. Loads on the same day whose chosen routes use the same step with the same card
ride in one vehicle run: the run needs as many vehicles as its loads pack into (first-fit
decreasing over the three dimensions), and costs vehicles x per-vehicle cost, where the
per-vehicle cost is the step's shared cost plus, for each load-dependent charge (``extras``:
loading where a load starts, unloading where it ends), the largest over its loads; or, when
that is more, what its loads cost each on vehicles of its own (loads can always run
separately, so a run never costs more than its loads alone). Loads on different days never
share.

Problem. Choose one candidate route per load to minimise the total cost of all runs
(a fixed-charge network design problem with bin packing on every run: NP-hard in general).

Method.
1. Start from each load's cheapest stand-alone route (the route it would take alone).
2. Local improvement: sweep over the loads in order; for each, compute the marginal cost of
   every candidate route (what the load adds to the runs given where all the other loads are)
   and move the load to the candidate of lowest marginal cost when that lowers the total
   (by more than a rounding tolerance). Repeat sweeps until a whole sweep moves no load.
3. Pair moves (``pair_moves=True``, the default; on days of at most ``pair_limit`` loads):
   try moving two loads of the same day together, each to any of its candidate routes: one
   sweep over the pairs, each pair moved (at the plan as it then is) when that lowers the
   total; after a sweep with moves go back to step 2. Stop when neither single nor pair moves lower the total.

Speed. A run of more than ``EXACT_PACKING`` loads is not repacked at every move: its vehicles with
one more load are estimated as the lower bound (total / capacity in the tightest dimension) plus
the slack of its current exact packing, from running sums kept as loads join and leave; shares,
handling maxima and stand-alone sums are kept the same way. The final runs are packed exactly.

Guarantees.
- Terminates: every move strictly lowers the total, and there are finitely many assignments,
  so no assignment is visited twice.
- Never worse than every load alone: in the starting plan each run's vehicles are at most the
  sum of what its loads need alone (first-fit decreasing opens a vehicle only for an item that
  fits in no open one, so it uses at most one vehicle per piece, and a load alone needs one
  vehicle per piece), so the start costs at most the sum of the loads' stand-alone cheapest
  costs; moves only lower it.
- A local optimum with respect to single-load moves (and pair moves, when on): no load (no two
  loads) can be moved to other candidate routes to lower the total (for runs of more than
  ``EXACT_PACKING`` loads, the total as estimated above).
- Not globally optimal in general: moving three or more loads together can lower the total when
  no single or pair move does (without pair moves already two: both onto a shared trunk that is
  dearer for either alone), and first-fit decreasing may use more vehicles than the best
  packing. The tests measure the gap against an exact mixed-integer optimum on small instances.

Consolidation hubs need nothing special. Two loads from different depots to different customers
whose candidate routes run through the same hub share the trunk step (the same step key) and
so its runs: say load 1 has the routes ``[A-C]`` and ``[A-H, H-X, X-C]`` and load 2 the routes
``[B-D]`` and ``[B-H, H-X, X-D]``. If the trunk ``H-X`` carried by one vehicle for both is
cheaper than the two direct runs, the single moves find it once one of the loads is already on
the trunk (because its route through the hub is its cheapest alone), else the pair moves do.

A load larger than one vehicle in some dimension is split into m equal pieces, m the largest
of ceil(size / capacity) over the dimensions, so each piece fits; alone it needs m vehicles, the
``vehicles_needed`` rule of ``costing.price.rates`` for weight.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Hashable, Iterable, Sequence
from dataclasses import dataclass, field

from costing.money import round_money
from costing.price.allocate import allocate

_EPS = 1e-9  # size tolerance (49.0 t on 24.5 t payloads is 2 vehicles despite float division)
_COST_EPS = 1e-7  # a move must lower the total by more than this (currency)
# runs of up to this many loads are packed exactly at every move; larger ones are estimated during
# the moves (lower bound plus the current packing's slack) and packed exactly at the end
EXACT_PACKING = 24


@dataclass(frozen=True)
class Capacity:
    """What one vehicle of a rate card carries. ``None`` means no limit in that dimension.

    Attributes
    ----------
    payload_t : float
        Payload, tonnes.
    pallet_places : float or None
        Pallet places (floor positions).
    volume_m3 : float or None
        Load volume, cubic metres."""

    payload_t: float
    pallet_places: float | None = None
    volume_m3: float | None = None

    def dims(self) -> tuple[float | None, float | None, float | None]:
        """(payload t, pallet places, volume m3)."""
        return self.payload_t, self.pallet_places, self.volume_m3


@dataclass(frozen=True)
class Step:
    """One lane step of a candidate route, run with one rate card.

    Attributes
    ----------
    key : hashable
        The lane step (e.g. ``LaneUse.key`` such as ``"L1>"``); loads on the same day whose routes
        have the same key and card share its vehicle runs.
    card : hashable
        The rate card (vehicle) that runs the step; its capacity is in ``Problem.capacities``.
    cost_per_vehicle : float
        Cost of one vehicle of `card` on the step, currency: what every load on the run shares
        (the same for every load with this key and card).
    km : float
        Length of the step, km (for the tonne-km allocation keys).
    extras : tuple of float
        Per-vehicle charges that depend on the load (e.g. loading where it starts, unloading
        where it ends): a run pays, per vehicle, the largest of each over its loads."""

    key: Hashable
    card: Hashable
    cost_per_vehicle: float
    km: float = 1.0
    extras: tuple[float, ...] = ()


@dataclass(frozen=True)
class Load:
    """A shipment to plan.

    Attributes
    ----------
    load_id : hashable
    day : hashable
        Ready date; only loads of the same day share vehicles.
    weight_t, pallets, volume_m3 : float
        Size: tonnes, pallet places, cubic metres.
    routes : tuple of tuple of Step
        Candidate routes, each a sequence of steps (no step key with the same card twice)."""

    load_id: Hashable
    day: Hashable
    weight_t: float
    pallets: float
    volume_m3: float
    routes: tuple[tuple[Step, ...], ...]

    def size(self) -> tuple[float, float, float]:
        """(weight t, pallets, volume m3)."""
        return self.weight_t, self.pallets, self.volume_m3


@dataclass(frozen=True)
class Run:
    """Vehicles of one card on one step on one day, with the loads they carry.

    Attributes
    ----------
    day, key, card : hashable
        The run's day, step key and rate card.
    loads : tuple
        Ids of the loads on the run, in input order.
    vehicles : int
        Vehicles needed (first-fit decreasing over weight, pallets and volume).
    cost_per_vehicle : float
        Currency per vehicle.
    cost : float
        vehicles x (cost_per_vehicle + the largest extras), currency; or, when that is more, what
        its loads cost on vehicles of their own (the run is then better split: the caller
        prices it that way).
    keys : tuple of float
        Each load's tonne-km on the run (weight t x km), the allocation keys."""

    day: Hashable
    key: Hashable
    card: Hashable
    loads: tuple
    vehicles: int
    cost_per_vehicle: float
    cost: float
    keys: tuple[float, ...]

    def shares(self, places: int) -> dict[Hashable, float]:
        """load id -> its share of the run's cost by tonne-km, rounded to `places` so the shares
        add up to the run's cost exactly (``costing.price.allocate``)."""
        total = round_money(self.cost, places)
        return dict(zip(self.loads, allocate(total, self.keys, places)))


@dataclass(frozen=True)
class Plan:
    """The consolidated plan.

    Attributes
    ----------
    choice : dict
        load id -> index of its chosen route in ``Load.routes``.
    runs : tuple of Run
        Every vehicle run, ordered by day, step and card as first seen.
    total : float
        Sum of the runs' costs, currency.
    standalone : dict
        load id -> its cheapest cost alone (currency), the same cost model without sharing.
    standalone_route : dict
        load id -> index of that cheapest stand-alone route.
    moves : int
        Moves the local improvement made (a pair move counts once).
    sweeps : int
        Sweeps over the loads (single moves).
    notes : list of str
        What stopped the improvement early, if anything."""

    choice: dict
    runs: tuple[Run, ...]
    total: float
    standalone: dict
    standalone_route: dict
    moves: int = 0
    sweeps: int = 0
    notes: list[str] = field(default_factory=list)

    @property
    def standalone_total(self) -> float:
        """Sum of the loads' stand-alone cheapest costs, currency (what no consolidation costs)."""
        return sum(self.standalone.values())

    def shares(self, places: int) -> dict[Hashable, float]:
        """load id -> the sum of its tonne-km shares over the runs it uses, currency."""
        out: dict[Hashable, float] = {}
        for run in self.runs:
            for lid, s in run.shares(places).items():
                out[lid] = round_money(out.get(lid, 0.0) + s, places)
        return out


def _pieces(size: Sequence[float], cap: Capacity) -> list[tuple[float, ...]]:
    """The load as equal pieces that each fit one vehicle of `cap`."""
    m = 1
    for x, c in zip(size, cap.dims()):
        if c is not None:
            m = max(m, math.ceil(x / c - _EPS))
    return [tuple(x / m for x in size)] * m


def vehicles_for(sizes: Iterable[Sequence[float]], cap: Capacity) -> int:
    """Vehicles of capacity `cap` that first-fit decreasing packs the loads `sizes` into.

    Parameters
    ----------
    sizes : iterable of (weight t, pallets, volume m3)
        The loads on the run; one larger than a vehicle is split into equal pieces that fit.
    cap : Capacity
        One vehicle's payload t, pallet places and volume m3 (None: no limit).

    Returns
    -------
    int
        Vehicles (0 for no loads); never below ceil(total / capacity) in any dimension, since
        every vehicle respects every capacity.

    Notes
    -----
    Pieces are sorted by their largest share of a capacity (then by their sizes, for a
    deterministic order) and each goes into the first open vehicle where it fits in all three
    dimensions, else into a new vehicle."""
    dims = [(i, c) for i, c in enumerate(cap.dims()) if c is not None]
    items: list[tuple[float, ...]] = []
    for s in sizes:
        items.extend(_pieces(s, cap))
    if not dims:
        return 1 if items else 0
    if not items:
        return 0
    # all of it fits in one vehicle: first-fit decreasing puts every piece in the first (the
    # same test as the packing below, on the totals), so skip the sort
    if all(sum(it[i] for it in items) <= c + _EPS * max(1.0, c) for i, c in dims):
        return 1
    items.sort(key=lambda it: (max(it[i] / c for i, c in dims), tuple(it)), reverse=True)
    bins: list[list[float]] = []
    for it in items:
        for b in bins:
            if all(b[k] + it[i] <= c + _EPS * max(1.0, c) for k, (i, c) in enumerate(dims)):
                for k, (i, _c) in enumerate(dims):
                    b[k] += it[i]
                break
        else:
            bins.append([it[i] for i, _c in dims])
    return len(bins)


class _State:
    """Loads on each (day, step key, card) and the cost of that run, with a packing cache."""

    def __init__(self, loads: Sequence[Load], capacities: dict):
        self.loads = loads
        self.capacities = capacities
        self.members: dict[tuple, set[int]] = {}
        self.cpv: dict[tuple, float] = {}
        self.extras: dict[tuple, tuple[float, ...]] = {}  # (run key, load index) -> its extras
        self._cache: dict[tuple, int] = {}
        self._alone_cost: dict[tuple, float] = {}
        # running aggregates of each run's members (kept by place/remove), for large runs
        self.size_sums: dict[tuple, list[float]] = {}
        self.alone_sum: dict[tuple, float] = {}
        self.extra_counts: dict[tuple, dict[tuple, int]] = {}
        self._packed_now: dict[tuple, int] = {}
        for li, load in enumerate(loads):
            for route in load.routes:
                for st in route:
                    rk = (load.day, st.key, st.card)
                    self.extras[(rk, li)] = st.extras
                    old = self.cpv.setdefault(rk, st.cost_per_vehicle)
                    if abs(old - st.cost_per_vehicle) > _COST_EPS:
                        raise ValueError(
                            f"step {st.key!r} with card {st.card!r} costs {old} per vehicle for one "
                            f"load but {st.cost_per_vehicle} for load {load.load_id!r}; a shared run "
                            f"has one cost: put what differs per load in the step key")
                    if st.card not in capacities:
                        raise ValueError(f"no capacity given for card {st.card!r} "
                                         f"(load {load.load_id!r}, step {st.key!r})")

    def vehicles(self, rk: tuple, members: frozenset[int]) -> int:
        """First-fit decreasing vehicles of `members` on run `rk` (cached)."""
        key = (rk, members)
        n = self._cache.get(key)
        if n is None:
            n = vehicles_for((self.loads[i].size() for i in sorted(members)),
                             self.capacities[rk[2]])
            self._cache[key] = n
        return n

    def _alone(self, rk: tuple, i: int, extras: tuple[float, ...] | None = None) -> float:
        """Load i on run rk with vehicles of its own (with `extras`, else those of the route it
        is placed on)."""
        ex = self.extras[(rk, i)] if extras is None else extras
        a = self._alone_cost.get((rk, i, ex))
        if a is None:
            a = self._alone_cost[(rk, i, ex)] = self.vehicles(rk, frozenset((i,))) * (self.cpv[rk] + sum(ex))
        return a

    def _lower_bound(self, rk: tuple, sums: list[float]) -> int:
        """ceil(total / capacity) in the tightest dimension: no packing needs fewer vehicles."""
        n = 0
        for x, c in zip(sums, self.capacities[rk[2]].dims()):
            if c is not None:
                n = max(n, math.ceil(x / c - _EPS))
        return max(n, 1)

    def _estimate(self, rk: tuple, members: set[int], li: int) -> int:
        """Vehicles of `members` plus load li: exact first-fit decreasing for small runs; for a
        run of more than EXACT_PACKING loads, its current packing's slack over the lower bound
        added to the lower bound with li (the final count is always packed exactly)."""
        m = members | {li}
        if len(m) <= EXACT_PACKING:
            return self.vehicles(rk, frozenset(m))
        base = frozenset(members)
        slack = self.vehicles(rk, base) - self._lower_bound(rk, self._sums(rk))
        add = self.loads[li].size()
        return max(self._lower_bound(rk, [a + b for a, b in zip(self._sums(rk), add)]) + slack, 1)

    def _sums(self, rk: tuple) -> list[float]:
        return self.size_sums.setdefault(rk, [0.0, 0.0, 0.0])

    def _cost(self, rk: tuple, vehicles: int, members: set[int], li: int | None,
              tried: tuple[float, ...] = ()) -> float:
        """min(shared, alone) for `members` (the run's current members; plus li with extras
        `tried` when given) with `vehicles` shared vehicles, from the run's running aggregates."""
        count = len(members) + (li is not None)
        if not count:
            return 0.0
        shared = vehicles * (self.cpv[rk] + sum(self._max_extras(rk, tried if li is not None else None)))
        if count == 1:
            return shared
        alone = self.alone_sum.get(rk, 0.0) + (self._alone(rk, li, tried) if li is not None else 0.0)
        return min(shared, alone)

    def _max_extras(self, rk: tuple, extra: tuple[float, ...] | None) -> list[float]:
        """The largest of each extra over the run's members (and `extra`, when given)."""
        seen = self.extra_counts.get(rk, {})
        vectors = [v for v, k in seen.items() if k > 0]
        if extra is not None:
            vectors.append(extra)
        return [max(col) for col in zip(*vectors)] if vectors else []

    def run_cost(self, rk: tuple, members: Iterable[int]) -> float:
        """The cheaper of one shared run (vehicles x (shared cost + the largest extras)) and
        every member on vehicles of its own: loads may always run separately."""
        m = set(members)
        if not m:
            return 0.0
        cpv = self.cpv[rk]
        own = [self.extras[(rk, i)] for i in m]
        shared = self.vehicles(rk, frozenset(m)) * (cpv + sum(max(col) for col in zip(*own)))
        if len(m) == 1:
            return shared
        return min(shared, sum(self._alone(rk, i) for i in m))

    def marginal(self, li: int, route: tuple[Step, ...]) -> float:
        """What load `li` adds to the runs of `route`, given every other load where it is."""
        day = self.loads[li].day
        add = 0.0
        for st in route:
            rk = (day, st.key, st.card)
            members = self.members.get(rk, set())
            if len(members) + (li not in members) > EXACT_PACKING:
                add += self._added_big(rk, members, li, st.extras)
            elif li in members:  # evaluate as if it were not there
                self._leave(rk, li)
                members.discard(li)
                try:
                    add += self._added(rk, members, li, st.extras)
                finally:
                    members.add(li)
                    self._join(rk, li)
            else:
                add += self._added(rk, members, li, st.extras)
        return add

    def _packed(self, rk: tuple) -> int:
        """Exact first-fit decreasing vehicles of the run's current members (kept until they change)."""
        n = self._packed_now.get(rk)
        if n is None:
            members = self.members[rk]
            n = self._packed_now[rk] = vehicles_for((self.loads[i].size() for i in sorted(members)),
                                                    self.capacities[rk[2]])
        return n

    def _added_big(self, rk: tuple, members: set[int], li: int, tried: tuple[float, ...]) -> float:
        """`_added` for a run of more than EXACT_PACKING loads, without changing the run: the
        vehicles with and without li are its exact packing and the lower bound plus that
        packing's slack, the shares from the running aggregates."""
        cpv, sums, size = self.cpv[rk], self._sums(rk), self.loads[li].size()
        packed = self._packed(rk)
        slack = packed - self._lower_bound(rk, sums)
        alone_all, own = self.alone_sum.get(rk, 0.0), self._alone(rk, li, tried)
        counts = dict(self.extra_counts.get(rk, {}))

        def cost(n: int, k: int, alone: float) -> float:
            vectors = [v for v, c in counts.items() if c > 0]
            shared = n * (cpv + sum(max(col) for col in zip(*vectors))) if vectors else n * cpv
            return shared if k == 1 else min(shared, alone)

        k = len(members)
        if li in members:  # placed here with its route's extras; tried with `tried`
            placed = self.extras[(rk, li)]
            counts[placed] -= 1
            rest = alone_all - self._alone(rk, li)
            n = max(self._lower_bound(rk, [a - b for a, b in zip(sums, size)]) + slack, 1)
            before = cost(n, k - 1, rest) if k > 1 else 0.0
            counts[tried] = counts.get(tried, 0) + 1
            after = cost(packed, k, rest + own)
        else:
            before = cost(packed, k, alone_all) if k else 0.0
            counts[tried] = counts.get(tried, 0) + 1
            n = max(self._lower_bound(rk, [a + b for a, b in zip(sums, size)]) + slack, 1)
            after = cost(n, k + 1, alone_all + own)
        return after - before

    def _added(self, rk: tuple, others: set[int], li: int, tried: tuple[float, ...]) -> float:
        """run cost with li (its extras `tried`) - run cost without it (`others`: the run's
        members, li not among them)."""
        before = self._cost(rk, self.vehicles(rk, frozenset(others)), others, None) if others else 0.0
        after = self._cost(rk, self._estimate(rk, others, li), others, li, tried)
        return after - before

    def _join(self, rk: tuple, li: int) -> None:
        self._packed_now.pop(rk, None)
        for k, x in enumerate(self.loads[li].size()):
            self._sums(rk)[k] += x
        self.alone_sum[rk] = self.alone_sum.get(rk, 0.0) + self._alone(rk, li)
        counts = self.extra_counts.setdefault(rk, {})
        v = self.extras[(rk, li)]
        counts[v] = counts.get(v, 0) + 1

    def _leave(self, rk: tuple, li: int) -> None:
        self._packed_now.pop(rk, None)
        for k, x in enumerate(self.loads[li].size()):
            self._sums(rk)[k] -= x
        self.alone_sum[rk] -= self._alone(rk, li)
        self.extra_counts[rk][self.extras[(rk, li)]] -= 1

    def place(self, li: int, route: tuple[Step, ...]) -> None:
        """Put load li on `route`: it joins each run with that route's extras on the step (a
        step can have different extras on different candidate routes: unloading where one ends,
        none where another goes on)."""
        for st in route:
            rk = (self.loads[li].day, st.key, st.card)
            m = self.members.setdefault(rk, set())
            if li in m:
                self._leave(rk, li)
            else:
                m.add(li)
            self.extras[(rk, li)] = st.extras
            self._join(rk, li)

    def remove(self, li: int, route: tuple[Step, ...]) -> None:
        for st in route:
            rk = (self.loads[li].day, st.key, st.card)
            m = self.members[rk]
            if li in m:
                m.discard(li)
                self._leave(rk, li)


def _check(loads: Sequence[Load]) -> None:
    seen = set()
    for load in loads:
        if load.load_id in seen:
            raise ValueError(f"load id {load.load_id!r} appears twice")
        seen.add(load.load_id)
        if not load.routes:
            raise ValueError(f"load {load.load_id!r} has no candidate route")
        for x, what in zip(load.size(), ("weight_t", "pallets", "volume_m3")):
            if not math.isfinite(x) or x < 0:
                raise ValueError(f"load {load.load_id!r}: {what} must be a number >= 0, not {x!r}")
        for r, route in enumerate(load.routes):
            pairs = [(st.key, st.card) for st in route]
            if len(set(pairs)) != len(pairs):
                raise ValueError(f"load {load.load_id!r} route {r} uses the same step and card twice")


def _pair_sweep(state: _State, loads: Sequence[Load], choice: list[int], days: set) -> int:
    """One sweep over the pairs of loads: each pair, taken in order at the current plan, moves to
    the pair of candidate routes that lowers the total most (both change at once), if any.
    Returns the number of pair moves made.

    Only pairs of loads on the same day whose candidate routes have a (step, card) in common are
    tried: for any other pair the two moves are independent, so the pair's change in cost is the
    sum of two single moves, none of which lowers the total at a single-move local optimum."""
    steps = [{(st.key, st.card) for route in ld.routes for st in route} for ld in loads]
    # the loads of each (day, step, card), in index order; and those with a choice of routes (a
    # pair of loads with one route each has nothing to change)
    every: dict[tuple, list[int]] = {}
    choosing: dict[tuple, list[int]] = {}
    for i, ld in enumerate(loads):
        if ld.day not in days:
            continue
        for key in steps[i]:
            every.setdefault((ld.day, key), []).append(i)
            if len(ld.routes) > 1:
                choosing.setdefault((ld.day, key), []).append(i)
    made = 0
    for i in range(len(loads)):
        li = loads[i]
        if li.day not in days:
            continue
        buckets = every if len(li.routes) > 1 else choosing
        partners: set[int] = set()
        for key in steps[i]:
            members = buckets.get((li.day, key), ())
            partners.update(members[bisect.bisect_right(members, i):])
        for j in sorted(partners):  # the pairs (i, j), j > i, in the order of a sweep over all pairs
            lj = loads[j]
            ri, rj = li.routes[choice[i]], lj.routes[choice[j]]
            state.remove(j, rj)
            before = state.marginal(i, ri) + state.marginal(j, rj)
            state.remove(i, ri)
            best = (before - _COST_EPS, choice[i], choice[j])
            for a, ra in enumerate(li.routes):
                state.place(i, ra)
                for b, rb in enumerate(lj.routes):
                    if (a, b) == (choice[i], choice[j]):
                        continue
                    after = state.marginal(i, ra) + state.marginal(j, rb)
                    if after < best[0]:
                        best = (after, a, b)
                state.remove(i, ra)
            state.place(i, li.routes[best[1]])
            state.place(j, lj.routes[best[2]])
            if (best[1], best[2]) != (choice[i], choice[j]):
                choice[i], choice[j] = best[1], best[2]
                made += 1
    return made


def plan(loads: Sequence[Load], capacities: dict, max_sweeps: int = 1000,
         pair_moves: bool = True, pair_limit: int = 60, start: dict | None = None) -> Plan:
    """Assign each load a candidate route so that loads leaving together share vehicles.

    Parameters
    ----------
    loads : sequence of Load
        The loads, each with its day, size and candidate routes.
    capacities : dict
        card -> Capacity of one vehicle of that card.
    pair_moves : bool
        After the single-load moves stop, also try moving two loads of the same day together
        (both onto new candidate routes at once), then single moves again, until neither helps.
    pair_limit : int
        Pair moves only on days with at most this many loads: a pair sweep tries every pair of
        the day's loads, so its work grows with the square of their number (measured: 300 loads
        on one day take minutes, 100 a few seconds). Larger days get single moves only (noted).
    max_sweeps : int
        Safety bound on improvement sweeps (the method terminates on its own; this only caps
        work on very large inputs, and the plan is then still never worse than alone).
    start : dict, optional
        load id -> index of the route to start from instead of its cheapest alone (loads not
        named start from their cheapest alone). The "never worse than alone" guarantee then
        holds only when the start does: the caller compares.

    Returns
    -------
    Plan
        Chosen route per load, the vehicle runs, the total and each load's stand-alone cost.

    Raises
    ------
    ValueError
        A load has no route, a negative or non-finite size, repeats a step in a route, names a
        card with no capacity, or one (day, step, card) run is given two per-vehicle costs."""
    _check(loads)
    state = _State(loads, capacities)
    choice: list[int] = []
    alone: dict = {}
    alone_route: dict = {}
    for load in loads:
        costs = [sum(vehicles_for([load.size()], capacities[st.card]) * (st.cost_per_vehicle + sum(st.extras))
                     for st in route) for route in load.routes]
        best = min(range(len(costs)), key=lambda r: (costs[r], r))
        choice.append(start.get(load.load_id, best) if start else best)
        alone[load.load_id] = costs[best]
        alone_route[load.load_id] = best
    for li, load in enumerate(loads):
        state.place(li, load.routes[choice[li]])

    per_day: dict = {}
    for load in loads:
        per_day[load.day] = per_day.get(load.day, 0) + 1
    pair_days = {d for d, k in per_day.items() if k <= pair_limit}
    notes = [f"day {d!r}: {k} loads, more than pair_limit {pair_limit}: single moves only"
             for d, k in per_day.items() if pair_moves and k > pair_limit]
    moves = sweeps = 0
    improved = True
    while improved and sweeps < max_sweeps:
        improved = False
        sweeps += 1
        for li, load in enumerate(loads):
            if len(load.routes) < 2:
                continue
            margins = [state.marginal(li, route) for route in load.routes]
            best = min(range(len(margins)), key=lambda r: (margins[r], r))
            if margins[best] < margins[choice[li]] - _COST_EPS:
                state.remove(li, load.routes[choice[li]])
                choice[li] = best
                state.place(li, load.routes[best])
                moves += 1
                improved = True
        if not improved and pair_moves:
            made = _pair_sweep(state, loads, choice, pair_days)
            moves += made
            improved = made > 0

    if improved:
        notes.append(f"stopped after {max_sweeps} sweeps (max_sweeps)")
    runs = []
    for rk, members in state.members.items():
        if not members:
            continue
        ids = sorted(members)
        day, key, card = rk
        km = next(st.km for st in loads[ids[0]].routes[choice[ids[0]]]
                  if st.key == key and st.card == card)
        n = state.vehicles(rk, frozenset(members))
        runs.append(Run(day, key, card, tuple(loads[i].load_id for i in ids), n, state.cpv[rk],
                        state.run_cost(rk, members), tuple(loads[i].weight_t * km for i in ids)))
    total = sum(r.cost for r in runs)
    return Plan({load.load_id: choice[li] for li, load in enumerate(loads)}, tuple(runs), total,
                alone, alone_route, moves, sweeps, notes)
