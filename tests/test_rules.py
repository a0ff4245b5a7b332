"""Driving-time rules: check values computed from the published numbers.

EU: Regulation (EC) No 561/2006, Art. 7 (a 45-minute break after 4.5 h of driving), Art. 6(1)
(daily driving 9 h), Art. 8 (regular daily rest 11 h) - numbers per shared/references.md 3.1
([V-2ND] for the article mapping). US: 49 CFR 395.3 property-carrying, (a)(3)(ii) 30-minute break
after 8 h of driving, (a)(3)(i) 11 h driving, (a)(1) 10 h off duty ([V-DOC] FMCSA summary, per
references.md 3.2). The elapsed times below are our arithmetic from those numbers.
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
    # 900 km at 80 km/h = 11.25 h driving: 4.5 + 0.75 + 4.5, daily rest 11 h, then 2.25 h
    (11.25, 23.0, 0.75, 11),
    # two days: 9 h (with a break), rest, 9 h (with a break), rest, 1 h
    (19.0, 19 + 0.75 * 2 + 11 * 2, 1.5, 22),
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
    assert (leg.break_hours, leg.rest_hours) == (0.75, 11.0)
    assert res.elapsed_hours == pytest.approx(23.0)
    # break paid at per_hour (default), rest not: 0.75 h x 40 = 30.00
    assert leg.stop_cost == 30.00
    # 900 x 1.0 + 11.25 x 40 + 30 = 1380.00
    assert res.subtotal == 1380.00
    paid_rest = _long_haul("eu_561_2006", rest_paid="yes")
    # rest paid too: (0.75 + 11) x 40 = 470.00
    assert paid_rest.legs[0].stop_cost == 470.00
    none = _long_haul("none")
    assert none.legs[0].stop_cost == 0 and none.elapsed_hours == 11.25
