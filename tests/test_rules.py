"""Driving-time rules: check values computed from the published numbers.

EU: Regulation (EC) No 561/2006, Art. 7 (a 45-minute break after 4.5 h of driving), Art. 6(1)
(daily driving 9 h, 10 h twice a week), Art. 8 (regular daily rest 11 h, reduced 9 h at most three
times) - numbers per shared/references.md 3.1
([V-2ND] for the article mapping). US: 49 CFR 395.3 property-carrying, (a)(3)(ii) 30-minute break
after 8 h of driving, (a)(3)(i) 11 h driving, (a)(2) 14 h on duty, (a)(1) 10 h off duty ([V-DOC]
FMCSA summary, per references.md 3.2). The elapsed times below are our arithmetic from those numbers.
"""

from __future__ import annotations

import pytest
from pipeline_helpers import route_all

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.price.rules import RULE_SETS, rules_for, stops_for_run

EU = RULE_SETS["eu_561_2006"]
US = RULE_SETS["us_49cfr395"]


def elapsed(hours, rules):
    stops = stops_for_run(hours, rules)
    return sum(hours) + sum(b + r for b, r in stops), stops


def test_published_numbers():
    assert (EU.break_after, EU.break_hours, EU.daily_driving, EU.daily_rest) == (4.5, 0.75, 9, 11)
    assert (US.break_after, US.break_hours, US.daily_driving, US.daily_rest) == (8, 0.5, 11, 10)


@pytest.mark.parametrize("hours, expected_elapsed, breaks, rests", [
    (4.5, 4.5, 0, 0),      # exactly 4.5 h and nothing follows: no break is needed
    (4.75, 5.5, 0.75, 0),  # 4.5 h + 45 min break + 0.25 h
    (9.0, 9.75, 0.75, 0),  # 4.5 h + 45 min + 4.5 h = 9 h 45 min elapsed (references.md 3.1)
    # a 10 h day (Art. 6(1) extension): 4.5 + 0.75 + 4.5 + 0.75 + 1.0 = 11.5 h (references.md 3.1)
    (10.0, 11.5, 1.5, 0),
    # 900 km at 80 km/h = 11.25 h driving: a 10 h day (two breaks), a reduced 9 h rest (Art. 8(4)),
    # then 1.25 h -> 11.25 + 1.5 + 9 = 21.75 h
    (11.25, 21.75, 1.5, 9),
    # 19 h: a 10 h day (two breaks), 9 h rest, a 9 h day (one break) -> 19 + 2.25 + 9
    (19.0, 30.25, 2.25, 9),
    # 30 h: 10 h, rest 9, 10 h, rest 9, then no third 10 h day in the week (Art. 6(1)): 9 h, rest 9
    # (the third reduced rest), 1 h -> breaks 2 + 2 + 1, rests 27: 30 + 3.75 + 27
    (30.0, 60.75, 3.75, 27),
    # 40 h: as 30 h, then the fourth rest is a regular 11 h (only three reduced): 10, 9, 10, 9, 9,
    # 9, 9, 11, 2 -> breaks 2 + 2 + 1 + 1 + 0, rests 9 + 9 + 9 + 11
    (40.0, 40 + 4.5 + 38, 4.5, 38),
])
def test_eu_561_2006(hours, expected_elapsed, breaks, rests):
    total, stops = elapsed([hours], EU)
    assert total == pytest.approx(expected_elapsed)
    assert stops[0] == pytest.approx((breaks, rests))


@pytest.mark.parametrize("hours, expected_elapsed", [
    (8.0, 8.0),          # 8 h of driving and nothing follows: no break yet
    # FMCSA hours-of-service guide example: "drive 8 consecutive hours, take a half-hour break,
    # then drive another 3 hours for a total of 11 hours" -> 11.5 h elapsed
    (11.0, 11.5),
    (13.0, 8 + 0.5 + 3 + 10 + 2),  # 11 h limit, then 10 h off duty, then 2 h
])
def test_us_49cfr395(hours, expected_elapsed):
    assert elapsed([hours], US)[0] == pytest.approx(expected_elapsed)


def test_us_fourteen_hour_window_counts_loading():
    # FMCSA guide (references.md 3.2, [V-2ND]): on duty 6:00, driving from 7:00, a 30-minute
    # break, 11 h of driving reached at 6:30 p.m. -> 12.5 h after coming on duty, inside the 14 h
    # window: one break, no rest (we take the break at 8 h, the guide at 7 h: the same end time)
    stops = stops_for_run([11.0], US, on_duty=1.0)
    assert stops == [(0.5, 0.0)] and 1.0 + 11.0 + 0.5 == 12.5
    # issue 12: 4 h loading + 11 h driving is not legal in one shift: after 4 + 8 + 0.5 + 1.5 = 14 h
    # on duty (395.3(a)(2)) the driver needs 10 h off before the last 1.5 h
    assert stops_for_run([11.0], US, on_duty=4.0) == [(0.5, 10.0)]
    # a break that would reach the window is not taken: the 10 h off comes first
    assert stops_for_run([9.0], US, on_duty=5.75) == [(0.0, 10.0)]  # 5.75 + 8 = 13.75; + 0.5 > 14


def test_clock_runs_across_legs():
    # three legs of 2 h: the 4.5 h mark falls inside the third leg, so its break is there
    _, stops = elapsed([2.0, 2.0, 2.0], EU)
    assert stops == [(0.0, 0.0), (0.0, 0.0), (0.75, 0.0)]


def test_settings_override_the_published_numbers():
    s = Settings(driving_rules="eu_561_2006", break_after_driving_hours=4.0, daily_rest_hours=9.0)
    r = rules_for(s)
    assert (r.break_after, r.break_hours, r.daily_driving, r.daily_rest) == (4.0, 0.75, 9.0, 9.0)
    assert rules_for(Settings()) is None


def _long_haul(rules: str, rest_paid: str = "no"):
    depots = (Depot("A", "A", 50.0, 3.0), Depot("B", "B", 53.0, 10.0))
    # 900 km at 80 km/h = 11.25 h (invented lane, figures chosen to hit the rule)
    lanes = (Lane("L1", "A", "B", "road", 900.0, 11.25),)
    rates = (RateCard("truck", "road", 1.0, 40.0, 24.0),)
    ships = (Shipment("S1", "A", "B", 10.0),)
    settings = Settings(driving_rules=rules, rest_hours_paid=rest_paid)
    model = Model(settings, depots, lanes, rates, ships)
    return route_all(model)[0][0]


def test_long_haul_costed_with_stops():
    res = _long_haul("eu_561_2006")
    leg = res.legs[0]
    # a 10 h day with two breaks, a reduced 9 h rest, 1.25 h (test_eu_561_2006)
    assert (leg.break_hours, leg.rest_hours) == (1.5, 9.0)
    assert res.elapsed_hours == pytest.approx(21.75)
    # breaks paid at per_hour (default), rest not: 1.5 h x 40 = 60.00
    assert leg.stop_cost == 60.00
    # 900 x 1.0 + 11.25 x 40 + 60 = 1410.00
    assert res.subtotal == 1410.00
    paid_rest = _long_haul("eu_561_2006", rest_paid="yes")
    # rest paid too: (1.5 + 9) x 40 = 420.00
    assert paid_rest.legs[0].stop_cost == 420.00
    none = _long_haul("none")
    assert none.legs[0].stop_cost == 0 and none.elapsed_hours == 11.25
