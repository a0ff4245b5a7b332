"""Driving-time rules as a planning estimate: where a vehicle's driving must stop for a break
or a daily rest. Not legal or compliance advice: defer to local regulation and licensed
practice.

The model is deliberately simple and stated in full: one driver per vehicle; driving hours
accumulate over consecutive road legs of one vehicle run (a change of vehicle at a terminal
starts a new run with a rested driver); handling time does not count as a break; a break is
due when `break_after` driving hours have passed since the last break or rest and more driving
follows; a daily rest is due when `daily_driving` hours have been driven since the last rest
and more driving follows (it also resets the break clock). Weekly limits, split breaks,
extended days and multi-manning are not modelled. A change of vehicle at a hub starts a new run
too.

Route choice: with the setting driving_clock_in_search (default yes) the search carries this
clock in its labels (costing.network.clock), so the time, cost and blended objectives choose the
route with its stops and their pay, exactly under this model; `advance` is the one step both the
search and the legs use. With it off, routes are chosen on driving hours and stops added after.
"""

from __future__ import annotations

from dataclasses import dataclass

from costing.model import Settings


@dataclass(frozen=True)
class DrivingRules:
    name: str
    break_after: float  # driving hours before a break is due
    break_hours: float
    daily_driving: float  # driving hours before a daily rest
    daily_rest: float
    source: str


# The published numbers; each rule set's values can be overridden in Settings.
RULE_SETS = {
    "eu_561_2006": DrivingRules(
        "eu_561_2006", 4.5, 0.75, 9.0, 11.0,
        "Regulation (EC) No 561/2006: Art. 7 (45-minute break after 4.5 h driving), Art. 6(1) "
        "(daily driving 9 h), Art. 8 (regular daily rest 11 h)"),
    "us_49cfr395": DrivingRules(
        "us_49cfr395", 8.0, 0.5, 11.0, 10.0,
        "49 CFR 395.3, property-carrying: (a)(3)(ii) 30-minute break after 8 h driving, "
        "(a)(3)(i) 11 h driving, (a)(1) 10 h off duty"),
}


def rules_for(settings: Settings) -> DrivingRules | None:
    """The driving-time rule set that Settings select, with any hour overrides applied;
    None when ``driving_rules`` is ``none``. Planning estimates, not legal advice."""
    base = RULE_SETS.get(settings.driving_rules)
    if base is None:
        return None

    def pick(value, default):
        return default if value is None else value

    return DrivingRules(
        base.name,
        pick(settings.break_after_driving_hours, base.break_after),
        pick(settings.break_hours, base.break_hours),
        pick(settings.daily_driving_hours, base.daily_driving),
        pick(settings.daily_rest_hours, base.daily_rest),
        base.source,
    )


def advance(since_break: float, today: float, hours: float,
            rules: DrivingRules) -> tuple[float, float, float, float]:
    """One leg of `hours` driving from the clock (driving since the last break or rest, driving
    since the last daily rest): (break hours, rest hours, new since_break, new today). A stop is
    taken when it is due and more driving follows, so a clock at its limit after the last leg
    takes nothing. `stops_for_run` and the search's clock labels (costing.network.clock) both use
    this step, so a route's stops in the search are the stops its legs show."""
    eps = 1e-9
    brk = rest = 0.0
    remaining = hours
    while remaining > eps:
        if today >= rules.daily_driving - eps:
            rest += rules.daily_rest
            today = since_break = 0.0
        elif since_break >= rules.break_after - eps:
            brk += rules.break_hours
            since_break = 0.0
        chunk = min(remaining, rules.break_after - since_break, rules.daily_driving - today)
        since_break += chunk
        today += chunk
        remaining -= chunk
    # the clock to 1e-9 h (well under a second): sums of hours given to a few decimals then
    # compare equal however they were added, so the search's clock labels merge as they should
    return brk, rest, round(since_break, 9), round(today, 9)


def stops_for_run(drive_hours: list[float], rules: DrivingRules) -> list[tuple[float, float]]:
    """For the legs of one vehicle run, the (break hours, rest hours) taken during or at the
    start of each leg. A stop is only taken when more driving follows it."""
    since_break = 0.0
    today = 0.0
    out: list[tuple[float, float]] = []
    for hours in drive_hours:
        brk, rest, since_break, today = advance(since_break, today, hours, rules)
        out.append((brk, rest))
    return out
