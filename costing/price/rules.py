"""Driving-time rules as a planning estimate: where a vehicle's driving must stop for a break
or a daily rest. Not legal or compliance advice: defer to local regulation and licensed
practice.

The model, stated in full: one driver per vehicle; driving hours accumulate over consecutive road
legs of one vehicle run (a change of vehicle at a terminal, port or hub starts a new run with a
rested driver, whose week also starts there); stops are taken as soon as they are due and more
driving follows (`advance`). EU (Regulation (EC) No 561/2006): a 45-minute break after 4.5 h of
driving (the 15 + 30 split takes the same time, so it is one break here); 9 h of driving a day,
10 h on at most two days (used as soon as the 9 h are reached); an 11 h daily rest, 9 h on at most
three (used first). Handling does not count as a break. US (49 CFR 395.3): a 30-minute break
after 8 h of driving; 11 h of driving; no driving after the 14th hour on duty, the time on duty
counting loading at the start of the run, driving and breaks; then 10 h off duty. Not modelled:
weekly and fortnightly limits, the EU 24-hour period and split daily rest, the US 60/70-hour
limits, sleeper berths and adverse conditions, multi-manning.

Using a longer day as soon as it is reached is optimal for elapsed time when a run needs at most
two of them (the most a week allows); reduced rests first is optimal outright (each rest is then
as short as allowed). Elapsed time of the model is what the route search sees.

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
    extended_driving: float | None = None  # EU: a day may run to this, `extended_days` times
    extended_days: int = 0
    reduced_rest: float | None = None  # EU: a daily rest may be this short, `reduced_rests` times
    reduced_rests: int = 0
    duty_window: float | None = None  # US: no driving after this many hours on duty


# The published numbers; the four hour figures of each set can be overridden in Settings.
RULE_SETS = {
    "eu_561_2006": DrivingRules(
        "eu_561_2006", 4.5, 0.75, 9.0, 11.0,
        "Regulation (EC) No 561/2006: Art. 7 (45-minute break after 4.5 h driving, or 15 + 30 "
        "minutes), Art. 6(1) (daily driving 9 h, 10 h twice a week), Art. 8 (daily rest 11 h, "
        "reduced to 9 h at most three times between weekly rests)",
        extended_driving=10.0, extended_days=2, reduced_rest=9.0, reduced_rests=3),
    "us_49cfr395": DrivingRules(
        "us_49cfr395", 8.0, 0.5, 11.0, 10.0,
        "49 CFR 395.3, property-carrying: (a)(3)(ii) 30-minute break after 8 h driving (off or on "
        "duty), (a)(3)(i) 11 h driving, (a)(2) no driving after the 14th hour on duty, (a)(1) 10 h "
        "off duty",
        duty_window=14.0),
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
        base.source, base.extended_driving, base.extended_days, base.reduced_rest, base.reduced_rests,
        base.duty_window,
    )


# The driving clock: (driving since the last break or rest, driving today, hours on duty since
# the last rest, today's driving limit, extended days used, reduced rests used). A new vehicle
# run starts a rested driver: `start_clock`.
Clock = tuple[float, float, float, float, int, int]


def start_clock(rules: DrivingRules, on_duty: float = 0.0) -> Clock:
    """The clock of a rested driver who has been on duty `on_duty` hours (loading) before driving;
    the time on duty counts only where the rules have a duty window."""
    return (0.0, 0.0, on_duty if rules.duty_window is not None else 0.0, rules.daily_driving, 0, 0)


def advance(clock: Clock, hours: float, rules: DrivingRules) -> tuple[float, float, Clock]:
    """One leg of `hours` driving from `clock`: (break hours, rest hours, new clock).

    Stops are taken as soon as they are due and more driving follows (so a clock at its limit
    after the last leg takes nothing): a break when `break_after` hours have been driven since the
    last break or rest; at the day's driving limit, first a longer day if one is left
    (`extended_driving`, at most `extended_days` times), else a daily rest, reduced while
    reductions are left (`reduced_rest`, at most `reduced_rests` times); a rest also when the
    next driving would pass the duty window (time on duty, driving and breaks since the rest),
    and in place of a break that would reach the window. A rest resets the break clock. The
    15 + 30 split of the EU break takes the same 45 minutes, so it is one break here.
    `stops_for_run` and the search's clock labels (costing.network.clock) both use this step,
    so a route's stops in the search are the stops its legs show. Planning estimate.
    """
    eps = 1e-9
    since_break, today, duty, limit, extended, reduced = clock
    window = rules.duty_window
    brk = rest = 0.0
    remaining = hours
    while remaining > eps:
        if today >= limit - eps and rules.extended_driving is not None and \
                limit < rules.extended_driving - eps and extended < rules.extended_days:
            limit, extended = rules.extended_driving, extended + 1  # a longer day
        if today >= limit - eps or (window is not None and duty >= window - eps) or (
                window is not None and since_break >= rules.break_after - eps
                and duty + rules.break_hours >= window - eps):
            short = rules.reduced_rest is not None and reduced < rules.reduced_rests and \
                rules.reduced_rest < rules.daily_rest
            rest += rules.reduced_rest if short else rules.daily_rest
            reduced += 1 if short else 0
            since_break = today = duty = 0.0
            limit = rules.daily_driving
        elif since_break >= rules.break_after - eps:
            brk += rules.break_hours
            since_break = 0.0
            duty += rules.break_hours if window is not None else 0.0
        chunk = min(remaining, rules.break_after - since_break, limit - today)
        if window is not None:
            chunk = min(chunk, window - duty)
        since_break += chunk
        today += chunk
        duty += chunk if window is not None else 0.0
        remaining -= chunk
    # the clock to 1e-9 h (well under a second): sums of hours given to a few decimals then
    # compare equal however they were added, so the search's clock labels merge as they should
    return brk, rest, (round(since_break, 9), round(today, 9), round(duty, 9), limit, extended, reduced)


def stops_for_run(drive_hours: list[float], rules: DrivingRules,
                  on_duty: float = 0.0) -> list[tuple[float, float]]:
    """For the legs of one vehicle run, the (break hours, rest hours) taken during or at the
    start of each leg, the driver having been on duty `on_duty` hours (loading) first. A stop is
    only taken when more driving follows it."""
    clock = start_clock(rules, on_duty)
    out: list[tuple[float, float]] = []
    for hours in drive_hours:
        brk, rest, clock = advance(clock, hours, rules)
        out.append((brk, rest))
    return out
