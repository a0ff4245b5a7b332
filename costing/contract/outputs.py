"""The output contract: the costed workbook's sheets and their columns (name, width in
characters, kind of cell), the Summary columns summed into the TOTAL row, and the notes on
the headers. Plain data: the sheet writers (costing.sheets) and the readers of costed
workbooks (costing.compare, the tests) find columns by these header names, never by position."""

from __future__ import annotations

from costing.contract.inputs import OBJECTIVES

# The output sheets, in the order they appear. Legs continue on "Legs 2", "Legs 3", ... at the
# spreadsheet's row limit (Scenario legs on "Scenario legs 2", ...); Scenario comparison, Scenario
# bridge (and its shipments), Scenario shipments, Scenario vehicle runs, Scenario legs, Comparison,
# Trade-offs, Lane usage, Charts and Map appear only when the run has them.
SUMMARY = "Summary"
VEHICLE_RUNS = "Vehicle runs"
SCENARIO_COMPARISON = "Scenario comparison"
LEGS = "Legs"
SCENARIO_SHIPMENTS = "Scenario shipments"
SCENARIO_LEGS = "Scenario legs"
SCENARIO_VEHICLE_RUNS = "Scenario vehicle runs"
CARRIER_CHARGES = "Carrier charges"
CURRENCY_CONVERSION = "Currency conversion"  # when a rate card or a carrier price is in another currency
COMPARISON = "Comparison"
TRADE_OFFS = "Trade-offs"
LANE_USAGE = "Lane usage"
COST_PER_CUSTOMER = "Cost per customer"
INVOICE_CHECK = "Invoice check"
CHARTS = "Charts"
MAP = "Map"
PROBLEMS = "Problems"
RUN = "Run"
SCENARIO_BRIDGE = "Scenario bridge"  # base case to each scenario, cause by cause (costing.compare.bridge)
SCENARIO_BRIDGE_SHIPMENTS = "Scenario bridge shipments"  # each shipment's share of every step
SHEETS = (SUMMARY, SCENARIO_COMPARISON, SCENARIO_BRIDGE, SCENARIO_BRIDGE_SHIPMENTS, VEHICLE_RUNS, LEGS,
          CARRIER_CHARGES, CURRENCY_CONVERSION, SCENARIO_SHIPMENTS, SCENARIO_VEHICLE_RUNS, SCENARIO_LEGS,
          COMPARISON, TRADE_OFFS, LANE_USAGE, COST_PER_CUSTOMER, INVOICE_CHECK, CHARTS, MAP, PROBLEMS, RUN)

# Run sheet keys (column A) that readers of a costed workbook rely on; each setting's row is
# "setting: " + its name.
RUN_TOOL = "tool"
RUN_AT = "run at (UTC)"
RUN_INPUT_NAME = "input file"
RUN_INPUT_SHA256 = "input SHA-256"
RUN_SETTING_PREFIX = "setting: "
RUN_KEYS = {"currency": RUN_SETTING_PREFIX + "currency", "input_name": RUN_INPUT_NAME,
            "input_sha256": RUN_INPUT_SHA256, "run_at": RUN_AT, "tool": RUN_TOOL}

# Legs columns: (header, width, kind). kind: text | int | km | hours | money | rate | kg | plain.
LEG_COLUMNS = [
    ("shipment_id", 12, "text"),
    ("seq", 5, "int"),
    ("lane_id", 9, "text"),
    ("from_depot", 11, "text"),
    ("to_depot", 11, "text"),
    ("mode", 9, "text"),
    ("vehicle", 12, "text"),
    ("vehicles", 8, "int"),
    ("weight_t", 9, "plain"),
    ("distance_km", 11, "km"),
    ("km_basis", 10, "text"),
    ("drive_hours", 11, "hours"),
    ("hours_basis", 11, "text"),
    ("break_hours", 9, "hours"),
    ("rest_hours", 9, "hours"),
    ("handling_hours", 10, "hours"),
    ("elapsed_hours", 10, "hours"),
    ("paid_stop_hours", 10, "hours"),
    ("per_km", 9, "rate"),
    ("per_hour", 9, "rate"),
    ("toll", 9, "rate"),
    ("fixed_cost_rate", 10, "rate"),
    ("fuel_l_per_100km", 10, "plain"),
    ("fuel_price", 9, "rate"),
    ("fuel_included_at", 10, "rate"),
    ("handling_start_rate", 12, "rate"),
    ("handling_end_rate", 12, "rate"),
    ("per_trip", 9, "rate"),
    ("km_cost", 11, "money"),
    ("hour_cost", 11, "money"),
    ("toll_cost", 10, "money"),
    ("fixed_cost", 10, "money"),
    ("fuel_surcharge", 11, "money"),
    ("stop_cost", 10, "money"),
    ("handling_start_cost", 12, "money"),
    ("handling_end_cost", 12, "money"),
    ("trip_cost", 10, "money"),
    ("leg_cost", 12, "money"),
    ("co2e_kg_per_litre", 10, "plain"),
    ("co2e_basis", 15, "text"),
    ("intensity_g_per_tkm", 11, "plain"),
    ("co2e_kg", 10, "kg"),
    # emissions on a stated basis (issue 12): co2e_kg is well-to-wheel, its tank-to-wheel part beside
    ("payload_t", 9, "plain"),
    ("load_factor", 9, "plain"),
    ("fuel_empty_l_per_100km", 10, "plain"),
    ("fuel_used_l_per_100km", 10, "plain"),
    ("wtw_co2e_kg_per_litre", 10, "plain"),
    ("ttw_intensity_g_per_tkm", 11, "plain"),
    ("co2e_ttw_kg", 10, "kg"),
    ("tonne_km", 11, "km"),
    ("co2e_g_per_tkm", 10, "plain"),
    ("toll_class", 9, "text"),  # which of the lane's tolls the vehicle pays (issue 12)
    ("run_id", 8, "text"),
    ("cost_share", 11, "money"),
    ("share_adjust", 9, "money"),
    ("co2e_share", 10, "kg"),
]


LEG = {name: i for i, (name, _w, _k) in enumerate(LEG_COLUMNS)}


# Summary columns: (header, width, kind). Sums over the shipment's legs are named in SUMMED.
SUMMARY_COLUMNS = [
    ("shipment_id", 12, "text"), ("status", 9, "text"), ("origin", 10, "text"),
    ("destination", 11, "text"), ("objective", 10, "text"), ("vehicle", 12, "text"),
    ("vehicles", 8, "int"), ("legs", 6, "int"), ("distance_km", 11, "km"), ("drive_hours", 11, "hours"),
    ("break_hours", 9, "hours"), ("rest_hours", 9, "hours"), ("handling_hours", 10, "hours"),
    ("elapsed_hours", 10, "hours"), ("km_cost", 11, "money"),
    ("hour_cost", 11, "money"), ("toll_cost", 10, "money"), ("fixed_cost", 10, "money"),
    ("fuel_surcharge", 11, "money"), ("stop_cost", 10, "money"),
    ("handling_cost", 11, "money"), ("trip_cost", 10, "money"), ("subtotal", 12, "money"),
    ("min_charge", 10, "money"), ("min_charge_uplift", 11, "money"), ("empty_return_alone", 12, "money"),
    ("standalone_cost", 12, "money"), ("allocated_cost", 12, "money"), ("empty_return_cost", 12, "money"),
    ("carrier_parts_cost", 12, "money"), ("total_cost", 12, "money"), ("saving", 11, "money"),
    ("co2e_kg", 10, "kg"), ("weight_t", 9, "plain"), ("customer", 18, "text"),
    ("travels_with", 16, "text"), ("ready_date", 11, "date"), ("due_date", 11, "date"),
    ("late_hours", 9, "hours"), ("route", 40, "text"), ("note", 60, "text"),
    ("chargeable_kg", 11, "kg"), ("make_cost", 12, "money"), ("buy_cost", 12, "money"),
    ("make_or_buy", 8, "text"), ("make_or_buy_why", 50, "text"), ("pallets", 8, "plain"),
    ("quoted_price", 12, "money"), ("margin", 12, "money"), ("invoiced", 12, "money"),
    ("invoice_difference", 12, "money"),
]

# emissions on a stated basis (issue 12), after co2e_kg (well-to-wheel)
_AT = [name for name, _w, _k in SUMMARY_COLUMNS].index("co2e_kg") + 1
SUMMARY_COLUMNS[_AT:_AT] = [("co2e_ttw_kg", 10, "kg"), ("tonne_km", 11, "km"),
                            ("co2e_g_per_tkm", 10, "plain")]


SUM = {name: i for i, (name, _w, _k) in enumerate(SUMMARY_COLUMNS)}


# Summary column -> the Legs columns it adds up (rounded to the cent where money)
SUMMED = {
    "distance_km": ["distance_km"], "drive_hours": ["drive_hours"], "break_hours": ["break_hours"],
    "rest_hours": ["rest_hours"], "handling_hours": ["handling_hours"],
    "elapsed_hours": ["elapsed_hours"], "km_cost": ["km_cost"], "hour_cost": ["hour_cost"],
    "toll_cost": ["toll_cost"], "fixed_cost": ["fixed_cost"], "fuel_surcharge": ["fuel_surcharge"],
    "stop_cost": ["stop_cost"], "handling_cost": ["handling_start_cost", "handling_end_cost"],
    "trip_cost": ["trip_cost"], "subtotal": ["leg_cost"], "co2e_kg": ["co2e_share"],
    "allocated_cost": ["cost_share"], "tonne_km": ["tonne_km"],
}

SUMMED.update({"co2e_ttw_kg": ["co2e_ttw_kg"], "tonne_km": ["tonne_km"]})

# Summary column -> (numerator column, denominator column, factor): a ratio of two Summary columns,
# 0 where the denominator is 0 (the TOTAL row takes the ratio of its totals)
RATIOS = {"co2e_g_per_tkm": ("co2e_kg", "tonne_km", 1000)}


# Vehicle runs columns: (header, width, kind). One row per vehicle run: vehicles of one rate card
# on one lane step on one day, with the loads they carry. The rate and cost columns have the
# names (and formulas) of the Legs columns, for the run's vehicles.
RUN_COLUMNS = [
    ("run_id", 8, "text"), ("date", 11, "date"), ("lane_id", 9, "text"), ("from_depot", 11, "text"),
    ("to_depot", 11, "text"), ("mode", 9, "text"), ("vehicle", 12, "text"), ("vehicles", 8, "int"),
    ("loads", 6, "int"), ("shipments", 24, "text"), ("tonnes", 9, "plain"), ("pallets", 8, "plain"),
    ("volume_m3", 9, "plain"), ("payload_t", 9, "plain"), ("pallet_places", 9, "plain"),
    ("capacity_m3", 9, "plain"), ("fill_weight", 9, "pct"), ("fill_pallets", 9, "pct"),
    ("fill_volume", 9, "pct"), ("distance_km", 11, "km"), ("drive_hours", 11, "hours"),
    ("paid_stop_hours", 10, "hours"), ("per_km", 9, "rate"), ("per_hour", 9, "rate"), ("toll", 9, "rate"),
    ("fixed_cost_rate", 10, "rate"), ("fuel_l_per_100km", 10, "plain"), ("fuel_price", 9, "rate"),
    ("fuel_included_at", 10, "rate"), ("handling_start_rate", 12, "rate"), ("handling_end_rate", 12, "rate"),
    ("per_trip", 9, "rate"), ("km_cost", 11, "money"), ("hour_cost", 11, "money"), ("toll_cost", 10, "money"),
    ("fixed_cost", 10, "money"), ("fuel_surcharge", 11, "money"), ("stop_cost", 10, "money"),
    ("handling_start_cost", 12, "money"), ("handling_end_cost", 12, "money"), ("trip_cost", 10, "money"),
    ("run_cost", 12, "money"), ("standalone_cost", 12, "money"), ("saving", 11, "money"),
    ("tonne_km", 11, "km"), ("co2e_kg_per_litre", 10, "plain"), ("co2e_basis", 15, "text"),
    ("intensity_g_per_tkm", 11, "plain"), ("load_factor", 9, "plain"),
    ("fuel_empty_l_per_100km", 10, "plain"), ("fuel_used_l_per_100km", 10, "plain"),
    ("wtw_co2e_kg_per_litre", 10, "plain"), ("co2e_kg", 10, "kg"),
]


RUN_COL = {name: i for i, (name, _w, _k) in enumerate(RUN_COLUMNS)}


# Carrier charges columns: one row per shipment a carrier tariff prices whole (bought or not), and
# one per part of a route bought (collection or delivery, with the lane ends it covers); every
# price a live formula over the row's own cells. "rate" kind: amounts in the tariff's currency.
CARRIER_COLUMNS = [
    ("shipment_id", 12, "text"), ("used", 6, "text"), ("part", 10, "text"), ("from_depot", 11, "text"),
    ("to_depot", 11, "text"), ("carrier", 14, "text"), ("from_zone", 10, "text"),
    ("to_zone", 10, "text"), ("date", 11, "date"), ("weight_kg", 10, "kg"), ("volume_m3", 9, "plain"),
    ("volumetric_kg_per_m3", 11, "plain"), ("loading_metres", 9, "plain"),
    ("kg_per_loading_metre", 11, "plain"),
    ("chargeable_kg", 11, "kg"), ("weight_step_kg", 9, "plain"), ("charged_kg", 10, "kg"),
    ("min_kg", 9, "plain"), ("max_kg", 9, "plain"), ("price_per_100kg", 10, "rate"), ("freight", 11, "rate"),
    ("min_charge", 10, "rate"), ("fuel_surcharge_pct", 9, "plain"), ("fuel_surcharge", 10, "rate"),
    ("pallets", 8, "plain"), ("price_per_pallet", 10, "rate"),
    ("pallet_charge", 10, "rate"), ("price_per_consignment", 12, "rate"), ("price", 11, "rate"),
    ("currency", 8, "text"), ("rate", 10, "plain"), ("charge", 12, "money"), ("tariff_row", 8, "int"),
]


CARRIER_COL = {name: i for i, (name, _w, _k) in enumerate(CARRIER_COLUMNS)}


# Currency conversion: one row per money figure given in another currency than the run's: each
# rate card's money fields (Rates rows with a currency) and each carrier price of a tariff row in
# another currency (one per Carrier charges row), in its own currency beside its Currencies rate;
# the converted figures are live formulas. "rate" kind: amounts in the row's own currency.
CURRENCY_COLUMNS = [
    ("source", 8, "text"), ("input_row", 7, "int"), ("item", 30, "text"), ("figure", 14, "text"),
    ("currency", 8, "text"), ("amount", 12, "rate"), ("rate", 10, "plain"), ("run_currency", 8, "text"),
    ("converted", 13, "plain"), ("places", 6, "int"), ("converted_rounded", 13, "money"),
    ("used_as", 50, "text"),
]


CURRENCY_COL = {name: i for i, (name, _w, _k) in enumerate(CURRENCY_COLUMNS)}


# Cost per customer: one row per customer (Shipments customer; blank is "(no customer)"), every
# figure a formula over the Summary rows of the customer's routed shipments.
CUSTOMER_COLUMNS = [
    ("customer", 22, "text"), ("shipments", 9, "int"), ("routed", 7, "int"), ("tonnes", 9, "plain"),
    ("pallets", 8, "plain"), ("tonne_km", 11, "km"), ("total_cost", 12, "money"),
    ("cost_per_tonne", 11, "money"), ("cost_per_pallet", 11, "money"), ("cost_per_shipment", 11, "money"),
    ("co2e_kg", 10, "kg"), ("quoted_price", 12, "money"), ("margin", 12, "money"), ("margin_pct", 9, "pct"),
    ("invoiced", 12, "money"), ("invoice_difference", 12, "money"), ("spellings", 30, "text"),
]


CUSTOMER_COL = {name: i for i, (name, _w, _k) in enumerate(CUSTOMER_COLUMNS)}


# Invoice check: the shipments with an invoiced amount, largest absolute difference first.
INVOICE_COLUMNS = [
    ("shipment_id", 12, "text"), ("customer", 20, "text"), ("vehicle", 14, "text"),
    ("make_or_buy", 8, "text"), ("total_cost", 12, "money"), ("invoiced", 12, "money"),
    ("invoice_difference", 12, "money"), ("difference_pct", 10, "pct"),
]


INVOICE_COL = {name: i for i, (name, _w, _k) in enumerate(INVOICE_COLUMNS)}


HEADER_NOTES = {
    "chosen": "Comparison: the objective the shipment was routed by (its own, the command line's or "
              "Settings objective).",
    "routes": "Comparison: how many different routes (lanes and vehicles) the objectives choose.",
    **{f"{o}_cost_vs_chosen": f"Comparison: {o}_total_cost - the chosen objective's total_cost "
       "(a formula)." for o in OBJECTIVES},
    **{f"{o}_route": f"Comparison: the best route by {o}, depots and vehicle; 'chosen route' when it "
       "is the chosen objective's." for o in OBJECTIVES},
    "km_basis": "stated: from the Lanes sheet; estimated: straight line x detour_factor.",
    "hours_basis": "stated: from the Lanes sheet; estimated: km / default_speed_kmh.",
    "vehicles": "Legs: vehicles the load needs alone = the most of ceil(weight_t / payload_t), "
                "ceil(pallets / pallet_places) and ceil(volume / the card's volume_m3). Vehicle runs: "
                "the vehicles its loads are packed into (first-fit decreasing).",
    "break_hours": "Driving-time breaks on this leg (driving_rules; planning estimate).",
    "rest_hours": "Daily rests on this leg (driving_rules; planning estimate).",
    "paid_stop_hours": "Break and rest hours charged at per_hour (settings break_hours_paid, "
                       "rest_hours_paid).",
    "elapsed_hours": "drive_hours + break_hours + rest_hours + handling_hours",
    "km_cost": "ROUND(vehicles x distance_km x per_km)",
    "hour_cost": "ROUND(vehicles x drive_hours x per_hour)",
    "toll_cost": "ROUND(vehicles x toll)",
    "toll": "Toll per vehicle of the rate card's toll_class on this lane (light: toll_light, blank = 0, "
            "the usual van exemption; medium: toll_medium, blank = toll; heavy: toll).",
    "toll_class": "light (up to 3.5 t), medium (to 12 t) or heavy: the rate card's, or from its "
                  "tare_t + payload_t.",
    "fixed_cost": "ROUND(vehicles x fixed cost per vehicle)",
    "fuel_surcharge": "ROUND(vehicles x km x fuel_l_per_100km / 100 x (fuel_price - fuel_included_at)); "
                      "0 without a fuel price or fuel_included_at.",
    "stop_cost": "Driver time at driving-time breaks and daily rests (not an extra-drop or "
                 "stop-off fee): ROUND(vehicles x paid_stop_hours x per_hour).",
    "handling_start_cost": "ROUND(vehicles x handling where a vehicle run starts: the origin, or a "
                           "hub, terminal or port where the shipment changes vehicle).",
    "handling_end_cost": "ROUND(vehicles x handling at to_depot) where the vehicle run ends: the "
                         "destination, or a hub, terminal or port where the shipment changes "
                         "vehicle. Nothing where a vehicle drives through a hub.",
    "trip_cost": "ROUND(vehicles x per_trip) on the first leg of each vehicle run.",
    "leg_cost": "Sum of the leg's cost components.",
    "co2e_basis": "fuel: from the rate card's fuel figures; default intensity: tonnes x km x a "
                  "published g CO2e per tonne-km for the mode (see the Run sheet).",
    "co2e_kg": "Well-to-wheel CO2e (ISO 14083 basis). fuel: vehicles x km x fuel_used_l_per_100km / "
               "100 x wtw_co2e_kg_per_litre; default intensity: weight_t x km x intensity_g_per_tkm / "
               "1000. Planning estimate, not compliance advice.",
    "co2e_ttw_kg": "Tank-to-wheel part of co2e_kg (burning only): co2e_kg_per_litre in place of the "
                   "WTW factor, or the mode's TTW intensity. Planning estimate.",
    "co2e_g_per_tkm": "co2e_kg x 1000 / tonne_km (well-to-wheel g CO2e per tonne-km).",
    "load_factor": "MIN(1, weight_t / vehicles / payload_t): how full each vehicle is by weight.",
    "fuel_used_l_per_100km": "Fuel use per vehicle at this load: fuel_empty_l_per_100km + "
                             "(fuel_l_per_100km - fuel_empty_l_per_100km) x load_factor, or "
                             "fuel_l_per_100km without an empty figure; 0 without fuel figures.",
    "wtw_co2e_kg_per_litre": "Well-to-wheel factor used: the rate card's, or co2e_kg_per_litre + "
                             "the well-to-tank of diesel (see the Run sheet).",
    "intensity_g_per_tkm": "Default well-to-wheel intensity of the mode (default intensity basis; "
                           "source on the Run sheet).",
    "ttw_intensity_g_per_tkm": "Default tank-to-wheel intensity of the mode (default intensity basis).",
    "subtotal": "Sum of the shipment's leg_cost on the Legs sheet (a scenario's: on Scenario legs).",
    "min_charge": "Largest min_charge of the rate cards the route uses.",
    "min_charge_uplift": "MAX(0, min_charge - subtotal)",
    "total_cost": "allocated_cost + empty_return_cost, plus min_charge_uplift when the shipment shares "
                  "no vehicle (travels_with blank), plus carrier_parts_cost. With consolidate = no: "
                  "standalone_cost. Bought whole from a carrier: buy_cost.",
    "carrier_parts_cost": "Parts of the route bought from carriers (collection to a hub, delivery from "
                          "one; the rest on own vehicles): the sum of their Carrier charges rows "
                          "(part collection or delivery). Blank: none.",
    "source": "Currency conversion: Rates (a rate card's money field) or Tariffs (a carrier's price for "
              "one consignment, its Carrier charges row).",
    "input_row": "The row of the input sheet (Rates or Tariffs) the figure comes from.",
    "figure": "Which figure: a rate card's per_km, per_hour, per_trip, min_charge or fuel_included_at; "
              "a tariff's price (of one consignment, Carrier charges price).",
    "amount": "The figure in its own currency, as given (a tariff price: its Carrier charges price).",
    "run_currency": "The currency the run reports in (Settings currency).",
    "converted": "amount x rate, in the run's currency, unrounded: what the run prices with for a rate "
                 "card figure (each amount computed from it is rounded, e.g. km_cost).",
    "places": "Decimal places of the run's currency (ISO 4217 minor unit: JPY 0, EUR 2, KWD 3).",
    "converted_rounded": "ROUND(converted, places): the figure in the run's currency's minor unit; for "
                         "a tariff price, the charge the run used (Carrier charges charge).",
    "used_as": "How the run uses the converted figure.",
    "part": "whole: the shipment from origin to destination; collection: origin to the first "
            "consolidation hub; delivery: the last hub to the destination (the rest on own vehicles).",
    "run_id": "The vehicle run (Vehicle runs sheet) the leg rides in.",
    "tonne_km": "weight_t x distance_km: the allocation key (ISO 14083 allocates a run's emissions "
                "among its loads by tonne-km; the same key shares its cost).",
    "cost_share": "The leg's share of its run's run_cost: ROUND(run_cost x tonne_km / run tonne_km) "
                  "+ share_adjust. With consolidate = no (one load per run) it is the leg_cost.",
    "share_adjust": "Largest-remainder rounding (so a run's shares add up to its run_cost to the cent) "
                    "and, where a share would exceed the leg's own cost, the amount moved to the "
                    "other loads of the run (see the shipment's note).",
    "co2e_share": "The leg's share of its run's co2e_kg, by tonne-km. Planning estimate.",
    "standalone_cost": "subtotal + min_charge_uplift + empty_return_alone + carrier_parts_cost: the "
                       "route with vehicles of its own.",
    "empty_return_alone": "Settings return_empty = yes: what bringing its own vehicles back empty "
                          "would cost (the cheapest way back with the same rate card; no handling).",
    "empty_return_cost": "Settings return_empty = yes: its share of the empty returns (Vehicle runs rows "
                         "'empty return for ...') of the vehicles it rode in, by the tonne-km of its "
                         "stretch, never more than its own return alone.",
    "allocated_cost": "Sum of the shipment's cost_share on the Legs sheet: its share of the vehicle "
                      "runs it rides in.",
    "saving": "standalone_cost - total_cost: what sharing vehicles saves.",
    "travels_with": "Shipments that share a vehicle run with this one (blank: none); past ten, the "
                    "first ten in input order and how many more (Vehicle runs lists each run's loads).",
    "late_hours": "Hours the shipment arrives after the end of its due_date, leaving at the start "
                  "of its ready_date (0: on time; blank: no due_date).",
    "loads": "Shipments carried on the run.",
    "capacity_t": "Lane usage: vehicle_trips x payload_t of their rate cards, over the lane's runs.",
    "runs": "Lane usage: vehicle runs on the lane (a day, a direction, a rate card each).",
    "fill_weight": "tonnes / (vehicles x payload_t).",
    "fill_pallets": "pallets / (vehicles x pallet_places); blank when the card gives no pallet places.",
    "fill_volume": "volume_m3 / (vehicles x capacity_m3); blank when the card gives no volume.",
    "run_cost": "Sum of the run's cost components for its vehicles; shared among its loads by tonne-km.",
    "scenario": "The what-if scenario (Scenarios sheet of the input) these rows cost; the base case is on "
                "Summary and Legs. Filter on it to see one scenario.",
    "base_total_cost": "The shipment's total_cost on the Summary sheet (the input as given).",
    "delta_vs_base": "total_cost - base_total_cost",
    "route_vs_base": "same or changed: the scenario's route against the Summary's.",
    "chargeable_kg": "MAX(weight_t x 1000, volume_m3 x volumetric_kg_per_m3, loading_metres x "
                     "kg_per_loading_metre) (Settings): the weight a carrier tariff charges, kg.",
    "make_cost": "On own vehicles: the shipment's total_cost when it rides the own fleet; when bought, "
                 "what its own route alone would cost (blank: no own route).",
    "buy_cost": "The cheapest carrier's charge in the run's currency (Carrier charges sheet); blank when "
                "no tariff fits.",
    "make_or_buy": "make: own vehicles; buy: the carrier; part: the collection and/or delivery bought, "
                   "the trunk on own vehicles (the cheapest for the week's cost: the planner weighs "
                   "carrier prices against what the load adds to the own vehicle runs).",
    "quoted_price": "What the customer pays for the shipment (Shipments quoted_price): revenue.",
    "margin": "Summary: quoted_price - total_cost. Cost per customer: the sum over the customer's "
              "shipments with a quoted_price.",
    "margin_pct": "margin / quoted_price.",
    "invoiced": "The amount the shipment was invoiced at (Shipments invoiced).",
    "invoice_difference": "invoiced - total_cost: positive when invoiced more than the computed cost.",
    "difference_pct": "invoice_difference / total_cost (blank when total_cost is 0).",
    "cost_per_tonne": "total_cost / tonnes (routed shipments).",
    "cost_per_pallet": "total_cost / pallets (blank when the shipments give no pallets).",
    "cost_per_shipment": "total_cost / routed.",
    "spellings": "The names grouped as this customer when typed more than one way: a spreadsheet "
                 "compares text without regard to case, so Acme and ACME are one customer (the first "
                 "spelling is shown in customer).",
    "used": "yes: the shipment (or the part) is bought from this carrier; no: priced for comparison only.",
    "charged_kg": "chargeable_kg rounded up to a multiple of weight_step_kg (blank step: unchanged); "
                  "the band holds min_kg <= charged_kg < max_kg.",
    "freight": "ROUND(charged_kg / 100 x price_per_100kg), in the tariff's currency.",
    "pallet_charge": "ROUND(pallets x price_per_pallet), in the tariff's currency.",
    "price": "ROUND(MAX(min_charge, freight) + fuel_surcharge + price_per_consignment + pallet_charge), "
             "in the tariff's currency.",
    "fuel_surcharge_pct": "The carrier's fuel band (Fuel surcharges sheet) holding Settings "
                          "fuel_price_per_litre; 0 when none does.",
    "rate": "Units of the run's currency per unit of the row's currency (Currencies sheet; 1 when the "
            "same).",
    "charge": "ROUND(price x rate) in the run's currency: what the shipment costs when bought.",
    "status": "routed; no_route (no usable lanes connect origin and destination; see note); "
              "rejected (nothing to route).",
}


# Comparison: one row per shipment; per objective (costing.contract.inputs.OBJECTIVES, in that
# order) the figures of its best route, side by side
COMPARISON_FIGURES = [
    ("total_cost", 12, "money"), ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"),
    ("co2e_kg", 10, "kg"), ("cost_vs_chosen", 12, "money"), ("route", 40, "text"),
]
COMPARISON_COLUMNS = [("shipment_id", 12, "text"), ("chosen", 10, "text"), ("routes", 7, "int")] + [
    (f"{objective}_{name}", width, kind) for objective in OBJECTIVES
    for name, width, kind in COMPARISON_FIGURES]


TRADEOFF_COLUMNS = [
    ("shipment_id", 12, "text"), ("option", 7, "int"), ("total_cost", 12, "money"),
    ("hours", 9, "hours"), ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"),
    ("co2e_kg", 10, "kg"), ("pay_more", 11, "money"), ("hours_sooner", 11, "hours"),
    ("read_out", 46, "text"), ("vehicle", 14, "text"), ("route", 48, "text"), ("note", 30, "text"),
]


LANE_COLUMNS = [
    ("lane_id", 9, "text"), ("from_depot", 11, "text"), ("to_depot", 11, "text"), ("mode", 9, "text"),
    ("runs", 6, "int"), ("legs", 6, "int"), ("tonnes", 10, "km"), ("vehicle_trips", 10, "int"),
    ("vehicle_km", 11, "km"), ("capacity_t", 10, "km"), ("fill_weight", 9, "pct"), ("cost", 12, "money"),
    ("share_of_cost", 10, "plain"),
]


SCENARIO_COMPONENTS = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                       "handling_cost", "trip_cost", "min_charge_uplift", "empty_return_alone",
                       "consolidation_saving"]


# Scenario legs: every scenario's legs on one long sheet, keyed by the scenario's name in a first
# column, then the Legs columns with the same formulas (costing.sheets.legs.write_legs' `key`).
SCENARIO_KEY = "scenario"
SCENARIO_LEG_COLUMNS = [(SCENARIO_KEY, 14, "text"), *LEG_COLUMNS]

# Scenario vehicle runs: every scenario's vehicle runs, keyed by the scenario's name in a first
# column, then the Vehicle runs columns with the same formulas.
SCENARIO_RUN_COLUMNS = [(SCENARIO_KEY, 14, "text"), *RUN_COLUMNS]

# Scenario shipments: one row per scenario and shipment, its totals summed from its Scenario legs
# rows by the Summary's formulas (subtotal, min_charge_uplift, standalone_cost, allocated_cost,
# total_cost, saving), against the base case (its Summary total_cost, the difference, and whether
# the route is the same or changed).
SCENARIO_SHIPMENT_COLUMNS = [
    (SCENARIO_KEY, 14, "text"), ("shipment_id", 12, "text"), ("status", 9, "text"),
    ("origin", 10, "text"), ("destination", 11, "text"), ("vehicle", 12, "text"), ("vehicles", 8, "int"),
    ("legs", 6, "int"), ("distance_km", 11, "km"), ("subtotal", 12, "money"), ("min_charge", 10, "money"),
    ("min_charge_uplift", 11, "money"), ("empty_return_alone", 12, "money"), ("standalone_cost", 12, "money"),
    ("allocated_cost", 12, "money"), ("empty_return_cost", 12, "money"), ("carrier_parts_cost", 12, "money"),
    ("total_cost", 12, "money"), ("saving", 11, "money"), ("travels_with", 16, "text"),
    ("base_total_cost", 12, "money"),
    ("delta_vs_base", 12, "money"), ("route_vs_base", 9, "text"), ("co2e_kg", 10, "kg"),
    ("route", 40, "text"), ("note", 60, "text"),
]

# Scenario comparison: the header of the scenario totals (one row per scenario, the base first);
# what a reader needs first (the change, the total and the difference) before the components.
# (What each scenario changes is listed below the totals, one change a row.)
SCENARIO_TOTAL_COLUMNS = (["scenario", "routed", "rerouted", "total_cost", "delta_vs_base", "delta_pct",
                           "co2e_kg"] + SCENARIO_COMPONENTS)



# --- costing compare OLD NEW -o DIFF: the comparison workbook ----------------------------------
# Sheets, in order. Changes and Overview list what changed per shipment; Bridge walks from the
# OLD total to the NEW total one cause at a time (costing.compare.bridge), Bridge shipments holds
# each shipment's share of every step, the rows the Bridge formulas add up.
CHANGES = "Changes"
OVERVIEW = "Overview"
BRIDGE = "Bridge"
BRIDGE_SHIPMENTS = "Bridge shipments"
COMPARE_SHEETS = (CHANGES, OVERVIEW, BRIDGE, BRIDGE_SHIPMENTS)

# The bridge's steps, in their fixed order (a decomposition depends on its order): (key, label on
# the chart, what the step holds). The key heads the step's column on Bridge shipments.
BRIDGE_STEPS = (
    ("start", "OLD total", "Sum of total_cost of the OLD run's shipments."),
    ("removed", "Removed", "Shipments in OLD only: minus their OLD cost."),
    ("added", "Added", "Shipments in NEW only: plus their NEW cost."),
    ("route_status", "Route lost / found",
     "Shipments routed in one run only (e.g. a closed lane left no route): NEW cost - OLD cost."),
    ("rates", "Rates", "Old routes priced at the NEW rate cards, lane charges, handling and settings "
                       "(OLD fuel price), minus their OLD cost."),
    ("fuel", "Fuel price", "Old routes at the NEW fuel price, minus the same at the OLD fuel price."),
    ("load", "Load", "Old routes with the NEW shipment weights, minus the same with the OLD weights."),
    ("reroute", "Re-routing", "Shipments on other lanes: NEW cost minus their old route at NEW rates "
                              "and weights."),
    ("vehicle", "Vehicle / carrier", "Same lanes, another vehicle or rate card: NEW cost minus the "
                                     "old route at NEW rates and weights."),
    ("not_separated", "Not separated", "Changes of shipments in both runs whose causes could not be "
                                       "separated (see the note on the step)."),
    ("consolidation", "Consolidation", "Change in what shared vehicles save: (NEW cost - NEW "
                                       "stand-alone) - (OLD cost - OLD stand-alone)."),
    ("end", "NEW total", "Sum of total_cost of the NEW run's shipments."),
)

# Bridge sheet table: (header, width, kind); the bar_ columns feed the chart (invisible base,
# increase, decrease, totals).
BRIDGE_COLUMNS = [
    ("step", 14, "text"), ("label", 18, "text"), ("amount", 14, "money"), ("running_total", 14, "money"),
    ("shipments", 9, "int"), ("what_it_holds", 60, "text"), ("note", 40, "text"),
    ("bar_base", 12, "money"), ("bar_increase", 12, "money"), ("bar_decrease", 12, "money"),
    ("bar_total", 12, "money"),
]
# Bridge shipments: one row per shipment; one money column per step between the totals (its key).
BRIDGE_SHIPMENT_COLUMNS = (
    [("shipment_id", 12, "text"), ("old_total_cost", 13, "money")]
    + [(key, 12, "money") for key, _l, _m in BRIDGE_STEPS[1:-1]]
    + [("new_total_cost", 13, "money"), ("check", 9, "money"),
       ("old_route_new_rates", 14, "money"), ("old_route_new_fuel", 14, "money"),
       ("old_route_new_load", 14, "money"), ("what_changed", 50, "text")]
)
