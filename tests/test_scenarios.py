"""What-if scenarios: parsing the Scenarios sheet against the Model and the contract, and
applying a scenario to a copy of the Model. The data is invented; expected values are worked
out by hand in the comments."""

from __future__ import annotations

import copy
import dataclasses

import pytest

from costing.check.scenarios import (
    ID_COLUMNS,
    Change,
    Scenario,
    ScenarioError,
    apply_scenario,
    parse_scenarios,
)
from costing.check.validate import validate
from costing.contract.inputs import SETTINGS, SHEETS_BY_NAME
from costing.contract.rows import RawRow, RawSheet
from costing.model import ERROR, INFO, WARNING, Depot, Lane, Model, RateCard, Settings, Shipment
from costing.workbook.reader import read_workbook
from tests.conftest import base_data

NAMES = ("scenario", "sheet", "key", "column", "change")  # columns A to E


def base_model() -> Model:
    return Model(
        Settings(fuel_price_per_litre=None),
        (Depot("A", "Alpha", 52.0, 5.0), Depot("B", "Bravo", 52.5, 5.5, "hub", 40.0, 1.0),
         Depot("C", "Charlie", 53.0, 6.0, "customer"), Depot("D", "Delta", 51.0, 4.0)),
        (Lane("L1", "A", "B", "road", 80.0, 1.2, toll=5.0, row=2),
         Lane("L2", "B", "C", "road", 85.0, 1.3, row=3),
         Lane("L3", "A", "C", "road", 190.0, 2.6, row=4),
         Lane("L4", "A", "D", "rail", None, None, max_weight_t=None, row=5),
         Lane("L5", "B", "D", "road", 120.0, 1.8, max_weight_t=30.0, row=6)),
        (RateCard("artic_40t", "road", 1.05, 38.0, 24.0, row=2),
         RateCard("artic_40t", "rail", 0.60, 10.0, 26.0, row=3),
         RateCard("van", "road", 0.55, 30.0, 3.5, row=4)),
        (Shipment("S1", "A", "C", 10.0, row=2), Shipment("S2", "A", "D", 5.0, "artic_40t", row=3)),
    )


def sheet(*rows, title: str = "Scenarios", formulas: dict[int, set[str]] | None = None) -> RawSheet:
    """A Scenarios sheet with columns A to E and the given rows from row 2."""
    raw_rows = [RawRow(i, dict(zip(NAMES, r)), (formulas or {}).get(i, set()))
                for i, r in enumerate(rows, start=2)]
    return RawSheet("Scenarios", title, {n: i for i, n in enumerate(NAMES, start=1)}, raw_rows)


def parse(*rows, model: Model | None = None, **kw):
    return parse_scenarios(sheet(*rows, **kw), model or base_model())


def errors(problems):
    return [p for p in problems if p.severity == ERROR]


def rate(model: Model, vehicle: str, mode: str) -> RateCard:
    return model.cards_for(vehicle)[mode]


def lane(model: Model, lane_id: str) -> Lane:
    return next(x for x in model.lanes if x.lane_id == lane_id)


# ---------------------------------------------------------------------------------------------
# a hand-worked scenario

FUEL_UP = (
    ("fuel_up", "Rates", "artic_40t", "per_km", "+12%"),               # row 2
    ("fuel_up", "Lanes", "L1", "toll", "+2.5"),                         # row 3
    ("fuel_up", "Lanes", "L3", "open", "=no"),                          # row 4
    ("fuel_up", "Settings", "fuel_price_per_litre", "value", "=1.85"),  # row 5
    ("fuel_up", "Rates", "artic_40t/road", "per_km", "+10%"),           # row 6
    ("fuel_up", "Settings", None, "value_of_time_per_hour", "=30"),     # row 7
)


def test_hand_worked_fuel_up():
    model = base_model()
    scenarios, problems = parse(*FUEL_UP, model=model)
    assert problems == []
    assert [s.name for s in scenarios] == ["fuel_up"]
    (fuel_up,) = scenarios
    assert [c.row for c in fuel_up.changes] == [2, 3, 4, 5, 6, 7]
    assert fuel_up.changes[0] == Change("Rates", "artic_40t", "per_km", "pct", 12.0, "E2", 2)
    # the setting named in column with key blank is stored like key=setting, column=value
    assert fuel_up.changes[5] == Change("Settings", "value_of_time_per_hour", "value", "set", 30.0,
                                        "E7", 7)
    new = apply_scenario(model, fuel_up)
    # row 2: every artic_40t card +12%: road 1.05 x 1.12 = 1.176; rail 0.60 x 1.12 = 0.672
    # row 6: then artic_40t/road only +10%: 1.176 x 1.10 = 1.2936 (rail stays 0.672)
    assert rate(new, "artic_40t", "road").per_km == 1.2936
    assert rate(new, "artic_40t", "rail").per_km == 0.672
    assert rate(new, "van", "road").per_km == 0.55  # not named: unchanged
    # row 3: toll of L1: 5 + 2.5 = 7.5; other lanes keep theirs
    assert lane(new, "L1").toll == 7.5
    assert lane(new, "L2").toll == 0.0
    # row 4: L3 closed
    assert lane(new, "L3").open is False and lane(new, "L1").open is True
    # rows 5 and 7: settings
    assert new.settings.fuel_price_per_litre == 1.85
    assert new.settings.value_of_time_per_hour == 30.0
    assert new.settings.detour_factor == 1.25
    # the rest of each changed record is as it was
    assert dataclasses.replace(lane(new, "L1"), toll=5.0) == lane(model, "L1")
    assert new.depots == model.depots and new.shipments == model.shipments
    assert fuel_up.changes[0].describe() == "Rates artic_40t per_km +12%"
    assert [c.form() for c in fuel_up.changes] == ["+12%", "+2.5", "=no", "=1.85", "+10%", "=30"]


def test_input_model_is_unchanged_after_apply():
    model = base_model()
    before = copy.deepcopy(model)
    scenarios, _ = parse(*FUEL_UP, model=model)
    new = apply_scenario(model, scenarios[0])
    assert model == before
    assert rate(model, "artic_40t", "road").per_km == 1.05
    assert lane(model, "L3").open is True
    assert model.settings.fuel_price_per_litre is None
    assert new is not model and new != model
    # unchanged records are shared, changed ones are new objects
    assert lane(new, "L2") is lane(model, "L2")
    assert lane(new, "L1") is not lane(model, "L1")
    with pytest.raises(dataclasses.FrozenInstanceError):
        lane(new, "L1").toll = 0.0  # type: ignore[misc]


def test_changes_apply_in_row_order():
    # =40 then +10% on L4's blank limit: 40 x 1.10 = 44; the other order is a warning (blank)
    scenarios, problems = parse(("a", "Lanes", "L4", "max_weight_t", "=40"),
                                ("a", "Lanes", "L4", "max_weight_t", "+10%"))
    assert problems == []
    assert lane(apply_scenario(base_model(), scenarios[0]), "L4").max_weight_t == 44.0
    scenarios, problems = parse(("a", "Lanes", "L4", "max_weight_t", "+10%"),
                                ("a", "Lanes", "L4", "max_weight_t", "=40"))
    assert [(p.severity, p.cell) for p in problems] == [(WARNING, "E2")]
    assert lane(apply_scenario(base_model(), scenarios[0]), "L4").max_weight_t == 40.0


# ---------------------------------------------------------------------------------------------
# keys


def test_rates_key_forms():
    model = base_model()
    (s,), problems = parse(("v", "Rates", "artic_40t", "per_hour", "-5%"), model=model)
    assert problems == []
    new = apply_scenario(model, s)
    # all artic_40t cards: 38 x 0.95 = 36.1; 10 x 0.95 = 9.5; van untouched
    assert (rate(new, "artic_40t", "road").per_hour, rate(new, "artic_40t", "rail").per_hour,
            rate(new, "van", "road").per_hour) == (36.1, 9.5, 30.0)
    (s,), problems = parse(("v", "Rates", "artic_40t/road", "per_hour", "-5%"), model=model)
    assert problems == [] and s.changes[0].key == "artic_40t/road"
    new = apply_scenario(model, s)
    assert (rate(new, "artic_40t", "road").per_hour, rate(new, "artic_40t", "rail").per_hour) == (36.1, 10.0)
    # spaces and case around the mode are forgiven
    (s,), problems = parse(("v", "Rates", "artic_40t / Rail", "per_trip", "+15"), model=model)
    assert problems == [] and s.changes[0].key == "artic_40t/rail"
    assert rate(apply_scenario(model, s), "artic_40t", "rail").per_trip == 15.0


@pytest.mark.parametrize("key, text", [
    ("artic_40t/air", "no rate card for air"),
    ("artic_40t/rial", "did you mean rail?"),
    ("artic40t", "did you mean artic_40t?"),
    ("artic40t/road", "did you mean artic_40t?"),
])
def test_bad_rates_keys(key, text):
    scenarios, problems = parse(("v", "Rates", key, "per_km", "+1%"))
    assert scenarios == []
    (p,) = problems
    assert (p.severity, p.sheet, p.cell) == (ERROR, "Scenarios", "C2")
    assert text in p.message + " " + p.fix


def test_blank_key_changes_every_row():
    model = base_model()
    (s,), problems = parse(("all", "Lanes", None, "toll", "+1"), model=model)
    assert problems == []
    new = apply_scenario(model, s)
    # 5 + 1 = 6 on L1; 0 + 1 = 1 on the others (a blank toll is 0, stored as 0.0)
    assert [x.toll for x in new.lanes] == [6.0, 1.0, 1.0, 1.0, 1.0]


def test_numeric_key_is_read_as_text():
    model = dataclasses.replace(base_model(), lanes=(Lane("101", "A", "B", "road", 80.0, 1.2),))
    (s,), problems = parse(("k", "Lanes", 101.0, "toll", "=3"), model=model)
    assert problems == [] and s.changes[0].key == "101"


# ---------------------------------------------------------------------------------------------
# every bad row gives its problem at its cell

BAD_ROWS = [
    # unknown sheet, did you mean
    (("s", "Lane", "L1", "toll", "+1"), "B2", "did you mean Lanes?"),
    (("s", "Scenarios", None, "change", "=x"), "B2", "cannot change the Scenarios sheet"),
    (("s", None, "L1", "toll", "+1"), "B2", "sheet is blank"),
    # unknown column for that sheet, did you mean
    (("s", "Lanes", "L1", "tol", "+1"), "D2", "did you mean toll?"),
    (("s", "Depots", "A", "per_km", "+1"), "D2", "not a column of Depots"),
    (("s", "Settings", "fuel_price_per_litre", "valu", "=2"), "D2", "did you mean value?"),
    # key that names no row, did you mean
    (("s", "Lanes", "L11", "toll", "+1"), "C2", "did you mean L1?"),
    (("s", "Lanes", "l1", "toll", "+1"), "C2", "did you mean L1?"),
    (("s", "Shipments", "S9", "weight_t", "+1"), "C2", "names no row of Shipments"),
    (("s", "Settings", "fuel_prise_per_litre", "value", "=2"), "C2", "did you mean fuel_price_per_litre?"),
    (("s", "Settings", None, "value", "=2"), "C2", "which setting"),
    (("s", "Settings", "currency", "objective", "=time"), "C2", "name different settings"),
    # change that does not parse; the fix says which forms are accepted
    (("s", "Lanes", "L1", "toll", "abc"), "E2", "+10% or -5% (relative), +12.5 or -3 (added)"),
    (("s", "Lanes", "L1", "toll", "10%"), "E2", "has no sign"),
    (("s", "Lanes", "L1", "toll", "+12,5"), "E2", "+12.5"),
    (("s", "Lanes", "L1", "toll", "++5"), "E2", "=1.85, =yes, =no, =text"),
    (("s", "Lanes", "L1", "toll", None), "E2", "change is blank"),
    (("s", "Lanes", "L1", "toll", "#NAME?"), "E2", "format the cell as Text"),
    # relative or added change on a non-number column
    (("s", "Lanes", "L1", "mode", "+10%"), "E2", "mode is not a number"),
    (("s", "Lanes", "L1", "open", "+1"), "E2", "open is not a number"),
    (("s", "Settings", "objective", "value", "+10%"), "E2", "objective is not a number"),
    # set value of the wrong kind
    (("s", "Rates", "artic_40t", "per_km", "=abc"), "E2", "=abc is not a number"),
    (("s", "Lanes", "L3", "open", "=maybe"), "E2", "not yes or no"),
    (("s", "Lanes", "L3", "mode", "=rial"), "E2", "did you mean rail?"),
    (("s", "Depots", "A", "kind", "=warehouse"), "E2", "not one of depot, hub"),
    (("s", "Shipments", "S1", "objective", "=fastest"), "E2", "not one of cost, time"),
    (("s", "Settings", "objective", "value", "=fastest"), "E2", "not one of cost, time"),
    (("s", "Settings", "currency", "value", "=EURO"), "E2", "not an ISO 4217 code"),
    (("s", "Settings", "break_hours_paid", "value", "=maybe"), "E2", "not one of yes, no"),
    (("s", "Lanes", "L1", "from_depot", "=Z"), "E2", "not a depot_id"),
    (("s", "Shipments", "S1", "vehicle", "=lorry"), "E2", "has no rate card"),
    (("s", "Rates", "van", "per_km", "="), "E2", "required and cannot be made blank"),
    # result outside the column's bounds, checked row by row
    (("s", "Rates", "artic_40t", "per_km", "-120%"), "E2", "1.05 -> -0.21 is negative"),
    (("s", "Depots", "A", "latitude", "=91"), "E2", "above the most allowed, 90"),
    (("s", "Depots", None, "latitude", "+38.5"), "E2", "A (52 -> 90.5"),
    (("s", "Rates", "van", "payload_t", "-100%"), "E2", "below the least allowed, 0.01"),
    (("s", "Lanes", "L1", "toll", "+2000000000"), "E2", "implausibly large"),
    (("s", "Settings", "detour_factor", "value", "=0.5"), "E2", "below the least allowed, 1"),
    (("s", "Settings", "detour_factor", "value", "+400%"), "E2", "above the most allowed, 5"),
    (("s", "Lanes", "L1", "from_depot", "=B"), "E2", "from B to itself"),
    # id columns are refused
    (("s", "Depots", "A", "depot_id", "=AA"), "D2", "id column"),
    (("s", "Lanes", "L1", "lane_id", "=L9"), "D2", "id column"),
    (("s", "Shipments", "S1", "shipment_id", "=S9"), "D2", "id column"),
    (("s", "Rates", "van", "vehicle", "=bus"), "D2", "id column"),
    (("s", "Rates", "van", "mode", "=rail"), "D2", "id column"),
    # reserved and blank scenario names
    (("Base", "Lanes", "L1", "toll", "+1"), "A2", "reserved"),
    ((" BASE case", "Lanes", "L1", "toll", "+1"), "A2", "reserved"),
    ((None, "Lanes", "L1", "toll", "+1"), "A2", "scenario name is blank"),
]


@pytest.mark.parametrize("row, cell, text", BAD_ROWS, ids=[f"{r[3]}:{r[4]}:{t[:20]}" for r, _, t in BAD_ROWS])
def test_bad_row_gives_error_at_its_cell(row, cell, text):
    scenarios, problems = parse(row, title="What if")
    assert scenarios == []  # a scenario with an error is never returned, not even in part
    errs = errors(problems)
    assert errs, problems
    assert errs[0].sheet == "What if" and errs[0].cell == cell, errs
    assert any(text in p.message + " | " + p.fix for p in errs), errs
    assert f"'What if'!{cell}" == errs[0].where


def test_formula_without_result_is_refused_at_its_cell():
    scenarios, problems = parse(("s", "Lanes", "L1", "toll", None), formulas={2: {"change"}})
    assert scenarios == []
    assert [(p.severity, p.cell) for p in problems] == [(ERROR, "E2")]
    assert "formula with no saved result" in problems[0].message


def test_several_problems_in_one_row_each_at_its_cell():
    _, problems = parse(("s", "Lanez", "L1", "toll", "abc"))
    assert sorted(p.cell for p in errors(problems)) == ["B2", "E2"]
    _, problems = parse(("s", "Lanes", "L99", "tol", "+1"))
    assert sorted(p.cell for p in errors(problems)) == ["C2", "D2"]


def test_bounds_name_every_offending_row():
    # latitude +38.5: A 52 -> 90.5, B 52.5 -> 91, C 53 -> 91.5 are above 90; D 51 -> 89.5 is fine
    _, problems = parse(("s", "Depots", None, "latitude", "+38.5"))
    (p,) = problems
    assert p.cell == "E2" and "3 rows" in p.message
    assert "A (52 -> 90.5" in p.message and "C (53 -> 91.5" in p.message and "D (" not in p.message


def test_error_in_one_scenario_leaves_the_others():
    scenarios, problems = parse(("good", "Lanes", "L1", "toll", "+1"),
                                ("bad", "Lanes", "L1", "toll", "-200%"),
                                ("bad", "Lanes", "L2", "toll", "+1"))
    assert [s.name for s in scenarios] == ["good"]
    assert [(p.severity, p.cell) for p in problems] == [(ERROR, "E3")]
    assert "scenario bad" in problems[0].message


def test_apply_refuses_a_change_it_cannot_make():
    bad = Scenario("hand_built", (Change("Rates", "van", "per_km", "pct", -120.0, "E9", 9),))
    model = base_model()
    with pytest.raises(ScenarioError) as e:
        apply_scenario(model, bad)
    assert e.value.problems[0].cell == "E9"
    assert "0.55 -> -0.11 is negative" in e.value.problems[0].message
    with pytest.raises(ScenarioError):
        apply_scenario(model, Scenario("x", (Change("Lanes", "L9", "toll", "add", 1.0, "E2", 2),)))
    with pytest.raises(ScenarioError):
        apply_scenario(model, Scenario("x", (Change("Lanes", "L1", "lane_id", "set", "Z", "E2", 2),)))
    with pytest.raises(ScenarioError):
        apply_scenario(model, Scenario("x", (Change("Lanes", "L1", "open", "set", "maybe", "E2", 2),)))
    assert model == base_model()


# ---------------------------------------------------------------------------------------------
# blank numbers, accepted forms


def test_blank_number_stays_blank_with_a_warning():
    # L4 has no max_weight_t (no limit) and no distance_km (estimated): neither is 0, so
    # +10% and +5 leave them blank, with a warning naming the rows, never a silent no-op
    model = base_model()
    for change in ("+10%", "+5"):
        (s,), problems = parse(("s", "Lanes", None, "max_weight_t", change), model=model)
        (p,) = problems
        assert (p.severity, p.cell) == (WARNING, "E2")
        assert "max_weight_t is blank for L1, L2, L3, L4" in p.message
        new = apply_scenario(model, s)
        # L5's 30 t limit: 30 x 1.10 = 33, or 30 + 5 = 35; the unlimited lanes stay unlimited
        assert [x.max_weight_t for x in new.lanes] == [None] * 4 + [33.0 if "%" in change else 35.0]
    (s,), problems = parse(("s", "Settings", "fuel_price_per_litre", "value", "+10%"), model=model)
    assert [(p.severity, p.cell) for p in problems] == [(WARNING, "E2")]
    assert "fuel_price_per_litre is blank" in problems[0].message
    assert apply_scenario(model, s).settings.fuel_price_per_litre is None


def test_equals_alone_makes_a_cell_blank():
    model = base_model()
    (s,), problems = parse(("s", "Lanes", "L5", "max_weight_t", "="),
                           ("s", "Lanes", "L1", "toll", "="),
                           ("s", "Shipments", "S2", "vehicle", "="),
                           ("s", "Settings", "objective", "value", "="), model=model)
    assert problems == []
    new = apply_scenario(model, s)
    assert lane(new, "L5").max_weight_t is None  # blank: no limit
    assert lane(new, "L1").toll == 0.0  # blank toll means 0
    assert new.shipments[1].vehicle is None  # blank: the tool chooses
    assert new.settings.objective == "cost"  # blank setting: its default


def test_number_cell_is_an_error_naming_the_cell_and_the_fix():
    # a number cell 1.85 could be a typed +1.85 or =1.85 (a spreadsheet stores both as 1.85) and
    # 0.1 a typed +10%: never guessed, an error naming the cell (common practice, no source)
    model = base_model()
    _, problems = parse(("s", "Settings", "fuel_price_per_litre", "value", 1.85), model=model)
    (p,) = problems
    assert (p.severity, p.cell) == (ERROR, "E2") and "the number 1.85" in p.message
    assert "as Text" in p.fix and "=1.85" in p.fix
    _, problems = parse(("s", "Lanes", "L1", "toll", 0.1))
    assert problems[0].severity == ERROR and "+10%" in problems[0].message
    # the same number typed as text in a Text cell sets without a warning
    (s,), problems = parse(("s", "Settings", "fuel_price_per_litre", "value", "1.85"), model=model)
    assert problems == [] and s.changes[0].amount == 1.85
    # TRUE/FALSE in the cell sets yes/no
    (s,), problems = parse(("s", "Lanes", "L3", "open", False), model=model)
    assert problems == [] and lane(apply_scenario(model, s), "L3").open is False


@pytest.mark.parametrize("text, op, amount", [
    ("+10%", "pct", 10.0), ("-5%", "pct", -5.0), ("+ 7.5 %", "pct", 7.5), ("\u22123%", "pct", -3.0),
    ("+12.5", "add", 12.5), ("-3", "add", -3.0), ("+.5", "add", 0.5),
    ("=1.85", "set", 1.85), ("= 2", "set", 2.0), ("=-1", "set", -1.0), ("4", "set", 4.0),
])
def test_number_forms(text, op, amount):
    (s,), problems = parse(("s", "Depots", "A", "longitude", text))
    assert problems == []
    assert (s.changes[0].op, s.changes[0].amount) == (op, amount)


@pytest.mark.parametrize("column, text, value", [
    ("open", "=no", False), ("open", "=yes", True), ("two_way", "=N", False),
    ("hazmat_allowed", "=false", False),
    ("mode", "=Rail", "rail"), ("mode", "=inland water", "inland_water"),
])
def test_set_forms_on_lanes(column, text, value):
    model = base_model()
    (s,), problems = parse(("s", "Lanes", "L2", column, text), model=model)
    assert not errors(problems)  # inland_water: a warning, no rate card prices it
    assert getattr(lane(apply_scenario(model, s), "L2"), column) == value


def test_set_forms_on_text_depot_vehicle_and_settings():
    model = base_model()
    (s,), problems = parse(("s", "Depots", "A", "name", "=Alpha North"),
                           ("s", "Depots", "B", "kind", "=Terminal"),
                           ("s", "Lanes", "L2", "to_depot", "=D"),
                           ("s", "Shipments", "S1", "vehicle", "=van"),
                           ("s", "Shipments", "S1", "hazmat", "=yes"),
                           ("s", "Settings", "currency", "value", "=gbp"),
                           ("s", "Settings", "rest_hours_paid", "value", "=Yes"),
                           ("s", "Settings", "driving_rules", "value", "=EU 561 2006"), model=model)
    assert problems == []
    new = apply_scenario(model, s)
    assert (new.depots[0].name, new.depots[1].kind) == ("Alpha North", "terminal")
    assert lane(new, "L2").to_depot == "D"
    assert (new.shipments[0].vehicle, new.shipments[0].hazmat) == ("van", True)
    assert (new.settings.currency, new.settings.rest_hours_paid, new.settings.driving_rules) == (
        "GBP", "yes", "eu_561_2006")


def test_warnings_that_do_not_stop_the_run():
    # a currency outside the tool's list, and a lane put on a mode no rate card prices
    (s,), problems = parse(("s", "Settings", "currency", "value", "=XYZ"),
                           ("s", "Lanes", "L2", "mode", "=air"))
    assert [(p.severity, p.cell) for p in problems] == [(WARNING, "E2"), (WARNING, "E3")]
    assert "never be used" in problems[1].message
    assert len(s.changes) == 2


def test_sheet_and_column_names_are_forgiving():
    (s,), problems = parse(("s", " lanes ", "L1", "Toll", "+1"),
                           ("s", "RATES", "van", "Per KM", "+1%"),
                           ("s", "settings", "Fuel price per litre", "Value", "=1.5"))
    assert problems == []
    assert [(c.sheet, c.key, c.column) for c in s.changes] == [
        ("Lanes", "L1", "toll"), ("Rates", "van", "per_km"), ("Settings", "fuel_price_per_litre", "value")]


# ---------------------------------------------------------------------------------------------
# names


def test_rows_group_by_scenario_name_in_row_order():
    scenarios, problems = parse(("fuel_up", "Rates", "van", "per_km", "+10%"),
                                ("toll_up", "Lanes", "L1", "toll", "+1"),
                                ("fuel_up", "Rates", "van", "per_km", "+10%"),
                                ("Fuel Up", "Lanes", "L2", "toll", "+2"))
    assert [s.name for s in scenarios] == ["fuel_up", "toll_up"]
    fuel_up = scenarios[0]
    assert [c.row for c in fuel_up.changes] == [2, 4, 5]
    # 'Fuel Up' is grouped with fuel_up, with a note at its name cell
    assert [(p.severity, p.cell) for p in problems] == [(INFO, "A5")]
    # 0.55 x 1.10 x 1.10 = 0.6655
    assert rate(apply_scenario(base_model(), fuel_up), "van", "road").per_km == 0.6655


def test_no_scenarios_sheet():
    assert parse_scenarios(None, base_model()) == ([], [])


def test_sheet_without_a_required_column():
    raw = sheet(("s", "Lanes", "L1", "toll", "+1"))
    del raw.columns["change"]
    scenarios, problems = parse_scenarios(raw, base_model())
    assert scenarios == [] and [(p.severity, p.cell) for p in problems] == [(ERROR, "1:1")]
    assert "change" in problems[0].message


# ---------------------------------------------------------------------------------------------
# through a workbook


def test_scenarios_read_from_a_workbook(make_input):
    data = base_data()
    data["Scenarios"] = [
        {"scenario": "fuel_up", "sheet": "Rates", "key": "truck", "column": "per_km", "change": "+12%"},
        {"scenario": "fuel_up", "sheet": "Lanes", "key": "L1", "column": "toll", "change": "+2.5"},
        {"scenario": "fuel_up", "sheet": "Lanes", "key": "L3", "column": "open", "change": "=no"},
        {"scenario": "fuel_up", "sheet": "Settings", "key": "fuel_price_per_litre", "column": "value",
         "change": "=1.85"},
        {"scenario": "typo", "sheet": "Lanes", "key": "L2", "column": "tol", "change": "+1"},
    ]
    raw = read_workbook(make_input(data))
    model = validate(raw)
    # validation parses the Scenarios sheet itself: the typo is an error there, and the good
    # scenario is kept on the model
    assert [p.where for p in errors(model.problems)] == ["Scenarios!D6"]
    assert [s.name for s in model.scenarios] == ["fuel_up"]
    scenarios, problems = parse_scenarios(raw.sheets["Scenarios"], model)
    assert [s.name for s in scenarios] == ["fuel_up"]
    assert [p.where for p in problems] == ["Scenarios!D6"]
    assert "did you mean toll?" in problems[0].fix
    new = apply_scenario(model, scenarios[0])
    # truck road per_km 1.1 x 1.12 = 1.232; L1 toll 5 + 2.5 = 7.5; L3 closed; fuel 1.85
    assert new.cards_for("truck")["road"].per_km == 1.232
    assert lane(new, "L1").toll == 7.5
    assert lane(new, "L3").open is False
    assert new.settings.fuel_price_per_litre == 1.85
    assert model.cards_for("truck")["road"].per_km == 1.1 and lane(model, "L3").open is True


def test_every_figure_of_the_contract_can_be_set():
    # each non-id column of each input sheet, and each setting, takes a "=" change
    # (a column added to the contract but not to the Model shows up here)
    samples = {"number": "=1", "yesno": "=no", "text": "=x", "depot": "=B", "vehicle": "=van",
               "date": "=2026-12-08"}
    model = base_model()
    for sheet, key in (("Depots", "A"), ("Lanes", "L3"), ("Rates", "van/road"), ("Shipments", "S1")):
        for col in SHEETS_BY_NAME[sheet].columns:
            if col.name in ID_COLUMNS[sheet]:
                continue
            change = "=" + col.choices[0] if col.kind == "choice" else samples[col.kind]
            (s,), problems = parse(("s", sheet, key, col.name, change), model=model)
            assert not errors(problems), (sheet, col.name, problems)
            apply_scenario(model, s)
    for spec in SETTINGS:
        change = {"number": f"={spec.maximum if spec.maximum is not None else 1:g}",
                  "choice": f"={spec.choices[-1] if spec.choices else ''}", "text": "=GBP"}[spec.kind]
        (s,), problems = parse(("s", "Settings", spec.name, "value", change), model=model)
        assert not errors(problems), (spec.name, problems)
        apply_scenario(model, s)
