"""The output contract: the costed workbook's sheets and their columns (name, width in
characters, kind of cell), the Summary columns summed into the TOTAL row, and the notes on
the headers. Plain data: the sheet writers (costing.sheets) and the readers of costed
workbooks (costing.compare, the tests) find columns by these header names, never by position."""

from __future__ import annotations

# The output sheets, in the order they appear. Legs continue on "Legs 2", "Legs 3", ... at the
# spreadsheet's row limit; Scenario comparison, Comparison, Trade-offs, Lane usage, Charts and Map
# appear only when the run has them.
SUMMARY = "Summary"
SCENARIO_COMPARISON = "Scenario comparison"
LEGS = "Legs"
COMPARISON = "Comparison"
TRADE_OFFS = "Trade-offs"
LANE_USAGE = "Lane usage"
CHARTS = "Charts"
MAP = "Map"
PROBLEMS = "Problems"
RUN = "Run"
SHEETS = (SUMMARY, SCENARIO_COMPARISON, LEGS, COMPARISON, TRADE_OFFS, LANE_USAGE, CHARTS, MAP, PROBLEMS, RUN)

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
    ("min_charge", 10, "money"), ("min_charge_uplift", 11, "money"), ("total_cost", 12, "money"),
    ("co2e_kg", 10, "kg"), ("weight_t", 9, "plain"), ("customer", 18, "text"),
    ("route", 40, "text"), ("note", 60, "text"),
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
    "trip_cost": ["trip_cost"], "subtotal": ["leg_cost"], "co2e_kg": ["co2e_kg"],
}

SUMMED.update({"co2e_ttw_kg": ["co2e_ttw_kg"], "tonne_km": ["tonne_km"]})

# Summary column -> (numerator column, denominator column, factor): a ratio of two Summary columns,
# 0 where the denominator is 0 (the TOTAL row takes the ratio of its totals)
RATIOS = {"co2e_g_per_tkm": ("co2e_kg", "tonne_km", 1000)}


HEADER_NOTES = {
    "km_basis": "stated: from the Lanes sheet; estimated: straight line x detour_factor.",
    "hours_basis": "stated: from the Lanes sheet; estimated: km / default_speed_kmh.",
    "vehicles": "Vehicles needed = ceil(weight_t / payload_t of the rate card).",
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
    "tonne_km": "weight_t x distance_km",
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
    "subtotal": "Sum of the shipment's leg_cost on the Legs sheet.",
    "min_charge": "Largest min_charge of the rate cards the route uses.",
    "min_charge_uplift": "MAX(0, min_charge - subtotal)",
    "total_cost": "subtotal + min_charge_uplift",
    "status": "routed; no_route (no usable lanes connect origin and destination; see note); "
              "rejected (nothing to route).",
}


COMPARISON_COLUMNS = [
    ("shipment_id", 12, "text"), ("objective", 10, "text"), ("chosen", 7, "text"), ("status", 9, "text"),
    ("vehicle", 14, "text"), ("legs", 5, "int"), ("total_cost", 12, "money"), ("drive_hours", 10, "hours"),
    ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"), ("co2e_kg", 10, "kg"),
    ("cost_vs_chosen", 12, "money"), ("hours_vs_chosen", 12, "hours"), ("km_vs_chosen", 11, "km"),
    ("co2e_vs_chosen", 12, "kg"), ("route", 48, "text"),
]


TRADEOFF_COLUMNS = [
    ("shipment_id", 12, "text"), ("option", 7, "int"), ("total_cost", 12, "money"),
    ("hours", 9, "hours"), ("elapsed_hours", 10, "hours"), ("distance_km", 11, "km"),
    ("co2e_kg", 10, "kg"), ("pay_more", 11, "money"), ("hours_sooner", 11, "hours"),
    ("read_out", 46, "text"), ("vehicle", 14, "text"), ("route", 48, "text"), ("note", 30, "text"),
]


LANE_COLUMNS = [
    ("lane_id", 9, "text"), ("from_depot", 11, "text"), ("to_depot", 11, "text"), ("mode", 9, "text"),
    ("legs", 6, "int"), ("tonnes", 10, "km"), ("vehicle_trips", 10, "int"), ("vehicle_km", 11, "km"),
    ("cost", 12, "money"), ("share_of_cost", 10, "plain"),
]


SCENARIO_COMPONENTS = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                       "handling_cost", "trip_cost", "min_charge_uplift"]
