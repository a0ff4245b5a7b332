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
Nothing below changes a plan (the same moves in the same order, the same float arithmetic):
- Packing counts are kept per (card, set of members), with the counts of that set with one load
  more or less, each packed by the first-fit decreasing of ``vehicles_for`` (same pieces, same
  order, same sums); a run is packed once per membership, each load tried on it once.
- What a load adds to a run (on given extras) is kept until the run changes (members, their
  extras, or a float of its running sums); a load none of whose candidate runs changed since it
  was last tried and stayed is not tried again (it would compute the same and stay).
- Estimated moves can lower the estimate but raise the true total, and the sweeps can then
  repeat a few plans until ``max_sweeps``. Such a cycle is recognised (``_Cycle``): when its
  state repeats exactly but for rounding drift of the size sums that provably changes no lower
  bound the remaining repeats would compute, the repeats are counted, not made, and the plan
  returned is the one the sweeps would have returned.

Guarantees.
- Terminates: every move strictly lowers the total as the moves compute it; with every run
  packed exactly that is the true total, there are finitely many assignments and none is
  visited twice. A move estimated on a run of more than ``EXACT_PACKING`` loads can raise the
  true total, so plans can repeat: ``max_sweeps`` then stops the sweeps (noted in the plan).
- Never worse than every load alone (where moves are not estimated): in the starting plan each
  run's vehicles are at most the
  sum of what its loads need alone (first-fit decreasing opens a vehicle only for an item that
  fits in no open one, so it uses at most one vehicle per piece, and a load alone needs one
  vehicle per piece), so the start costs at most the sum of the loads' stand-alone cheapest
  costs; moves only lower it (for runs of more than ``EXACT_PACKING`` loads, as estimated: see
  Terminates).
- When the sweeps stop before ``max_sweeps``, a local optimum with respect to single-load moves
  (and pair moves, when on): no load (no two loads) can be moved to other candidate routes to
  lower the total (for runs of more than ``EXACT_PACKING`` loads, the total as estimated above).
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


class _Packer:
    """First-fit decreasing for one card's capacity, on loads named by their index: the count
    ``vehicles_for`` gives for the same loads in index order (the same pieces, the same test of
    all of them in one vehicle summed in the same order, the same order of pieces and the same
    first fit, with the same float arithmetic), each load's pieces and sort key worked out once."""

    def __init__(self, cap: Capacity, loads: Sequence[Load]):
        self.cap = cap
        self.loads = loads
        self.dims = [(i, c) for i, c in enumerate(cap.dims()) if c is not None]
        self.lims = tuple(c + _EPS * max(1.0, c) for _i, c in self.dims)
        # load index -> (sort key, one piece's sizes in the capacity's dims, that per dim repeated
        # for each piece, the pieces' sizes, the load's total per dim)
        self._info: dict[int, tuple] = {}
        self._alone: dict[int, int] = {}

    def info(self, li: int) -> tuple:
        inf = self._info.get(li)
        if inf is None:
            pieces = _pieces(self.loads[li].size(), self.cap)
            it = pieces[0]
            key = (max(it[i] / c for i, c in self.dims), tuple(it)) if self.dims else ()
            vals = tuple(it[i] for i, _c in self.dims)
            reps = tuple((v,) * len(pieces) for v in vals)
            inf = self._info[li] = (key, vals, reps, [vals] * len(pieces), tuple(sum(r) for r in reps))
        return inf

    def alone(self, li: int) -> int:
        """Vehicles of load li alone."""
        n = self._alone.get(li)
        if n is None:
            n = self._alone[li] = self.count([li])
        return n

    def count(self, members: Sequence[int]) -> int:
        """First-fit decreasing vehicles of the loads `members` (ascending indices)."""
        if not members:
            return 0
        if not self.dims:
            return 1
        infos = [self.info(li) for li in members]
        # all of it in one vehicle: vehicles_for's test, its sums in the same order
        if all(sum([x for inf in infos for x in inf[2][d]]) <= lim for d, lim in enumerate(self.lims)):
            return 1
        # decreasing by the key; pieces with equal keys are equal, so their order does not matter
        infos.sort(key=_first, reverse=True)
        items = []
        for inf in infos:
            items += inf[3]
        return _first_fit(items, self.lims)

    def count_with(self, packing: _Packing, li: int) -> int:
        """``count`` of the members of `packing` and load li (not a member), from the packing's
        sorted pieces and totals."""
        if not packing.order:
            return self.alone(li)
        return self._count_changed(packing, li, 1)

    def count_without(self, packing: _Packing, li: int) -> int:
        """``count`` of the members of `packing` but load li (a member)."""
        if len(packing.order) == 1:
            return 0
        return self._count_changed(packing, li, -1)

    def _count_changed(self, packing: _Packing, li: int, sign: int) -> int:
        if not self.dims:
            return 1
        inf = self._info.get(li) or self.info(li)
        items, keys, totals = packing._sorted or packing.sorted_pieces()
        n = len(items) + len(inf[3])
        # all of it in one vehicle? `count` sums each dim in index order; the totals here are
        # summed in another order, then li's pieces added or taken off. Two float sums of the
        # same n numbers >= 0 differ by at most 2 (n - 1) u (u = 2**-53) of their exact sum,
        # which is at most the members' total (1 + n u), taking li's pieces off adds one
        # rounding of that size: so outside t +- 4.5e-16 n T (T the larger of the two totals)
        # the test comes out the same either way; inside it, it is made as `count` makes it.
        fits, sure = True, True
        for d, lim in enumerate(self.lims):
            own = inf[4][d]
            t = totals[d] + own if sign > 0 else totals[d] - own
            tol = 4.5e-16 * n * max(t, totals[d])
            if t - tol > lim:
                fits = False
                break
            if t + tol > lim:
                sure = False
        if fits and not sure:
            if sign > 0:
                order = packing.order.copy()
                bisect.insort(order, li)
            else:
                order = [i for i in packing.order if i != li]
            infos = [self.info(i) for i in order]
            fits = all(sum([x for f in infos for x in f[2][d]]) <= lim for d, lim in enumerate(self.lims))
        if fits:
            return 1
        # items: decreasing by key; keys: the same keys ascending. Pieces with equal keys are
        # equal, so li's pieces go (or come off) anywhere among the pieces with their key.
        if sign > 0:
            p = len(keys) - bisect.bisect_left(keys, inf[0])  # items[:p]: keys >= li's
            return _first_fit(items[:p] + inf[3] + items[p:], self.lims)
        p = len(keys) - bisect.bisect_right(keys, inf[0])  # items[p:p + m]: li's key
        return _first_fit(items[:p] + items[p + len(inf[3]):], self.lims)


def _first(t: tuple):
    return t[0]


def _first_fit(items: list[tuple[float, ...]], lims: tuple[float, ...]) -> int:
    """Bins that first fit opens for `items` (in order; sizes in the capacity's dims) under the
    limits `lims`: each item into the first bin where it fits in every dim, else a new bin (the
    loop of ``vehicles_for``, the same additions and comparisons)."""
    if len(lims) == 1:
        (lim,) = lims
        one: list[float] = []
        for (w,) in items:
            for j, b in enumerate(one):
                if b + w <= lim:
                    one[j] = b + w
                    break
            else:
                one.append(w)
        return len(one)
    if len(lims) == 2:
        l0, l1 = lims
        b0: list[float] = []
        b1: list[float] = []
        # on a long list, bins before `first` take none of the items left: each lacks room for
        # the least of them in some dim (sums only grow and float addition is monotone), so first
        # fit starts there; a short list starts at the first bin
        skip = len(items) > 40
        if skip:
            w_min, p_min = [0.0] * len(items), [0.0] * len(items)
            mw = mp = math.inf
            for i in range(len(items) - 1, -1, -1):
                mw, mp = min(mw, items[i][0]), min(mp, items[i][1])
                w_min[i], p_min[i] = mw, mp
        first = 0
        for i, (w, p) in enumerate(items):
            if skip:
                mw, mp = w_min[i], p_min[i]
                while first < len(b0) and (b0[first] + mw > l0 or b1[first] + mp > l1):
                    first += 1
            for j in range(first, len(b0)):
                if b0[j] + w <= l0 and b1[j] + p <= l1:
                    b0[j] += w
                    b1[j] += p
                    break
            else:
                b0.append(w)
                b1.append(p)
        return len(b0)
    bins: list[list[float]] = []
    for it in items:
        for b in bins:
            if all(b[k] + it[k] <= lim for k, lim in enumerate(lims)):
                for k in range(len(lims)):
                    b[k] += it[k]
                break
        else:
            bins.append(list(it))
    return len(bins)


class _Packing:
    """First-fit decreasing vehicles of one set of loads on one card, and of that set with one
    load more or less (any run of that card with those members has these counts)."""

    __slots__ = ("order", "packer", "_base", "plus", "minus", "_sorted")

    def __init__(self, order: list[int], packer: _Packer):
        self.order = order  # the members, ascending
        self.packer = packer
        self._base: int | None = None
        self.plus: dict[int, int] = {}
        self.minus: dict[int, int] = {}
        self._sorted: tuple | None = None

    def sorted_pieces(self) -> tuple:
        """The members' pieces (sizes in the capacity's dims) decreasing by sort key, the
        pieces' keys ascending and the total of each dim (members and dims >= 1)."""
        if self._sorted is None:
            infos = sorted((self.packer.info(i) for i in self.order), key=_first, reverse=True)
            items: list = []
            keys: list = []
            for f in reversed(infos):
                keys += [f[0]] * len(f[3])
            for f in infos:
                items += f[3]
            totals = tuple(sum([it[d] for it in items]) for d in range(len(self.packer.dims)))
            self._sorted = (items, keys, totals)
        return self._sorted

    @property
    def base(self) -> int:
        if self._base is None:
            self._base = self.packer.count(self.order)
        return self._base

    def with_(self, li: int) -> int:
        """Vehicles of the members and load li (not a member)."""
        n = self.plus.get(li)
        if n is None:
            n = self.plus[li] = self.packer.count_with(self, li)
        return n

    def without(self, li: int) -> int:
        """Vehicles of the members but load li (a member)."""
        n = self.minus.get(li)
        if n is None:
            n = self.minus[li] = self.packer.count_without(self, li)
        return n


class _Run:
    """The loads on one (day, step key, card) and their running aggregates."""

    __slots__ = ("rk", "card", "cpv", "packer", "members", "sums", "alone_sum", "counts", "ex",
                 "stamp", "packing", "_maxcols", "added", "cost_now")

    def __init__(self, rk: tuple, cpv: float, packer: _Packer):
        self.rk = rk
        self.card = rk[2]
        self.cpv = cpv
        self.packer = packer
        self.members: set[int] = set()
        self.sums = [0.0, 0.0, 0.0]  # total weight t, pallets, m3 of the members
        self.alone_sum = 0.0  # sum of the members' costs on vehicles of their own
        self.counts: dict[tuple, int] = {}  # extras vector -> members placed with it
        self.ex: dict[int, tuple[float, ...]] = {}  # member -> the extras it is placed with
        self.stamp = 0  # the State's clock when the run last changed
        self.packing: _Packing | None = None  # of the current members (None: look it up)
        self._maxcols: tuple[list[float], bool] | None = None
        # (load, its extras' number) -> what the load on those extras adds to the run as it is now
        self.added: dict[tuple, float] = {}
        self.cost_now: float | None = None  # _added_new's cost of the run as it is


class _State:
    """The loads on each (day, step key, card) and the cost of that run.

    Packing counts are kept per (card, set of members), with the count for one load more or less,
    so a run is packed once per membership and each load tried on it once. Every run carries the
    clock of its last change (members, their extras, or the floats of its running sums), so a
    load whose candidate runs are all unchanged since it was last tried (and stayed) is known to
    stay again without trying it (``settled``)."""

    def __init__(self, loads: Sequence[Load], capacities: dict):
        self.loads = loads
        self.capacities = capacities
        self.runs: dict[tuple, _Run] = {}
        self.placed: dict[tuple, _Run] = {}  # the runs in the order loads were first placed on them
        self.packers: dict = {}
        self._packings: dict[tuple, _Packing] = {}
        self.clock = 1
        self.seen = [-1] * len(loads)  # the clock when each load was last tried (-1: never)
        # while a cycle is being checked (_Cycle): every set operation on the runs' members and
        # every value of a run's size sums, in order
        self.log: list | None = None
        self.trail: list | None = None
        # per load and route: (run, the step's extras, (load, extras number)) per step
        self.steps: list[list[tuple[tuple[_Run, tuple[float, ...], tuple[int, int]], ...]]] = []
        self.tried_runs: list[tuple[_Run, ...]] = []  # every step's run of every route, in order
        extras_ids: dict[tuple, int] = {}  # extras vector -> its number (for the keys of _Run.added)
        for li, load in enumerate(loads):
            routes = []
            for route in load.routes:
                steps = []
                for st in route:
                    rk = (load.day, st.key, st.card)
                    run = self.runs.get(rk)
                    if run is None:
                        if st.card not in capacities:
                            raise ValueError(f"no capacity given for card {st.card!r} "
                                             f"(load {load.load_id!r}, step {st.key!r})")
                        packer = self.packers.get(st.card)
                        if packer is None:
                            packer = self.packers[st.card] = _Packer(capacities[st.card], loads)
                        run = self.runs[rk] = _Run(rk, st.cost_per_vehicle, packer)
                    elif abs(run.cpv - st.cost_per_vehicle) > _COST_EPS:
                        raise ValueError(
                            f"step {st.key!r} with card {st.card!r} costs {run.cpv} per vehicle for one "
                            f"load but {st.cost_per_vehicle} for load {load.load_id!r}; a shared run "
                            f"has one cost: put what differs per load in the step key")
                    eid = extras_ids.setdefault(st.extras, len(extras_ids))
                    steps.append((run, st.extras, (li, eid)))
                routes.append(tuple(steps))
            self.steps.append(routes)
            self.tried_runs.append(tuple(step[0] for steps in routes for step in steps))

    # -- packing -------------------------------------------------------------------------------

    def _packing(self, run: _Run) -> _Packing:
        p = run.packing
        if p is None:
            key = (run.card, frozenset(run.members))
            p = self._packings.get(key)
            if p is None:
                p = self._packings[key] = _Packing(sorted(run.members), run.packer)
            run.packing = p
        return p

    def vehicles(self, rk: tuple, members: Iterable[int]) -> int:
        """First-fit decreasing vehicles of `members` on run `rk` (kept)."""
        key = (rk[2], frozenset(members))
        p = self._packings.get(key)
        if p is None:
            p = self._packings[key] = _Packing(sorted(key[1]), self.runs[rk].packer)
        return p.base

    @staticmethod
    def _alone(run: _Run, i: int, extras: tuple[float, ...]) -> float:
        """Load i on the run with vehicles of its own, paying `extras`."""
        return run.packer.alone(i) * (run.cpv + sum(extras))

    def _lower_bound(self, run: _Run, sums: list[float]) -> int:
        """ceil(total / capacity) in the tightest dimension: no packing needs fewer vehicles."""
        n = 0
        for x, c in zip(sums, run.packer.cap.dims()):
            if c is not None:
                n = max(n, math.ceil(x / c - _EPS))
        return max(n, 1)

    # -- the largest extras ----------------------------------------------------------------------

    @staticmethod
    def _vectors(run: _Run) -> list[tuple[float, ...]]:
        return [v for v, k in run.counts.items() if k > 0]

    def _maxcols(self, run: _Run) -> tuple[list[float], bool]:
        """The largest of each extra over the members, and whether there is any member (kept
        until they change)."""
        m = run._maxcols
        if m is None:
            vectors = self._vectors(run)
            m = run._maxcols = ([max(col) for col in zip(*vectors)] if vectors else [], bool(vectors))
        return m

    @staticmethod
    def _with(cols: list[float], any_member: bool, extra: tuple[float, ...]) -> list[float]:
        """`cols` (the largest of each extra over some members, if `any_member`) with `extra`
        too: max over the column with one more value is max(the column's max, that value)."""
        if not any_member:
            return list(extra)
        return [max(m, e) for m, e in zip(cols, extra)]

    # -- what a load adds --------------------------------------------------------------------------

    def marginal(self, li: int, r: int) -> float:
        """What load `li` adds to the runs of its route `r`, given every other load where it is.

        What it adds to one run (with the step's extras) is kept until the run changes: it is a
        function of the run's state alone."""
        add = 0.0
        for run, tried, key in self.steps[li][r]:
            members = run.members
            x = run.added.get(key)
            if x is not None:
                if li in members and len(members) <= EXACT_PACKING:
                    members.discard(li)  # as _added_member does (see settled)
                    members.add(li)
                    if self.log is not None:
                        self.log.append((run, li, 2))
                add += x
                continue
            stamp = run.stamp
            if li in members:
                if len(members) > EXACT_PACKING:
                    x = self._added_big(run, li, tried)
                else:
                    x = self._added_member(run, li, tried)
            elif len(members) + 1 > EXACT_PACKING:
                x = self._added_big(run, li, tried)
            else:
                x = self._added_new(run, li, tried)
            if run.stamp == stamp:
                run.added[key] = x
            add += x
        return add

    def _added_new(self, run: _Run, li: int, tried: tuple[float, ...]) -> float:
        """Run cost with li (extras `tried`; li not a member) - run cost now: each the cheaper
        of one shared run and every load alone (``run_cost``)."""
        k = len(run.members)
        cpv = run.cpv
        packing = run.packing or self._packing(run)
        cols, any_member = run._maxcols or self._maxcols(run)
        before = run.cost_now
        if before is None:  # the run's cost as it is (kept until it changes)
            if k:
                shared = packing.base * (cpv + sum(cols))
                before = shared if k == 1 else min(shared, run.alone_sum + 0.0)
            else:
                before = 0.0
            run.cost_now = before
        n = packing.plus.get(li)
        if n is None:
            n = packing.with_(li)
        shared = n * (cpv + sum([max(m, e) for m, e in zip(cols, tried)] if any_member else tried))
        if k == 0:
            return shared - before
        alone = run.packer._alone.get(li)
        if alone is None:
            alone = run.packer.alone(li)
        return min(shared, run.alone_sum + alone * (cpv + sum(tried))) - before

    def _added_member(self, run: _Run, li: int, tried: tuple[float, ...]) -> float:
        """Run cost with member li on extras `tried` - run cost without li, for a run of at most
        EXACT_PACKING loads. The run's sums are taken down by li and put back as the loads
        leaving and joining do (the same float operations); if that changes a float, the run
        counts as changed."""
        members, sums, counts, cpv = run.members, run.sums, run.counts, run.cpv
        size = self.loads[li].size()
        old_sums, old_alone = sums.copy(), run.alone_sum
        packing = self._packing(run)
        placed = run.ex[li]
        for k, x in enumerate(size):
            sums[k] -= x
        if self.trail is not None:
            self.trail.append((run, tuple(sums)))
        run.alone_sum -= self._alone(run, li, placed)
        counts[placed] -= 1
        members.discard(li)
        try:
            k = len(members)
            if counts[placed] > 0:
                cols, any_member = self._maxcols(run)
            else:
                vectors = self._vectors(run)
                cols, any_member = ([max(col) for col in zip(*vectors)] if vectors else []), bool(vectors)
            if k:
                shared = packing.without(li) * (cpv + sum(cols))
                before = shared if k == 1 else min(shared, run.alone_sum + 0.0)
            else:
                before = 0.0
            shared = packing.base * (cpv + sum(self._with(cols, any_member, tried)))
            after = shared if k == 0 else min(shared, run.alone_sum + self._alone(run, li, tried))
            added = after - before
        finally:
            members.add(li)
            for k, x in enumerate(size):
                sums[k] += x
            run.alone_sum = run.alone_sum + self._alone(run, li, placed)
            counts[placed] = counts.get(placed, 0) + 1
            if self.log is not None:
                self.log.append((run, li, 2))
            if self.trail is not None:
                self.trail.append((run, tuple(sums)))
        if sums != old_sums or run.alone_sum != old_alone:
            self._changed(run)
        return added

    def _added_big(self, run: _Run, li: int, tried: tuple[float, ...]) -> float:
        """What li adds to a run of more than EXACT_PACKING loads, without changing the run: the
        vehicles with and without li are its exact packing and the lower bound plus that
        packing's slack, the shares from the running aggregates."""
        cpv, sums, size = run.cpv, run.sums, self.loads[li].size()
        members = run.members
        packed = self._packing(run).base
        slack = packed - self._lower_bound(run, sums)
        alone_all, own = run.alone_sum, self._alone(run, li, tried)
        counts = dict(run.counts)

        def cost(n: int, k: int, alone: float) -> float:
            vectors = [v for v, c in counts.items() if c > 0]
            shared = n * (cpv + sum(max(col) for col in zip(*vectors))) if vectors else n * cpv
            return shared if k == 1 else min(shared, alone)

        k = len(members)
        if li in members:  # placed here with its route's extras; tried with `tried`
            placed = run.ex[li]
            counts[placed] -= 1
            rest = alone_all - self._alone(run, li, placed)
            n = max(self._lower_bound(run, [a - b for a, b in zip(sums, size)]) + slack, 1)
            before = cost(n, k - 1, rest) if k > 1 else 0.0
            counts[tried] = counts.get(tried, 0) + 1
            after = cost(packed, k, rest + own)
        else:
            before = cost(packed, k, alone_all) if k else 0.0
            counts[tried] = counts.get(tried, 0) + 1
            n = max(self._lower_bound(run, [a + b for a, b in zip(sums, size)]) + slack, 1)
            after = cost(n, k + 1, alone_all + own)
        return after - before

    # -- changes ------------------------------------------------------------------------------------

    def _changed(self, run: _Run) -> None:
        self.clock += 1
        run.stamp = self.clock
        run.added.clear()
        run.cost_now = None

    def settled(self, li: int) -> bool:
        """Whether load li was tried before, stayed, and no run of its candidate routes has
        changed since: trying it again would compute the same marginal costs from the same
        state, so it would stay again. Then the set operations that trying it makes are made
        (they change nothing, but may move a member to another slot of the set, and ``run_cost``
        adds in the set's order), and True is returned; else it is marked as tried now."""
        seen = self.seen[li]
        runs = self.tried_runs[li]
        if seen < 0 or any(run.stamp > seen for run in runs):
            self.seen[li] = self.clock
            return False
        for run in runs:
            m = run.members
            if li in m and len(m) <= EXACT_PACKING:
                m.discard(li)
                m.add(li)
                if self.log is not None:
                    self.log.append((run, li, 2))
        return True

    def _join(self, run: _Run, li: int) -> None:
        for k, x in enumerate(self.loads[li].size()):
            run.sums[k] += x
        if self.trail is not None:
            self.trail.append((run, tuple(run.sums)))
        v = run.ex[li]
        run.alone_sum = run.alone_sum + self._alone(run, li, v)
        run.counts[v] = run.counts.get(v, 0) + 1

    def _leave(self, run: _Run, li: int) -> None:
        for k, x in enumerate(self.loads[li].size()):
            run.sums[k] -= x
        if self.trail is not None:
            self.trail.append((run, tuple(run.sums)))
        v = run.ex[li]
        run.alone_sum -= self._alone(run, li, v)
        run.counts[v] -= 1

    def place(self, li: int, r: int) -> None:
        """Put load li on its route `r`: it joins each run with that route's extras on the step
        (a step can have different extras on different candidate routes: unloading where one
        ends, none where another goes on)."""
        for run, ex, _key in self.steps[li][r]:
            self.placed.setdefault(run.rk, run)
            m = run.members
            if li in m:
                self._leave(run, li)
            else:
                m.add(li)
                run.packing = None
                if self.log is not None:
                    self.log.append((run, li, 1))
            run.ex[li] = ex
            self._join(run, li)
            run._maxcols = None
            self._changed(run)

    def remove(self, li: int, r: int) -> None:
        """Take load li off the runs of its route `r`."""
        for run, _ex, _key in self.steps[li][r]:
            m = run.members
            if li in m:
                m.discard(li)
                if self.log is not None:
                    self.log.append((run, li, 0))
                self._leave(run, li)
                run.packing = None
                run._maxcols = None
                self._changed(run)

    def run_cost(self, rk: tuple, members: Iterable[int]) -> float:
        """The cheaper of one shared run (vehicles x (shared cost + the largest extras)) and
        every member on vehicles of its own: loads may always run separately."""
        m = set(members)
        if not m:
            return 0.0
        run = self.runs[rk]
        cpv = run.cpv
        own = [run.ex[i] for i in m]
        shared = self.vehicles(rk, m) * (cpv + sum(max(col) for col in zip(*own)))
        if len(m) == 1:
            return shared
        return min(shared, sum(self._alone(run, i, run.ex[i]) for i in m))

    def order_matters(self, run: _Run) -> bool:
        """Whether ``run_cost`` of the run's members could depend on the order of its set (the
        sum of the members alone, in set order, is the cost when it is not more than shared):
        False when the run has at most two members (a + b == b + a) or when shared is below
        every order's sum (float sums of n numbers >= 0 in two orders differ by at most
        2 (n - 1) u of the exact sum, u = 2**-53)."""
        m = run.members
        if len(m) < 3:
            return False
        alone = [self._alone(run, i, run.ex[i]) for i in m]
        if min(alone) < 0:
            return True
        total = sum(alone)
        shared = self.vehicles(run.rk, m) * (run.cpv + sum(max(col) for col in zip(*(run.ex[i] for i in m))))
        return not shared < total * (1.0 - 4.5e-16 * len(m)) - 1e-300


def _snapshot(run: _Run) -> tuple:
    """What of a run the moves read: members, size sums, alone sum, extras counts (in their
    order) and the members' extras."""
    m = sorted(run.members)
    return m, tuple(run.sums), run.alone_sum, tuple(run.counts.items()), [run.ex[i] for i in m]


class _Cycle:
    """A check that the improvement loop has entered a cycle, and the jump over its repeats.

    The loop (a sweep of single moves, and pair moves after a sweep without one) is a function
    of its state: the choices; per run the members, their extras, the extras counts (in order),
    the alone sum and the size sums. Moves of runs of more than EXACT_PACKING loads are
    estimated, so a move can raise the true total and the loop can come back to an earlier
    plan and repeat it until ``max_sweeps``. Taking a load off a run and putting it back
    changes the size sums by rounding only, so the state does not repeat exactly; but the size
    sums are read only through ``ceil(sum / capacity - _EPS)`` (``_State._lower_bound``).

    At a loop start where the choices equal those of `period` loops before, the state is
    recorded (A), the next `period` loops run as usual while every value the size sums take is
    recorded, and the state at the end (B) is compared with A. If all of it but some size sums
    is equal, the next loops repeat these `period` loops exactly as long as every lower bound
    they compute comes out the same: the size sums then go through the same additions, each
    off by at most the difference at the loop start plus one ulp per addition, so that the
    drift during the t-th repeat is at most (t + 1) (|B - A| + additions x ulp). When every
    bound computed from every recorded value of a drifting sum (with or without any load that
    may try the run) is the same integer at both ends of that margin, the remaining repeats
    are skipped:
    moves and sweeps are counted as they would be, and the set operations of the skipped
    loops are replayed on the runs whose ``run_cost`` depends on the order of their set, so the
    plan returned is the one the loops would have returned. Otherwise the loop just goes on."""

    WINDOW = 8  # periods looked for: 1 to WINDOW loops
    ATTEMPTS = 6  # checks that may fail before no more are made

    def __init__(self, state: _State, max_sweeps: int):
        self.state = state
        self.max_sweeps = max_sweeps
        self.history: list[tuple[int, ...]] = []  # the choices at the last WINDOW loop starts
        self.failed = 0
        self.wait = 0
        self.on = False

    def start(self, choice: list[int], sweeps: int) -> None:
        """At a loop start: record the choices; start a check if they repeat."""
        now = tuple(choice)
        if not self.on and self.failed < self.ATTEMPTS and self.wait <= 0:
            for p in range(1, len(self.history) + 1):
                if self.history[-p] == now and self.max_sweeps - sweeps > 3 * p:
                    self._begin(p, sweeps)
                    break
        self.wait -= 1
        self.history.append(now)
        del self.history[:-self.WINDOW]
        if self.on and sweeps - self.first == self.phase:
            self.sensitive = [run for run in self.state.placed.values() if self.state.order_matters(run)]

    def _begin(self, period: int, sweeps: int) -> None:
        state = self.state
        self.on, self.period, self.first, self.a_choice = True, period, sweeps, self.history[-period]
        self.phase = (self.max_sweeps - sweeps) % period  # the loop start the skipped loops end at
        self.clock = state.clock
        self.a = {rk: _snapshot(run) for rk, run in state.placed.items()}
        self.placed = len(state.placed)
        self.moves: list[int] = []
        state.log, state.trail = [], []

    def end(self, moves: int) -> None:
        """After a loop of the check: the moves it made."""
        if self.on:
            self.moves.append(moves)

    def jump(self, choice: list[int], sweeps: int) -> tuple[int, int] | None:
        """At a loop start after `period` loops of a check: (moves, sweeps) to add when the
        loops repeat (the skipped loops' set operations then replayed), else None."""
        if not self.on or sweeps - self.first < self.period:
            return None
        state = self.state
        log, trail = state.log, state.trail
        state.log = state.trail = None
        self.on = False
        drift = self._drift() if tuple(choice) == self.a_choice else None
        q = (self.max_sweeps - sweeps) // self.period
        if drift is None or not self._safe(drift, trail, q):
            self.failed += 1
            self.wait = self.period * 2 ** self.failed
            return None
        sensitive = {id(run) for run in self.sensitive}
        ops = [(run.members, li, kind) for run, li, kind in log if id(run) in sensitive]
        for _ in range(q):
            for m, li, kind in ops:
                if kind == 0:
                    m.discard(li)
                elif kind == 1:
                    m.add(li)
                else:
                    m.discard(li)
                    m.add(li)
        return q * sum(self.moves), q * self.period

    def _drift(self) -> dict | None:
        """(run, dim) -> |B - A| for the size sums that differ, when nothing else does; None
        when something else does."""
        state = self.state
        if len(state.placed) != self.placed:
            return None
        out = {}
        for rk, run in state.placed.items():
            if run.stamp <= self.clock:
                continue  # unchanged since A
            a, b = self.a[rk], _snapshot(run)
            if a[0] != b[0] or a[2] != b[2] or a[3] != b[3] or a[4] != b[4]:
                return None
            for d, (x, y) in enumerate(zip(a[1], b[1])):
                if x != y:
                    out[(run, d)] = abs(y - x)
        return out

    def _safe(self, drift: dict, trail: list, q: int) -> bool:
        """Whether every lower bound the repeats can compute from a drifting size sum is the
        same at both ends of its margin (see the class docstring)."""
        if not drift:
            return True
        state = self.state
        values: dict[tuple, list[float]] = {}
        for run, sums in trail:
            for d in range(3):
                if (run, d) in drift:
                    values.setdefault((run, d), []).append(sums[d])
        runs = {run for run, _d in drift}
        users: dict = {run: set() for run in runs}
        for li, tried in enumerate(state.tried_runs):
            for run in tried:
                if run in users:
                    users[run].add(li)
        checks = 0
        for (run, d), delta in drift.items():
            c = run.packer.cap.dims()[d]
            if c is None:
                continue
            seen = values.get((run, d), []) + [self.a[run.rk][1][d]]
            sizes = [state.loads[li].size()[d] for li in users[run]]
            big = 2.0 * (max(abs(v) for v in seen) + max((abs(x) for x in sizes), default=0.0) + 1.0)
            ulp = math.ulp(big)
            margin = (q + 2) * (delta + (len(seen) + 1) * ulp) + 4 * ulp  # repeats 1..q, then the rest
            if margin > 1e-6 * c:
                return False
            checks += len(seen) * (2 * len(sizes) + 1)
            if checks > 2_000_000:
                return False
            for s in seen:
                for v in [s] + [s + x for x in sizes] + [s - x for x in sizes]:
                    if math.ceil((v - margin) / c - _EPS) != math.ceil((v + margin) / c - _EPS):
                        return False
        return True


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
            ri, rj = choice[i], choice[j]
            state.remove(j, rj)
            before = state.marginal(i, ri) + state.marginal(j, rj)
            state.remove(i, ri)
            best = (before - _COST_EPS, choice[i], choice[j])
            for a in range(len(li.routes)):
                state.place(i, a)
                for b in range(len(lj.routes)):
                    if (a, b) == (choice[i], choice[j]):
                        continue
                    after = state.marginal(i, a) + state.marginal(j, b)
                    if after < best[0]:
                        best = (after, a, b)
                state.remove(i, a)
            state.place(i, best[1])
            state.place(j, best[2])
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
        Bound on improvement sweeps. With every run packed exactly the method terminates on its
        own; estimated moves on runs of more than EXACT_PACKING loads can repeat plans, which
        this bound stops (repeats of a recognised cycle are counted, not made: module
        docstring, Speed).
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
    for li, load in enumerate(loads):
        # vehicles_for([load.size()], capacities[st.card]): the same count, worked out once per card
        costs = [sum(state.packers[st.card].alone(li) * (st.cost_per_vehicle + sum(st.extras))
                     for st in route) for route in load.routes]
        best = min(range(len(costs)), key=lambda r: (costs[r], r))
        choice.append(start.get(load.load_id, best) if start else best)
        alone[load.load_id] = costs[best]
        alone_route[load.load_id] = best
    for li in range(len(loads)):
        state.place(li, choice[li])

    per_day: dict = {}
    for load in loads:
        per_day[load.day] = per_day.get(load.day, 0) + 1
    pair_days = {d for d, k in per_day.items() if k <= pair_limit}
    notes = [f"day {d!r}: {k} loads, more than pair_limit {pair_limit}: single moves only"
             for d, k in per_day.items() if pair_moves and k > pair_limit]
    moves = sweeps = 0
    improved = True
    cycle = _Cycle(state, max_sweeps)
    while improved and sweeps < max_sweeps:
        cycle.start(choice, sweeps)
        skipped = cycle.jump(choice, sweeps)
        if skipped is not None:  # the loops repeat: their moves and sweeps counted, not made
            moves += skipped[0]
            sweeps += skipped[1]
            if sweeps >= max_sweeps:
                break
        improved = False
        sweeps += 1
        made_before = moves
        for li, load in enumerate(loads):
            if len(load.routes) < 2 or state.settled(li):
                continue
            margins = [state.marginal(li, r) for r in range(len(load.routes))]
            best = min(range(len(margins)), key=lambda r: (margins[r], r))
            if margins[best] < margins[choice[li]] - _COST_EPS:
                state.remove(li, choice[li])
                choice[li] = best
                state.place(li, best)
                moves += 1
                improved = True
        if not improved and pair_moves:
            made = _pair_sweep(state, loads, choice, pair_days)
            moves += made
            improved = made > 0
        cycle.end(moves - made_before)

    if improved:
        notes.append(f"stopped after {max_sweeps} sweeps (max_sweeps)")
    runs = []
    for rk, run in state.placed.items():
        members = run.members
        if not members:
            continue
        ids = sorted(members)
        day, key, card = rk
        km = next(st.km for st in loads[ids[0]].routes[choice[ids[0]]]
                  if st.key == key and st.card == card)
        n = state.vehicles(rk, frozenset(members))
        runs.append(Run(day, key, card, tuple(loads[i].load_id for i in ids), n, run.cpv,
                        state.run_cost(rk, members), tuple(loads[i].weight_t * km for i in ids)))
    total = sum(r.cost for r in runs)
    return Plan({load.load_id: choice[li] for li, load in enumerate(loads)}, tuple(runs), total,
                alone, alone_route, moves, sweeps, notes)
