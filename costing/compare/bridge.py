"""The cost bridge: why the total moved from one run (OLD) to the next (NEW), one step per cause,
adding up to the change exactly, to the minor unit.

Both runs are given as per-shipment records (`Side`): the cost of each shipment as its run
costed it and its route as legs (lane, direction, vehicle, mode). They come from two costed
workbooks (`sides_from_workbook`: Summary and Legs, read by header) or from two pipeline results
(`sides_from_results`: the base case and a scenario). Where an input Model is given, the old
routes are priced again with the public arithmetic of costing.price (`cost_route`, the lane
figures of costing.network.build.resolve_lane): nothing here repeats a rate formula.

The steps, in this fixed order (a decomposition depends on its order; this one is stated here,
in the README and on the Bridge sheet, and never changes):

 0. start              OLD total: the sum of the OLD shipments' total_cost.
 1. removed            shipments in OLD only: minus their OLD cost.
 2. added              shipments in NEW only: plus their NEW cost.
 3. route_status       shipments in both that were routed in one run only (a closed lane left one
                       without a route, or an opened lane gave one a route): NEW cost - OLD cost.
    For each shipment routed in both, with P(route, load, rates) the stand-alone cost of a route
    for a load (its weight) at a Model's rates, and sa the stand-alone cost (total_cost, or
    standalone_cost where consolidation shares vehicles):
 4. rates              the old routes at the NEW rate cards, lane charges, depot handling and
                       settings, at the OLD fuel price: P(old route, old load, NEW rates with OLD
                       fuel price) - OLD sa.
 5. fuel               the fuel price alone, on the old routes: P(old route, old load, NEW) - step 4's
                       price.
 6. load               changed shipment weights, on the old routes: P(old route, NEW load, NEW) -
                       step 5's price.
 7. reroute            shipments whose lanes changed: NEW sa - P(old route, NEW load, NEW).
 8. vehicle            same lanes, another vehicle or carrier (rate card): NEW sa - step 6's price.
 9. not_separated      what could not be put in steps 4 to 8 (no NEW input given, or an old route
                       that cannot be priced at the new rates): NEW sa - OLD sa of those shipments.
10. consolidation      the change in what sharing vehicles saves: (NEW cost - NEW sa) - (OLD cost -
                       OLD sa); 0 and marked n/a when neither run has a standalone_cost column.
11. end                NEW total.

Guarantee. Every shipment's contributions telescope: for a shipment in both runs the prices
P(...) cancel in pairs and its contributions sum to NEW cost - OLD cost; a removed or added
shipment contributes its cost once. All amounts are integers in minor units (each cost is
already rounded to the currency's minor unit), so the steps sum to NEW total - OLD total
exactly, with no rounding remainder and no balancing entry; `Bridge.check` verifies it.

Without a NEW input Model the repricing steps 4 to 8 cannot be computed; a shipment whose lanes,
vehicle and weight are all unchanged is then still attributed to step 4 (its new cost is its old
route at the new rates and fuel price, so step 4 holds rates and fuel together, and step 5 is
n/a), and every other shipment in both runs goes to step 9. Without the OLD fuel price (neither
an OLD input nor the OLD Run sheet's setting), fuel stays in step 4 the same way.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import pandas as pd

from costing.contract.outputs import BRIDGE_STEPS
from costing.model import Lane, LaneUse, Model, RateCard, Shipment
from costing.network.build import resolve_lane
from costing.price.cost import ROUTED, CostedShipment, cost_route

START, REMOVED, ADDED, ROUTE_STATUS, RATES, FUEL, LOAD, REROUTE, VEHICLE, NOT_SEPARATED, \
    CONSOLIDATION, END = ("start", "removed", "added", "route_status", "rates", "fuel", "load",
                          "reroute", "vehicle", "not_separated", "consolidation", "end")

# (key, label on the chart, what the step holds), in the fixed order of the module docstring
STEPS: tuple[tuple[str, str, str], ...] = BRIDGE_STEPS
STEP_KEYS = tuple(k for k, _l, _m in STEPS)
if STEP_KEYS != (START, REMOVED, ADDED, ROUTE_STATUS, RATES, FUEL, LOAD, REROUTE, VEHICLE, NOT_SEPARATED,
                 CONSOLIDATION, END):  # the contract and this module state one order
    raise ImportError("costing.contract.outputs.BRIDGE_STEPS is not in the order this module computes")
MOVES = STEP_KEYS[1:-1]  # the steps between the two totals
TOP = 5  # shipments listed behind each step


@dataclass(frozen=True)
class RouteLeg:
    """One leg of a costed route: the lane in its direction and the rate card that ran it. The
    lane figures are kept for a lane the pricing Model no longer has."""

    lane_id: str
    from_depot: str
    to_depot: str
    vehicle: str
    mode: str
    km: float | None = None
    hours: float | None = None
    toll: float = 0.0  # per vehicle, currency
    fixed: float = 0.0  # per vehicle, currency

    @property
    def lane_key(self) -> tuple[str, str, str]:
        """(lane_id, from_depot, to_depot): the lane in its direction."""
        return (self.lane_id, self.from_depot, self.to_depot)


@dataclass(frozen=True)
class Side:
    """One shipment in one run. Money in integer minor units of the run's currency."""

    shipment_id: str
    status: str
    units: int  # total_cost (0 when not routed)
    standalone_units: int  # what it would cost alone; equals units without consolidation
    weight_t: float | None = None
    legs: tuple[RouteLeg, ...] = ()
    route: str | None = None
    vehicle: str | None = None

    @property
    def routed(self) -> bool:
        """Whether the shipment has a route (status ``routed``)."""
        return self.status == ROUTED

    @property
    def lanes(self) -> tuple[tuple[str, str, str], ...]:
        """The route's lanes in their directions."""
        return tuple(leg.lane_key for leg in self.legs)

    @property
    def cards(self) -> tuple[tuple[str, str], ...]:
        """(vehicle, mode) of each leg."""
        return tuple((leg.vehicle, leg.mode) for leg in self.legs)


@dataclass
class BridgeStep:
    """One bar of the bridge: its amount (minor units) and the largest shipments behind it."""

    key: str
    label: str
    meaning: str
    units: int
    shipments: int  # shipments with a non-zero contribution
    available: bool = True  # False: the step could not be computed (n/a), amount 0
    note: str = ""
    top: list[tuple[str, int, str]] = field(default_factory=list)  # (shipment_id, units, detail)


@dataclass
class Bridge:
    """A walk from the OLD total to the NEW total, one step per cause (STEPS, in that order).

    Attributes
    ----------
    steps : list of BridgeStep
        Every key of STEP_KEYS, in order; the first is the OLD total, the last the NEW total.
    contributions : pandas.DataFrame
        One row per shipment: shipment_id, old_units, new_units, one column of minor units per
        step of MOVES, the prices of the old route at the new rates (rates_units, fuel_units,
        load_units; missing where not priced), and detail (what changed).
    """

    old_label: str
    new_label: str
    currency: str
    places: int
    steps: list[BridgeStep]
    contributions: pd.DataFrame
    warnings: list[str] = field(default_factory=list)

    def step(self, key: str) -> BridgeStep:
        """The step with `key` (KeyError when there is none)."""
        for s in self.steps:
            if s.key == key:
                return s
        raise KeyError(key)

    def amount(self, key: str) -> float:
        """The step's amount in the currency (units / 10**places)."""
        return self.step(key).units / 10 ** self.places

    @property
    def start_units(self) -> int:
        """OLD total, minor units."""
        return self.steps[0].units

    @property
    def end_units(self) -> int:
        """NEW total, minor units."""
        return self.steps[-1].units

    def check(self) -> None:
        """Raise AssertionError unless the steps add up to the difference exactly, per shipment
        and in total (the module's guarantee; a failure is a bug, never rounding)."""
        c = self.contributions
        per_shipment = c[list(MOVES)].sum(axis=1)
        bad = c[per_shipment != c["new_units"] - c["old_units"]]
        assert bad.empty, f"contributions do not add up for {list(bad['shipment_id'][:5])}"
        sums = c[list(MOVES)].sum()
        off = [s.key for s in self.steps[1:-1] if s.units != int(sums[s.key])]
        assert not off, f"steps {off} differ from the sum of their shipments' shares"
        moved = sum(s.units for s in self.steps[1:-1])
        assert self.start_units + moved == self.end_units, (self.start_units, moved, self.end_units)


# ---------------------------------------------------------------------------------------------
# the runs as Side records


def units_of(amount: float | None, places: int) -> int:
    """A money amount already rounded to `places` decimals, as an integer of minor units."""
    if amount is None or (isinstance(amount, float) and math.isnan(amount)):
        return 0
    return int(round(amount * 10 ** places))


def sides_from_results(results: Iterable[CostedShipment], places: int) -> dict[str, Side]:
    """Side records of pipeline results (one CostedShipment per shipment). A result that carries
    a ``standalone_cost`` (consolidation) gives its stand-alone cost; otherwise it is the total."""
    out: dict[str, Side] = {}
    for r in results:
        routed = r.status == ROUTED
        units = units_of(r.total_cost, places) if routed else 0
        alone = getattr(r, "standalone_cost", None)
        legs = tuple(RouteLeg(leg.use.lane.lane_id, leg.use.from_depot, leg.use.to_depot, leg.card.vehicle,
                              leg.card.mode, leg.use.km, leg.use.hours, leg.use.lane.toll,
                              leg.use.lane.fixed_cost) for leg in r.legs)
        route = " > ".join([legs[0].from_depot] + [x.to_depot for x in legs]) if legs else None
        out[r.shipment.shipment_id] = Side(
            r.shipment.shipment_id, r.status, units,
            units_of(alone, places) if routed and alone is not None else units,
            r.shipment.weight_t, legs, route, r.vehicle or None)
    return out


# ---------------------------------------------------------------------------------------------
# pricing an old route at a Model's rates


class _Unpriced(Exception):
    """The route cannot be priced with this Model (a rate card or depot it needs is missing)."""


def _pricing_model(model: Model, fallback: Model | None) -> Model:
    """`model` with the depots and rate cards only `fallback` has added (for old routes through
    depots or on vehicles the newer input dropped)."""
    if fallback is None:
        return model
    have = {d.depot_id for d in model.depots}
    cards = {(r.vehicle, r.mode) for r in model.rates}
    depots = tuple(d for d in fallback.depots if d.depot_id not in have)
    rates = tuple(r for r in fallback.rates if (r.vehicle, r.mode) not in cards)
    if not depots and not rates:
        return model
    return dataclasses.replace(model, depots=model.depots + depots, rates=model.rates + rates)


class Pricer:
    """Prices routes given as RouteLeg sequences at one Model's rates (costing.price.cost_route).

    A lane the Model does not have is taken from `fallback` (the older input) or, failing that,
    from the figures recorded on the leg; a rate card or depot the Model lacks from `fallback`.
    """

    def __init__(self, model: Model, fallback: Model | None = None):
        self.model = _pricing_model(model, fallback)
        self.lanes = {ln.lane_id: ln for ln in model.lanes}
        if fallback is not None:
            for ln in fallback.lanes:
                self.lanes.setdefault(ln.lane_id, ln)
        self.cards = {(r.vehicle, r.mode): r for r in self.model.rates}
        self.shipments = {s.shipment_id: s for s in model.shipments}
        self._uses: dict[tuple, LaneUse] = {}

    def _use(self, leg: RouteLeg) -> LaneUse:
        key = (leg.lane_id, leg.from_depot, leg.to_depot, leg.km, leg.hours)
        got = self._uses.get(key)
        if got is not None:
            return got
        depots = self.model.depot_index
        if leg.from_depot not in depots or leg.to_depot not in depots:
            missing = leg.from_depot if leg.from_depot not in depots else leg.to_depot
            raise _Unpriced(f"depot {missing} is in neither input")
        lane = self.lanes.get(leg.lane_id)
        if lane is None or {lane.from_depot, lane.to_depot} != {leg.from_depot, leg.to_depot}:
            # the lane is gone (or now joins other depots): price it as the old run recorded it
            lane = Lane(leg.lane_id, leg.from_depot, leg.to_depot, leg.mode, leg.km, leg.hours,
                        leg.toll, leg.fixed)
        s = self.model.settings
        km, km_est, hours, hours_est = resolve_lane(lane, depots, s.detour_factor, s.default_speed_kmh)
        use = LaneUse(lane, leg.from_depot, leg.to_depot, leg.from_depot != lane.from_depot, km, km_est,
                      hours, hours_est)
        self._uses[key] = use
        return use

    def runs(self, legs: Sequence[RouteLeg]) -> list[tuple[RateCard, list[LaneUse]]]:
        """The route as vehicle runs: consecutive legs on one rate card (a run changes card only
        at a transfer, between cards of different modes)."""
        runs: list[tuple[RateCard, list[LaneUse]]] = []
        prev = None
        for leg in legs:
            card = self.cards.get((leg.vehicle, leg.mode))
            if card is None:
                raise _Unpriced(f"rate card {leg.vehicle}/{leg.mode} is in neither input")
            if (leg.vehicle, leg.mode) != prev:
                runs.append((card, []))
                prev = (leg.vehicle, leg.mode)
            runs[-1][1].append(self._use(leg))
        return runs

    def price(self, shipment: Shipment, legs: Sequence[RouteLeg]) -> int:
        """Stand-alone total_cost of `shipment` on the route `legs`, in minor units."""
        if not legs:
            raise _Unpriced("no legs")
        costed = cost_route(self.model, shipment, "cost", self.runs(legs))
        return units_of(costed.total_cost, costed.places)


# ---------------------------------------------------------------------------------------------
# the bridge


def _detail(o: Side | None, n: Side | None) -> str:
    """What changed for a shipment, in words, for the lists behind the steps."""
    if o is None:
        return f"added: {n.route or n.status}" if n else ""
    if n is None:
        return f"removed: {o.route or o.status}"
    parts = []
    if o.status != n.status:
        parts.append(f"{o.status} -> {n.status}")
    if o.route and n.route and o.route != n.route:
        a, b = o.route.split(" > "), n.route.split(" > ")
        now = [d for d in b if d not in a]
        was = [d for d in a if d not in b]
        if a[0] != b[0] or a[-1] != b[-1]:
            parts.append(f"route {o.route} -> {n.route}")
        else:
            parts.append("re-routed" + (f" via {', '.join(now[:4])}" if now else "")
                         + (f", no longer via {', '.join(was[:4])}" if was else "")
                         + ("" if now or was else ": same depots, other order"))
    elif o.lanes != n.lanes:
        parts.append("other lanes, same depots")
    if o.vehicle != n.vehicle and (o.vehicle or n.vehicle):
        parts.append(f"vehicle {o.vehicle or '-'} -> {n.vehicle or '-'}")
    if o.weight_t is not None and n.weight_t is not None and o.weight_t != n.weight_t:
        parts.append(f"weight {o.weight_t:g} t -> {n.weight_t:g} t")
    return "; ".join(parts) or "same route, vehicle and load"


def compute_bridge(old: dict[str, Side], new: dict[str, Side], *, currency: str, places: int,
                   new_model: Model | None = None, old_model: Model | None = None,
                   old_fuel_price: float | None | object = ..., old_label: str = "OLD",
                   new_label: str = "NEW") -> Bridge:
    """The bridge from `old` to `new`, in the fixed order of STEPS.

    Parameters
    ----------
    old, new : dict of str to Side
        The runs' shipments by shipment_id, in sheet (or Model) order.
    currency : str
        ISO 4217 code of both runs.
    places : int
        Its minor unit (decimals).
    new_model : Model, optional
        The input NEW was costed from: the rates the old routes are priced at (steps 4 to 8).
        Without it those steps are computed only as the module docstring says.
    old_model : Model, optional
        The input OLD was costed from: the OLD weights, the OLD fuel price, and lanes, depots
        and rate cards the NEW input no longer has.
    old_fuel_price : float or None, optional
        The OLD fuel price per litre (None: no fuel price, so no surcharge). Omit it when it is
        unknown; given an `old_model`, that Model's setting is used.
    old_label, new_label : str
        Names of the two runs for the sheet (file names, or "base" and a scenario name).

    Returns
    -------
    Bridge
        Checked: the steps add up to NEW total - OLD total exactly (`Bridge.check`).
    """
    warnings: list[str] = []
    if old_model is not None:
        old_fuel_price = old_model.settings.fuel_price_per_litre
    fuel_known = old_fuel_price is not ...
    notes: dict[str, str] = {}
    pricer_new = pricer_rates = None
    if new_model is not None:
        pricer_new = Pricer(new_model, old_model)
        if fuel_known and old_fuel_price != new_model.settings.fuel_price_per_litre:
            at_old_fuel = dataclasses.replace(
                new_model, settings=dataclasses.replace(new_model.settings,
                                                        fuel_price_per_litre=old_fuel_price))
            pricer_rates = Pricer(at_old_fuel, old_model)
        else:
            pricer_rates = pricer_new
        if not fuel_known:
            notes[RATES] = "includes the fuel price: the OLD fuel price is not known"
            notes[FUEL] = "n/a: the OLD fuel price is not known (give the OLD input)"
    else:
        notes[RATES] = ("only shipments with unchanged lanes, vehicle and weight; includes the fuel "
                        "price (give the NEW input to separate the rest)")
        for k in (FUEL, LOAD, REROUTE, VEHICLE):
            notes[k] = "n/a: needs the NEW input (--new-input)"
    old_shipments = {s.shipment_id: s for s in old_model.shipments} if old_model is not None else {}

    rows = []
    unpriced: list[str] = []
    # a routed shipment without legs in a run whose other shipments have some was bought from a
    # carrier (a run read without its Legs sheet has none at all)
    old_has_legs = any(side.legs for side in old.values())
    new_has_legs = any(side.legs for side in new.values())
    for sid in list(old) + [s for s in new if s not in old]:
        o, n = old.get(sid), new.get(sid)
        c = dict.fromkeys(MOVES, 0)
        prices: dict[str, int | None] = {"rates_units": None, "fuel_units": None, "load_units": None}
        if n is None:
            c[REMOVED] = -o.units
        elif o is None:
            c[ADDED] = n.units
        elif o.routed != n.routed:
            c[ROUTE_STATUS] = n.units - o.units
        elif o.routed:
            c[CONSOLIDATION] = (n.units - n.standalone_units) - (o.units - o.standalone_units)
            change = n.standalone_units - o.standalone_units
            # the route text and vehicle too: without a Legs sheet the legs are not known
            same_route = (o.lanes, o.cards, o.route, o.vehicle) == (n.lanes, n.cards, n.route, n.vehicle)
            same_load = o.weight_t is not None and o.weight_t == n.weight_t
            if (not o.legs and old_has_legs) or (not n.legs and new_has_legs):
                # bought from a carrier in one run or both: no own legs where others have some
                # the same carrier both times: its price moved, with the fuel price when that moved
                # (its fuel index), else with the tariff or currency rates; make <-> buy or another
                # carrier: the vehicle/carrier step
                fuel_moved = (new_model is not None and fuel_known
                              and old_fuel_price != new_model.settings.fuel_price_per_litre)
                same_carrier = not o.legs and not n.legs and o.vehicle == n.vehicle
                c[(FUEL if fuel_moved else RATES) if same_carrier else VEHICLE] = change
            elif pricer_new is None:
                c[RATES if same_route and same_load else NOT_SEPARATED] = change
            else:
                try:
                    new_shp = pricer_new.shipments.get(sid)
                    if new_shp is None:
                        raise _Unpriced("the NEW input has no such shipment")
                    old_shp = old_shipments.get(sid)
                    if old_shp is None:
                        weight = o.weight_t if o.weight_t is not None else new_shp.weight_t
                        old_shp = dataclasses.replace(new_shp, weight_t=weight)
                    p_rates = pricer_rates.price(old_shp, o.legs)
                    p_fuel = pricer_new.price(old_shp, o.legs) if pricer_rates is not pricer_new else p_rates
                    p_load = (pricer_new.price(new_shp, o.legs) if old_shp.weight_t != new_shp.weight_t
                              else p_fuel)
                except _Unpriced as e:
                    unpriced.append(f"{sid} ({e})")
                    c[NOT_SEPARATED] = change
                else:
                    prices.update(rates_units=p_rates, fuel_units=p_fuel, load_units=p_load)
                    c[RATES] = p_rates - o.standalone_units
                    c[FUEL] = p_fuel - p_rates
                    c[LOAD] = p_load - p_fuel
                    rest = n.standalone_units - p_load
                    if o.lanes != n.lanes:
                        c[REROUTE] = rest
                    elif o.cards != n.cards:
                        c[VEHICLE] = rest
                    elif rest:
                        # the same route, card and load priced two ways: only an input that is
                        # not the one NEW was costed from (or another tool version) does this
                        c[NOT_SEPARATED] = rest
                        unpriced.append(f"{sid} (its NEW cost differs by {rest} minor units from its "
                                        "unchanged route priced with the NEW input)")
        rows.append({"shipment_id": sid, "old_units": o.units if o else 0, "new_units": n.units if n else 0,
                     **c, **prices, "detail": _detail(o, n)})

    if unpriced:
        shown = ", ".join(unpriced[:5]) + (f" and {len(unpriced) - 5} more" if len(unpriced) > 5 else "")
        warnings.append(f"not separated into causes: {shown}")
        if new_model is not None:
            notes[NOT_SEPARATED] = f"{len(unpriced)} shipment(s): see the warning"
    has_standalone = any(s.standalone_units != s.units for s in (*old.values(), *new.values()))
    frame = pd.DataFrame(rows, columns=["shipment_id", "old_units", "new_units", *MOVES, "rates_units",
                                        "fuel_units", "load_units", "detail"])
    for k in ("old_units", "new_units", *MOVES):
        frame[k] = frame[k].astype("int64")
    for k in ("rates_units", "fuel_units", "load_units"):
        frame[k] = frame[k].astype("Int64")  # missing where the old route was not priced
    return _assemble(frame, currency, places, old_label, new_label, notes, warnings,
                     consolidation=has_standalone or None, repriced=new_model is not None)


def _assemble(frame: pd.DataFrame, currency: str, places: int, old_label: str, new_label: str,
              notes: dict[str, str], warnings: list[str], consolidation: bool | None,
              repriced: bool) -> Bridge:
    """Step totals (pandas sums of integer minor units) and the largest shipments behind each."""
    totals = frame[list(MOVES)].sum()
    counts = (frame[list(MOVES)] != 0).sum()
    # every non-zero share as a (shipment, step, units) row; the largest TOP of each step, ties in
    # sheet order (a stable sort on the size)
    shares = frame.melt(id_vars=["shipment_id", "detail"], value_vars=list(MOVES), var_name="step",
                        value_name="units")
    shares = shares[shares["units"] != 0]
    shares = shares.assign(size=shares["units"].abs()).sort_values("size", ascending=False, kind="stable")
    top = {step: [(str(sid), int(units), str(detail)) for sid, units, detail in
                  zip(g["shipment_id"], g["units"], g["detail"])]
           for step, g in shares.groupby("step", sort=False).head(TOP).groupby("step", sort=False)}
    steps: list[BridgeStep] = []
    for key, label, meaning in STEPS:
        if key == START:
            units, count = int(frame["old_units"].sum()), int((frame["old_units"] != 0).sum())
        elif key == END:
            units, count = int(frame["new_units"].sum()), int((frame["new_units"] != 0).sum())
        else:
            units, count = int(totals[key]), int(counts[key])
        available = not notes.get(key, "").startswith("n/a")
        note = notes.get(key, "")
        if key == CONSOLIDATION and not consolidation:
            available, note = False, ("n/a: no shipment shares vehicles in either run (no standalone_cost "
                                      "column, or it equals total_cost)")
        if key == NOT_SEPARATED and not note and units == 0 and repriced:
            note = "0: every change was separated"
        step = BridgeStep(key, label, meaning, units, count, available, note)
        step.top = top.get(key, [])
        steps.append(step)
    bridge = Bridge(old_label, new_label, currency, places, steps, frame, warnings)
    bridge.check()
    return bridge


# ---------------------------------------------------------------------------------------------
# the runs of two costed workbooks


_LEG_FIELDS = ("shipment_id", "seq", "lane_id", "from_depot", "to_depot", "mode", "vehicle", "distance_km",
               "drive_hours", "toll", "fixed_cost_rate")


def _number(v: object) -> float | None:
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return None
    return float(v) if math.isfinite(v) else None


def _text(v: object) -> str | None:
    if v is None or (isinstance(v, str) and not v.strip()):
        return None
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v).strip()


def read_route_legs(path: str) -> tuple[dict[str, tuple[RouteLeg, ...]], list[str]]:
    """The legs of every routed shipment of a costed workbook, from its Legs sheets ("Legs",
    "Legs 2", ... in order), found by header name.

    Returns
    -------
    legs : dict of str to tuple of RouteLeg
        By shipment_id, in seq order.
    notes : list of str
        Why legs could not be read (no Legs sheet, a missing column); then `legs` is empty.
    """
    import re
    import warnings as _warnings

    from costing.contract.inputs import normalise_header
    from costing.errors import CompareError
    from costing.workbook.reader import READ_ERRORS, InputError, iter_rows, open_workbook

    name = path.replace("\\", "/").rsplit("/", 1)[-1]
    try:
        wb = open_workbook(path, data_only=True)
    except InputError as e:
        raise CompareError(f"{name}: {e}", "give the costed workbook written by `costing run`",
                           path) from None
    found: dict[str, list[tuple[float, RouteLeg]]] = {}
    try:
        with _warnings.catch_warnings():
            _warnings.simplefilter("ignore")
            titles = [t for t in wb.sheetnames if re.fullmatch(r"legs( \d+)?", t.strip().lower())]
            titles.sort(key=lambda t: int(t.split()[-1]) if t.split()[-1].isdigit() else 1)
            if not titles:
                return {}, [f"{name} has no Legs sheet: routes are compared by their Summary text only"]
            for title in titles:
                it = iter_rows(wb[title], 1, None, None)
                header = [normalise_header(h) if isinstance(h, str) else "" for h in next(it, None) or ()]
                col = {h: i for i, h in reversed(list(enumerate(header))) if h}
                missing = [f for f in _LEG_FIELDS[:7] if f not in col]
                if missing:
                    return {}, [f"{name}: sheet {title} has no {', '.join(missing)} column: routes are "
                                "compared by their Summary text only"]

                def get(row, f, col=col):
                    i = col.get(f)
                    return row[i] if i is not None and i < len(row) else None

                for row in it:
                    sid = _text(get(row, "shipment_id"))
                    lane = _text(get(row, "lane_id"))
                    if sid is None or lane is None:
                        continue
                    leg = RouteLeg(lane, _text(get(row, "from_depot")) or "",
                                   _text(get(row, "to_depot")) or "", _text(get(row, "vehicle")) or "",
                                   _text(get(row, "mode")) or "", _number(get(row, "distance_km")),
                                   _number(get(row, "drive_hours")), _number(get(row, "toll")) or 0.0,
                                   _number(get(row, "fixed_cost_rate")) or 0.0)
                    seq = _number(get(row, "seq"))
                    found.setdefault(sid, []).append((seq if seq is not None else math.inf, leg))
    except READ_ERRORS as e:
        raise CompareError(f"{name}: the Legs sheet could not be read ({type(e).__name__})",
                           "cost the input again with `costing run`", path) from None
    finally:
        wb.close()
    ordered = {sid: tuple(leg for _s, leg in sorted(legs, key=lambda x: x[0])) for sid, legs in found.items()}
    return ordered, []


def sides_from_workbook(run, legs: dict[str, tuple[RouteLeg, ...]]) -> dict[str, Side]:
    """Side records of a costed workbook read by costing.compare.diff.read_costed, with the legs
    of `read_route_legs`."""
    out: dict[str, Side] = {}
    for sid, row in run.shipments.items():
        routed = row.status == ROUTED
        units = units_of(row.total_cost, run.places) if routed else 0
        alone = units_of(row.standalone_cost, run.places) if routed and row.standalone_cost is not None \
            else units
        out[sid] = Side(sid, row.status, units, alone, row.weight_t, legs.get(sid, ()) if routed else (),
                        row.route if routed else None, row.vehicle if routed else None)
    return out


def fuel_price_of(run) -> float | None | object:
    """The fuel price per litre a costed workbook's Run sheet records (None: none set, so no
    surcharge); ``...`` when the Run sheet does not say."""
    if "fuel_price_per_litre" not in run.settings:
        return ...
    v = run.settings["fuel_price_per_litre"]
    if _number(v) is not None:
        return _number(v)
    if v is None or (isinstance(v, str) and v.strip().startswith("(blank")):
        return None
    return ...


def bridge_workbooks(old_run, new_run, *, old_model: Model | None = None,
                     new_model: Model | None = None) -> Bridge:
    """The bridge between two costed workbooks (read by costing.compare.diff.read_costed), with
    the input Models they were costed from where given (the caller checks they are those).

    Parameters
    ----------
    old_run, new_run : costing.compare.diff.CostedRun
    old_model, new_model : Model, optional
        The checked input workbooks (``costing.pipeline.load``).

    Returns
    -------
    Bridge
    """
    old_legs, old_notes = read_route_legs(old_run.path)
    new_legs, new_notes = read_route_legs(new_run.path)
    old = sides_from_workbook(old_run, old_legs)
    new = sides_from_workbook(new_run, new_legs)
    bridge = compute_bridge(old, new, currency=old_run.currency, places=old_run.places,
                            new_model=new_model if not new_notes and not old_notes else None,
                            old_model=old_model, old_fuel_price=fuel_price_of(old_run),
                            old_label=old_run.file_name, new_label=new_run.file_name)
    bridge.warnings[:0] = old_notes + new_notes
    return bridge


def bridge_results(old_results: Sequence[CostedShipment], new_results: Sequence[CostedShipment],
                   old_model: Model, new_model: Model, old_label: str = "base",
                   new_label: str = "scenario") -> Bridge:
    """The bridge between two pipeline results, e.g. the base case and a scenario (each
    ``costing.pipeline.run`` on its Model).

    Parameters
    ----------
    old_results, new_results : sequence of CostedShipment
        ``Costed.results`` of the two runs.
    old_model, new_model : Model
        The Models they were run on.

    Returns
    -------
    Bridge
    """
    from costing.money import minor_unit

    places = minor_unit(new_model.settings.currency)
    return compute_bridge(sides_from_results(old_results, places), sides_from_results(new_results, places),
                          currency=new_model.settings.currency, places=places, new_model=new_model,
                          old_model=old_model, old_label=old_label, new_label=new_label)
