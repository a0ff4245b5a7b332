"""Handling only where loads are handled (issue 12): a vehicle driving through a hub pays nothing
there; a load changing vehicle at a hub (cross-dock) or mode at a terminal pays, per vehicle, the
unloading of the arriving vehicles and the loading of the leaving ones (every unit lifted off and
on). Hand-worked figures in the comments (the rule is the contract's, the arithmetic is ours);
inputs are invented.
"""

from __future__ import annotations

import pytest

from costing import pipeline
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from tests.pipeline_helpers import route_all


def _crossdock_model(weight=20.0):
    depots = (Depot("A", "A", 51.0, 4.0, "depot", 20.0, 0.5), Depot("H", "H", 52.5, 6.0, "hub", 30.0, 1.0),
              Depot("C", "C", 52.6, 6.1, "customer", 10.0, 0.25))
    # L2 is a town street with a 12 t limit: a loaded artic (20 t) may not use it, a rigid may
    lanes = (Lane("L1", "A", "H", "road", 300.0, 4.0),
             Lane("L2", "H", "C", "road", 20.0, 0.5, max_weight_t=12.0))
    rates = (RateCard("artic", "road", 1.0, 0.0, 24.0, per_trip=40.0),
             RateCard("rigid", "road", 0.9, 0.0, 9.0, per_trip=30.0))
    return Model(Settings(), depots, lanes, rates, (Shipment("S1", "A", "C", weight),))


def test_crossdock_at_a_hub_charges_both_ends_of_each_run():
    # artic A -> H: handling A 20 + trip 40 + 300 km x 1.00 = 300; unloaded at H: 30
    # 3 rigids (20 / 9 -> 3) H -> C: loaded at H 3 x 30 = 90, trips 3 x 30 = 90,
    #   3 x 20 km x 0.90 = 54; unloaded at C 3 x 10 = 30
    # total 20 + 40 + 300 + 30 + 90 + 90 + 54 + 30 = 654.00
    # (rigids all the way: 3 x 20 + 3 x 30 + 3 x 320 x 0.90 + 3 x 10 = 1044.00)
    (res,), _st, _p = route_all(_crossdock_model())
    assert [(g.use.lane.lane_id, g.card.vehicle, g.vehicles) for g in res.legs] == [
        ("L1", "artic", 1), ("L2", "rigid", 3)]
    a, b = res.legs
    assert (a.start_handling_cost, a.trip_cost, a.km_cost, a.end_handling_cost) == (20.0, 40.0, 300.0, 30.0)
    assert (b.start_handling_cost, b.trip_cost, b.km_cost, b.end_handling_cost) == (90.0, 90.0, 54.0, 30.0)
    assert res.total_cost == 654.00
    # hours: A 0.5 loading; H 1.0 unloading + 1.0 loading (vehicles handled in parallel); C 0.25
    assert (a.handling_hours, b.handling_hours) == (1.5, 1.25)
    assert "vehicle changed (cross-dock): artic > rigid at H" in res.message


def test_the_time_objective_sees_the_crossdock_hours():
    # the cost route's hours count the hub's hour at both ends of the runs, as its legs do:
    # 0.5 + 4.0 + 1.0 + 1.0 + 0.5 + 0.25 = 7.25 h; rigids all the way skip the cross-dock:
    # 0.5 + 4.0 + 0.5 + 0.25 = 5.25 h, so the time objective takes them
    (res,), _st, _p = route_all(_crossdock_model())
    assert res.quantity("hours") == pytest.approx(7.25)
    model = _crossdock_model()
    timed = Model(Settings(objective="time"), model.depots, model.lanes, model.rates, model.shipments)
    (res_t,), _st, _p = route_all(timed)
    assert res_t.objective_value == pytest.approx(5.25)
    assert {g.card.vehicle for g in res_t.legs} == {"rigid"}


def test_terminal_lifts_every_unit_at_both_ends():
    # 50 t: 3 trucks (24 t) to T1, one 60 t wagon T1 -> T2, 3 trucks on. At T1: 3 trucks unloaded
    # (3 x 80 = 240) and the wagon loaded (80); at T2 the wagon unloaded (80), 3 trucks loaded (240).
    depots = (Depot("A", "A", 51.0, 3.0, "customer", 20.0), Depot("T1", "T1", 51.1, 3.4, "terminal", 80.0),
              Depot("T2", "T2", 52.0, 11.0, "terminal", 80.0), Depot("B", "B", 52.1, 11.4, "customer", 20.0))
    lanes = (Lane("R1", "A", "T1", "road", 30.0, 0.5), Lane("X1", "T1", "T2", "rail", 600.0, 10.0),
             Lane("R2", "T2", "B", "road", 30.0, 0.5))
    rates = (RateCard("truck", "road", 1.2, 40.0, 24.0, per_trip=50.0),
             RateCard("wagon", "rail", 0.5, 15.0, 60.0, per_trip=100.0))
    model = Model(Settings(), depots, lanes, rates, (Shipment("S1", "A", "B", 50.0),))
    (res,), _st, _p = route_all(model)
    assert [(g.card.vehicle, g.vehicles) for g in res.legs] == [("truck", 3), ("wagon", 1), ("truck", 3)]
    assert [(g.start_handling_cost, g.end_handling_cost) for g in res.legs] == [
        (60.0, 240.0), (80.0, 80.0), (240.0, 60.0)]


def test_example_hubs_driven_through_charge_nothing():
    # issue 12: S045 (artic through Lille-Lesquin D04) and S012 (van through Tilburg D02) paid the
    # hub's cross-dock charge and hour although nothing was handled there
    model, _p, _sha = pipeline.load("examples/hollowmere-week.xlsx")
    results, _st, _p = route_all(model)
    by_id = {r.shipment.shipment_id: r for r in results}
    for sid, hub in (("S045", "D04"), ("S012", "D02")):
        r = by_id[sid]
        through = [g for g in r.legs if g.use.to_depot == hub]
        assert through, sid
        for g in through:
            assert g.end_handling_cost == 0.0 and g.end_handling_rate == 0.0, sid
        nxt = [g for g in r.legs if g.use.from_depot == hub]
        assert all(g.start_handling_cost == 0.0 for g in nxt), sid
        assert len({g.card.vehicle for g in r.legs}) == 1
    # S012: 0.8 t by van D16 > D02 > D20: before, 160.96 with Tilburg's 45.00; now 115.96
    assert by_id["S012"].total_cost == pytest.approx(115.96)
