"""One mistake gives one message (issue: what a person sees). A rate card with a blank required
cell is reported once, on the Rates sheet; a shipment naming that card's vehicle does not get a
second, misleading error saying the vehicle has no rate card. Invented test data."""

from __future__ import annotations

from costing import pipeline
from costing.model import ERROR
from tests.conftest import base_data


def test_blank_per_hour_is_one_error_not_two(make_input):
    d = base_data()
    d["Rates"][0]["per_hour"] = None
    d["Shipments"][0]["vehicle"] = "truck"
    _model, problems, _sha = pipeline.load(make_input(d))
    errors = [p for p in problems if p.severity == ERROR]
    assert any(p.sheet == "Rates" and "per_hour" in (p.message + p.fix) for p in errors), errors
    assert not any("has no rate card" in p.message for p in errors), errors


def test_unknown_vehicle_still_reported(make_input):
    d = base_data()
    d["Shipments"][0]["vehicle"] = "trcuk"
    _model, problems, _sha = pipeline.load(make_input(d))
    msgs = [p.message for p in problems if p.severity == ERROR]
    assert any("'trcuk' has no rate card" in m for m in msgs), msgs
