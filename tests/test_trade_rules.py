"""Tolls by vehicle class, ADR tunnel categories and codes, and trade names (issue 12).

Sources:
- ADR (UNECE), 1.9.5 tunnel categories A to E and 8.6 restrictions; the code is in column 15 of
  Table A of 3.2: code X keeps a load out of tunnels of category X and every later letter; split
  codes X/Y apply X to carriage in tanks, Y to other carriage (UN 1202 diesel, UN 1203 petrol:
  D/E); B1000C switches at 1,000 kg net explosive mass [V-2ND: ../shared/references.md 8.1].
- The 3.5 t line of EU road charging (Directive 1999/62/EC as amended by (EU) 2022/362) and the
  exemption of vans below it from most national truck tolls [MEM, references.md 8.4]: the default
  toll of a light vehicle is 0, common practice, no source.
Networks and rates are invented inputs; the expected figures are worked by hand below.
"""

from __future__ import annotations

import pytest

from costing import pipeline
from costing.contract.inputs import tunnel_forbids, tunnel_letter
from costing.contract.outputs import HEADER_NOTES
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.price.rates import toll_class, toll_for
from tests.pipeline_helpers import route_all


@pytest.mark.parametrize("code, letter", [
    ("B", "B"), ("C", "C"), ("D", "D"), ("E", "E"), ("D/E", "D"), ("C/D", "C"), ("B/E", "B"),
    ("B1000C", "B"), ("(D/E)", "D"), (" d/e ", "D"), ("-", None), ("", None), (None, None)])
def test_tunnel_codes_read_as_adr_says(code, letter):
    assert tunnel_letter(code) == letter


@pytest.mark.parametrize("code", ["F", "A", "D/F", "BC", "B500C", "1203"])
def test_not_a_tunnel_code(code):
    with pytest.raises(ValueError, match="ADR tunnel restriction code"):
        tunnel_letter(code)


def test_tunnel_categories_forbidden_by_each_code():
    # ADR 8.6 [V-2ND]: B -> B, C, D, E; C -> C, D, E; D -> D, E; E -> E only; A restricts nothing
    want = {"B": "BCDE", "C": "CDE", "D": "DE", "E": "E"}
    for letter, closed in want.items():
        for cat in "ABCDE":
            assert tunnel_forbids(letter, cat) == (cat in closed), (letter, cat)
    assert not tunnel_forbids(None, "E") and not tunnel_forbids("B", None)


def _card(name, payload, tare, cls=None):
    return RateCard(name, "road", 1.0, 0.0, payload, tare_t=tare, toll_class=cls)


def test_toll_class_from_the_card_or_its_weight():
    # 3.5 t and 12 t lines (from memory, references.md 8.4)
    assert toll_class(_card("van", 1.1, 2.3)) == "light"  # 3.4 t
    assert toll_class(_card("van", 1.2, 2.3)) == "light"  # 3.5 t exactly
    assert toll_class(_card("small", 5.0, 5.0)) == "medium"  # 10 t
    assert toll_class(_card("rigid", 9.0, 8.5)) == "heavy"  # 17.5 t
    assert toll_class(_card("bare", 24.0, 0.0)) == "heavy"
    assert toll_class(_card("van", 1.1, 2.3, "heavy")) == "heavy"  # the card's own class wins


def test_toll_by_class_on_the_lane():
    lane = Lane("L", "A", "B", "road", 10.0, 0.2, toll=20.0)
    van, mid, hgv = _card("van", 1.1, 2.3), _card("mid", 5.0, 5.0), _card("hgv", 24.0, 14.0)
    assert (toll_for(lane, van), toll_for(lane, mid), toll_for(lane, hgv)) == (0.0, 20.0, 20.0)
    lane2 = Lane("L", "A", "B", "road", 10.0, 0.2, toll=20.0, toll_medium=12.0, toll_light=4.0)
    assert (toll_for(lane2, van), toll_for(lane2, mid), toll_for(lane2, hgv)) == (4.0, 12.0, 20.0)


def test_a_van_pays_no_truck_toll_in_the_legs():
    # 0.8 t by van over a lane with a 20.00 truck toll: 10 km x 1.00 = 10.00, toll 0 (light);
    # the same load on a heavy card pays 20.00
    depots = (Depot("A", "A", 51.0, 4.0), Depot("B", "B", 51.05, 4.1))
    lanes = (Lane("L", "A", "B", "road", 10.0, 0.2, toll=20.0),)
    for card, toll in ((_card("van", 1.1, 2.3), 0.0), (_card("hgv", 24.0, 14.0), 20.0)):
        model = Model(Settings(), depots, lanes, (card,), (Shipment("S", "A", "B", 0.8),))
        (res,), _st, _p = route_all(model)
        leg = res.legs[0]
        assert (leg.toll_rate, leg.toll_cost) == (toll, toll)
        assert res.total_cost == 10.0 + toll


def _tunnel_model(category, code, hazmat=True, hazmat_allowed=True):
    # A -> B through the tunnel lane T (50 km) or round it, R1 + R2 (2 x 40 km)
    depots = (Depot("A", "A", 51.0, 4.0), Depot("M", "M", 51.2, 4.3), Depot("B", "B", 51.0, 4.6))
    lanes = (Lane("T", "A", "B", "road", 50.0, 0.7, tunnel_category=category, hazmat_allowed=hazmat_allowed),
             Lane("R1", "A", "M", "road", 40.0, 0.6), Lane("R2", "M", "B", "road", 40.0, 0.6))
    ship = Shipment("S", "A", "B", 10.0, hazmat=hazmat, tunnel_code=code)
    return Model(Settings(), depots, lanes, (_card("hgv", 24.0, 14.0),), (ship,))


@pytest.mark.parametrize("category, code, hazmat, through", [
    ("D", "E", True, True),       # E keeps out of E only
    ("D", "D/E", True, False),    # a tanker of diesel (D/E): D applies
    ("E", "D/E", True, False),
    ("C", "D/E", True, True),
    ("B", "C", True, True),
    ("A", "B", True, True),       # category A: no restriction
    ("E", None, True, False),     # dangerous goods without a code: kept out of B to E
    ("A", None, True, True),
    ("B", None, False, True),     # not dangerous goods: any tunnel
    (None, "B", True, True),      # no tunnel on the lane
])
def test_routes_keep_out_of_forbidden_tunnels(category, code, hazmat, through):
    (res,), _st, _p = route_all(_tunnel_model(category, code, hazmat))
    assert [g.use.lane.lane_id for g in res.legs] == (["T"] if through else ["R1", "R2"])
    if not through:
        assert f"category {category} tunnel" in res.message


def test_hazmat_allowed_no_still_closes_the_lane():
    (res,), _st, _p = route_all(_tunnel_model("A", "E", hazmat_allowed=False))
    assert [g.use.lane.lane_id for g in res.legs] == ["R1", "R2"]
    assert "does not allow dangerous goods" in res.message


def test_example_s004_keeps_out_of_the_scheldt_tunnel():
    model, _p, _sha = pipeline.load("examples/hollowmere-week.xlsx")
    results, _st, _p = route_all(model)
    s004 = next(r for r in results if r.shipment.shipment_id == "S004")
    assert "L044" not in [g.use.lane.lane_id for g in s004.legs]
    assert "category D tunnel, closed to tunnel code D/E" in s004.message


def test_tunnel_code_with_hazmat_no_is_costed_as_dangerous_goods(cli, make_input, tmp_path):
    from tests.conftest import base_data

    data = base_data()
    data["Shipments"][0].update({"hazmat": False, "tunnel_code": "D/E"})
    code, _o, err = cli("check", make_input(data))
    assert code == 0, err
    assert "hazmat is no but tunnel_code is D/E" in _o + err


def test_stop_cost_reads_as_driver_time_not_a_drop_fee():
    # in the trade a "stop charge" is an extra-drop fee; the column is break and rest pay
    note = HEADER_NOTES["stop_cost"]
    assert "not an extra-drop" in note and "paid_stop_hours" in note and "per_hour" in note
