"""The workbook contract: every input sheet and column, in one place.

The template writer, the reader, the validator and the README's column reference all
read this table, so a column is added here once and appears everywhere.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field

from costing.objectives import OBJECTIVES  # the one objective table

MODES = ("road", "rail", "sea", "inland_water", "air")
DEPOT_KINDS = ("depot", "hub", "terminal", "customer", "port")
YES_NO = ("yes", "no")
DRIVING_RULES = ("none", "eu_561_2006", "us_49cfr395")
# Toll classes of a rate card: light up to 3.5 t maximum weight, medium over 3.5 t to 12 t, heavy
# over 12 t (the 3.5 t line of EU road charging, Directive 1999/62/EC as amended; from memory)
TOLL_CLASSES = ("light", "medium", "heavy")
# ADR tunnel categories, A (no restriction) to E (most restrictive); ADR 1.9.5 [V-2ND]
TUNNEL_CATEGORIES = ("A", "B", "C", "D", "E")


@dataclass(frozen=True)
class Column:
    name: str
    kind: str  # text | id | number | yesno | choice | depot | vehicle
    required: bool = False
    unit: str = ""
    note: str = ""
    choices: tuple[str, ...] = ()
    default: object = None
    # numbers: inclusive bounds; None = unbounded
    minimum: float | None = None
    maximum: float | None = None
    integer: bool = False
    width: float = 14
    # required header whose cells may be left blank (with a warning)
    allow_blank: bool = False

    @property
    def key(self) -> str:
        """The column's contract name (what its header normalises to)."""
        return self.name


@dataclass(frozen=True)
class SheetSpec:
    name: str
    columns: tuple[Column, ...]
    required: bool = True
    note: str = ""
    id_column: str | None = None
    extra: dict = field(default_factory=dict)

    def column(self, name: str) -> Column:
        """The column spec called `name` (KeyError if the sheet has none)."""
        for c in self.columns:
            if c.name == name:
                return c
        raise KeyError(name)


@dataclass(frozen=True)
class SettingSpec:
    name: str
    kind: str  # number | choice | text (kept as typed; currency upper-cased)
    default: object
    note: str
    choices: tuple[str, ...] = ()
    minimum: float | None = None
    maximum: float | None = None


SETTINGS: tuple[SettingSpec, ...] = (
    SettingSpec("currency", "text", "EUR",
                "ISO 4217 three-letter code of every money figure in this workbook, e.g. EUR, GBP, "
                "USD, JPY. Sets the rounding: to the currency's minor unit."),
    SettingSpec("objective", "choice", "cost",
                "What the route search minimises when a shipment does not say: cost, time (hours), "
                "distance (km), emissions (kg CO2e) or blended (cost + value_of_time_per_hour x "
                "hours).", choices=OBJECTIVES),
    SettingSpec("detour_factor", "number", 1.25,
                "Road km per straight-line km, used when a lane's distance_km is blank. "
                "Common practice: 1.2 to 1.3 between cities.", minimum=1.0, maximum=5.0),
    SettingSpec("default_speed_kmh", "number", 70.0,
                "Average speed in km/h, used when a lane's drive_hours is blank "
                "(hours = km / speed).", minimum=1.0, maximum=1000.0),
    SettingSpec("value_of_time_per_hour", "number", 0.0,
                "Money per hour of transit time: the blended objective minimises cost + this x "
                "hours (currency per hour).", minimum=0.0),
    SettingSpec("driving_rules", "choice", "none",
                "Driving-time rules applied to road legs: none, eu_561_2006 or us_49cfr395. "
                "Planning estimate only, not compliance advice.", choices=DRIVING_RULES),
    SettingSpec("fuel_price_per_litre", "number", None,
                "Fuel price per litre in the workbook currency. With a rate card's fuel_included_at "
                "it gives a fuel surcharge per km (blank: no surcharge).", minimum=0.0),
    SettingSpec("break_after_driving_hours", "number", None,
                "Driving hours after which a break is due. Blank: from driving_rules "
                "(eu_561_2006: 4.5; us_49cfr395: 8).", minimum=0.1, maximum=24.0),
    SettingSpec("break_hours", "number", None,
                "Length of that break in hours. Blank: from driving_rules (0.75; 0.5).",
                minimum=0.0, maximum=24.0),
    SettingSpec("daily_driving_hours", "number", None,
                "Most driving hours before a daily rest. Blank: from driving_rules (9; 11).",
                minimum=0.5, maximum=24.0),
    SettingSpec("daily_rest_hours", "number", None,
                "Length of the daily rest in hours. Blank: from driving_rules (11; 10).",
                minimum=0.0, maximum=72.0),
    SettingSpec("break_hours_paid", "choice", "yes",
                "yes: break hours are charged at the rate card's per_hour.", choices=YES_NO),
    SettingSpec("rest_hours_paid", "choice", "no",
                "yes: daily rest hours are charged at the rate card's per_hour.", choices=YES_NO),
    SettingSpec("compare_objectives", "choice", "yes",
                "yes: the Comparison sheet shows each shipment's best route under every objective "
                "(five searches per shipment; say no for very large runs).", choices=YES_NO),
    SettingSpec("frontier_max_routes", "number", 6,
                "Most cost-time trade-off routes listed per shipment on the Trade-offs sheet; "
                "0 leaves the sheet out.", minimum=0, maximum=100),
    SettingSpec("consolidate", "choice", "yes",
                "yes: shipments ready on the same day share vehicles on the lanes they have in "
                "common, up to payload, pallet places and volume, and each pays a tonne-km share of "
                "the vehicle runs it rides in (Vehicle runs sheet). no: every shipment has vehicles "
                "of its own.", choices=YES_NO),
    SettingSpec("return_empty", "choice", "no",
                "yes: vehicles drive back empty from where their loads leave them to where they were "
                "loaded, over the cheapest way back with the same rate card, and the shipments that "
                "sent them share that cost by tonne-km (rows marked empty on Vehicle runs).",
                choices=YES_NO),
    SettingSpec("volumetric_kg_per_m3", "number", 333.0,
                "Chargeable kg per m3 of a shipment's volume_m3, for carrier tariffs: chargeable "
                "weight = the most of the actual kg, volume_m3 x this and loading_metres x "
                "kg_per_loading_metre. Common practice in road groupage: 333 (1 m3 = 333 kg, "
                "'measured three times').", minimum=0.0, maximum=10000.0),
    SettingSpec("kg_per_loading_metre", "number", 1750.0,
                "Chargeable kg per loading metre (one metre of trailer floor, full width), for "
                "carrier tariffs. Common practice in road groupage: 1,750 (carriers use 1,750 to "
                "2,000; from memory).", minimum=0.0, maximum=100000.0),
    SettingSpec("driving_clock_in_search", "choice", "yes",
                "yes: with driving_rules, the route search carries the driving clock, so the time, "
                "cost and blended objectives choose routes with their breaks and rests (and their "
                "pay); no: routes are chosen on driving hours and the stops added afterwards. "
                "Planning estimate, not compliance advice.", choices=YES_NO),
    SettingSpec("network_file", "text", None,
                "A compact network file (.npz) whose depots and lanes are added to those of the "
                "Depots and Lanes sheets, for road graphs too large for rows; `costing import-network "
                "--compact` writes it and this setting. Path relative to this workbook's folder. "
                "Blank: the sheets alone."),
)

SETTINGS_BY_NAME = {s.name: s for s in SETTINGS}

SHEETS: tuple[SheetSpec, ...] = (
    SheetSpec(
        "Settings",
        (
            Column("setting", "text", True, note="Name of a setting (one per row). Known settings are "
                   "listed below the header; a blank value means the default.", width=26),
            Column("value", "text", False, note="Value of the setting. Blank: the default is used.",
                   width=16),
            Column("note", "text", False, note="What the setting means (for you; not read).", width=90),
        ),
        required=False,
        note="Run settings. Leave a value blank for its default.",
    ),
    SheetSpec(
        "Depots",
        (
            Column("depot_id", "id", True, note="Short unique code of the depot, e.g. DEP-01. "
                   "Lanes and shipments refer to it.", width=12),
            Column("name", "text", False, note="Readable name of the depot.", width=26),
            Column("latitude", "number", True, "degrees", "Latitude in decimal degrees, WGS84, "
                   "-90 to 90 (north positive). Blank: no straight-line estimates or search bound "
                   "for this depot.", minimum=-90.0, maximum=90.0, width=11, allow_blank=True),
            Column("longitude", "number", True, "degrees", "Longitude in decimal degrees, WGS84, "
                   "-180 to 180 (east positive).", minimum=-180.0, maximum=180.0, width=11,
                   allow_blank=True),
            Column("kind", "choice", False, note="depot, hub, terminal, customer or port. "
                   "A load may change vehicle at a hub (cross-dock, same mode) and change mode at a "
                   "terminal or port; a vehicle driving through pays no handling. Blank: depot.",
                   choices=DEPOT_KINDS, default="depot", width=10),
            Column("handling_cost", "number", False, "currency per vehicle", "Cost of handling one "
                   "vehicle here (loading or unloading), charged per vehicle where a route starts "
                   "and ends and, at a change of vehicle, for the vehicles arriving and those "
                   "leaving. Blank: 0.", default=0.0, minimum=0.0, width=14),
            Column("handling_hours", "number", False, "hours", "Hours one vehicle spends being "
                   "loaded or unloaded here (both at a change of vehicle). Blank: 0.", default=0.0,
                   minimum=0.0, maximum=240.0, width=14),
        ),
        id_column="depot_id",
        note="Places: depots, hubs, terminals, ports and customers.",
    ),
    SheetSpec(
        "Lanes",
        (
            Column("lane_id", "id", True, note="Short unique code of the lane, e.g. L-001.", width=10),
            Column("from_depot", "depot", True, note="depot_id where the lane starts.", width=12),
            Column("to_depot", "depot", True, note="depot_id where the lane ends.", width=12),
            Column("mode", "choice", True, note="road, rail, sea, inland_water or air.",
                   choices=MODES, width=12),
            Column("distance_km", "number", False, "km", "Length of the lane in km. Blank: "
                   "straight-line km x detour_factor (marked as estimated).", minimum=0.0,
                   maximum=25000.0, width=12),
            Column("drive_hours", "number", False, "hours", "Moving time of one vehicle on the "
                   "lane, in hours. Blank: km / default_speed_kmh (marked as estimated).",
                   minimum=0.0, maximum=1000.0, width=12),
            Column("toll", "number", False, "currency per vehicle", "Toll or access charge per "
                   "vehicle for one pass of the lane. Blank: 0.", default=0.0, minimum=0.0, width=10),
            Column("fixed_cost", "number", False, "currency per vehicle", "Other fixed cost per "
                   "vehicle for one pass of the lane (ferry ticket, terminal fee). Blank: 0.",
                   default=0.0, minimum=0.0, width=11),
            Column("two_way", "yesno", False, note="yes: the lane can be used in both directions "
                   "with the same figures. Blank: yes.", choices=YES_NO, default=True, width=9),
            Column("max_weight_t", "number", False, "tonnes", "Heaviest loaded vehicle allowed, in "
                   "tonnes. Blank: no limit.", minimum=0.0, width=12),
            Column("hazmat_allowed", "yesno", False, note="no: dangerous goods may not use this "
                   "lane. Blank: yes.", choices=YES_NO, default=True, width=14),
            Column("open", "yesno", False, note="no: the lane is closed and never used. Blank: yes.",
                   choices=YES_NO, default=True, width=8),
            Column("toll_medium", "number", False, "currency per vehicle", "Toll per vehicle of "
                   "toll_class medium (over 3.5 t to 12 t). Blank: the toll.", minimum=0.0,
                   width=11),
            Column("toll_light", "number", False, "currency per vehicle", "Toll per vehicle of "
                   "toll_class light (up to 3.5 t). Blank: 0, the usual exemption of vans from "
                   "truck tolls (common practice, no source; check the road's own rules).",
                   minimum=0.0, width=10),
            Column("tunnel_category", "choice", False, note="ADR tunnel category of a tunnel on the "
                   "lane, A (no restriction) to E (most restrictive): a shipment whose "
                   "tunnel_code forbids it does not use the lane. Blank: no tunnel. "
                   "hazmat_allowed no still closes the lane to all dangerous goods.",
                   choices=TUNNEL_CATEGORIES, width=10),
        ),
        id_column="lane_id",
        note="Legs that vehicles can run between two depots.",
    ),
    SheetSpec(
        "Rates",
        (
            Column("vehicle", "text", True, note="Name of the vehicle type, e.g. artic_40t. "
                   "One row per vehicle and mode.", width=14),
            Column("mode", "choice", True, note="Mode of the lanes this rate card prices.",
                   choices=MODES, width=12),
            Column("per_km", "number", True, "currency per km", "Cost per vehicle-km.", minimum=0.0,
                   width=10),
            Column("per_hour", "number", True, "currency per hour", "Cost per vehicle-hour of "
                   "driving (driver, vehicle time).", minimum=0.0, width=10),
            Column("per_trip", "number", False, "currency per vehicle", "Charge once per vehicle "
                   "per shipment (dispatch, paperwork). Blank: 0.", default=0.0, minimum=0.0, width=10),
            Column("payload_t", "number", True, "tonnes", "Most a vehicle may carry, in tonnes. "
                   "A heavier shipment is split over several vehicles.", minimum=0.0, width=10),
            Column("fuel_l_per_100km", "number", False, "litres per 100 km", "Fuel use of one "
                   "vehicle (fully laden when fuel_empty_l_per_100km is given). Blank: emissions use "
                   "the mode's default intensity (see the Run sheet).", minimum=0.0,
                   maximum=10000.0, width=14),
            Column("co2e_kg_per_litre", "number", False, "kg CO2e per litre", "Emission factor of "
                   "the fuel, tank-to-wheel (burning only), e.g. diesel about 2.5 to 2.7.", minimum=0.0,
                   maximum=10.0, width=14),
            Column("min_charge", "number", False, "currency per shipment", "Least a shipment "
                   "using this card is charged. Blank: 0.", default=0.0, minimum=0.0, width=11),
            Column("fuel_included_at", "number", False, "currency per litre", "Fuel price per litre "
                   "that per_km already includes. With the setting fuel_price_per_litre it gives a "
                   "fuel surcharge (or rebate) per km. Blank: no surcharge.", minimum=0.0,
                   maximum=100.0, width=14),
            Column("tare_t", "number", False, "tonnes", "Empty weight of one vehicle, added to its "
                   "load when checking a lane's max_weight_t. Blank: 0 (load only).", default=0.0,
                   minimum=0.0, maximum=1000.0, width=9),
            Column("pallet_places", "number", False, "pallets", "Pallet places (floor positions) of "
                   "one vehicle, e.g. 33 for a 13.6 m trailer with euro pallets. Blank: no pallet limit.",
                   minimum=0.0, maximum=10000.0, width=12),
            Column("volume_m3", "number", False, "m3", "Load volume of one vehicle in cubic metres. "
                   "Blank: no volume limit.", minimum=0.0, maximum=100000.0, width=10),
            Column("currency", "text", False, note="ISO 4217 code of this card's money figures (per_km, "
                   "per_hour, per_trip, min_charge, fuel_included_at), e.g. USD. They are converted into "
                   "the run's currency at the Currencies sheet's rate. Blank: the run's currency.", width=9),
            Column("fuel_empty_l_per_100km", "number", False, "litres per 100 km", "Fuel use of one "
                   "vehicle running empty. With it, fuel_l_per_100km is read as fully laden (at "
                   "payload_t) and emissions use the fuel on the straight line between the two at "
                   "each leg's load, as load-dependent published tables do. Blank: "
                   "fuel_l_per_100km at every load. The fuel surcharge always uses fuel_l_per_100km.",
                   minimum=0.0, maximum=10000.0, width=14),
            Column("wtw_co2e_kg_per_litre", "number", False, "kg CO2e per litre", "Well-to-wheel "
                   "emission factor of the fuel (production and burning), e.g. diesel about 3.1 to "
                   "3.3. Blank: co2e_kg_per_litre plus the well-to-tank of diesel (0.62665, UK DESNZ "
                   "2025).", minimum=0.0, maximum=10.0, width=14),
            Column("toll_class", "choice", False, note="light (up to 3.5 t maximum weight), medium "
                   "(over 3.5 t to 12 t) or heavy (over 12 t): which of a lane's tolls the vehicle "
                   "pays (toll_light, toll_medium, toll). Blank: from tare_t + payload_t.",
                   choices=TOLL_CLASSES, width=10),
        ),
        note="Rate cards: what each vehicle costs on each mode.",
    ),
    SheetSpec(
        "Shipments",
        (
            Column("shipment_id", "id", True, note="Unique reference of the shipment.", width=12),
            Column("origin", "depot", True, note="depot_id where the goods are collected.", width=12),
            Column("destination", "depot", True, note="depot_id where the goods are delivered.",
                   width=12),
            Column("weight_t", "number", True, "tonnes", "Weight of the goods in tonnes.",
                   minimum=0.0, maximum=100000.0, width=10),
            Column("vehicle", "vehicle", False, note="Vehicle to use (from Rates). Blank: the "
                   "vehicle that gives the best route under the objective.", width=14),
            Column("objective", "choice", False, note="cost, time, distance, emissions or blended. "
                   "Blank: the objective in Settings.", choices=OBJECTIVES, width=11),
            Column("hazmat", "yesno", False, note="yes: dangerous goods. Blank: no.",
                   choices=YES_NO, default=False, width=9),
            Column("customer", "text", False, note="Customer name, for your reference.", width=20),
            Column("ready_date", "date", False, "date", "Day the goods are ready to leave. Shipments "
                   "ready on the same day may share vehicles. Blank: the first day of the run (the "
                   "earliest ready_date given).", width=12),
            Column("due_date", "date", False, "date", "Last day the goods may arrive (by the end of "
                   "that day). Blank: no deadline. A later arrival is marked late.", width=12),
            Column("pallets", "number", False, "pallets", "Pallet places the goods take. Blank: 0 "
                   "(weight alone decides how many fit in a vehicle).", minimum=0.0,
                   maximum=100000.0, width=9),
            Column("volume_m3", "number", False, "m3", "Volume of the goods in cubic metres. Blank: "
                   "0 (weight alone decides).", minimum=0.0, maximum=1000000.0, width=10),
            Column("loading_metres", "number", False, "m", "Metres of trailer floor (full width) the "
                   "goods take, for carrier tariffs: loading_metres x kg_per_loading_metre counts "
                   "toward the chargeable weight. Blank: 0.", minimum=0.0, maximum=100000.0, width=11),
            Column("quoted_price", "number", False, "currency per shipment", "What the customer pays "
                   "for the shipment (revenue), in the run's currency: gives the margin on Summary and "
                   "Cost per customer. Blank: no margin shown.", minimum=0.0, width=12),
            Column("invoiced", "number", False, "currency per shipment", "What the shipment was "
                   "invoiced at (e.g. by the carrier or the fleet's cost centre), in the run's currency: "
                   "Summary and the Invoice check sheet show the difference from the computed cost. "
                   "Blank: not checked.", minimum=0.0, width=11),
            Column("tunnel_code", "text", False, note="ADR tunnel restriction code of the load "
                   "(Table A, column 15), e.g. D/E: code X keeps it out of tunnels of category X "
                   "to E. Split codes X/Y: X (carriage in tanks) is applied, the safe reading; "
                   "enter Y alone for packages. Codes like B1000C: B. A code implies hazmat yes; "
                   "hazmat yes without a code: kept out of categories B to E. Blank: none.",
                   width=11),
        ),
        id_column="shipment_id",
        note="The shipments to cost.",
    ),
    SheetSpec(
        "Scenarios",
        (
            Column("scenario", "text", True, note="Name of the scenario, e.g. fuel_up_12. Rows with "
                   "the same name form one scenario.", width=18),
            Column("sheet", "text", True, note="Input sheet the change applies to: Settings, Depots, "
                   "Lanes, Rates or Shipments.", width=12),
            Column("key", "text", False, note="Which row: a depot_id, lane_id or shipment_id; for "
                   "Rates a vehicle (all its modes) or vehicle/mode; for Settings the setting name. "
                   "Blank: every row of the sheet.", width=16),
            Column("column", "text", True, note="Column to change, e.g. per_km, toll, open "
                   "(for Settings: value).", width=16),
            Column("change", "text", True, note="+10% or -5% (relative), +12.5 or -3 (added), "
                   "=1.85 or =no (set to).", width=12),
        ),
        required=False,
        note="Optional what-if scenarios: each is costed beside the base case.",
    ),
    SheetSpec(
        "Zones",
        (
            Column("depot_id", "depot", True, note="depot_id from the Depots sheet.", width=12),
            Column("zone", "text", True, note="Tariff zone of the depot, as the carriers' Tariffs rows "
                   "name it, e.g. NL-5 or BE-South. A depot not listed here is its own zone, named by "
                   "its depot_id.", width=14),
        ),
        required=False,
        note="Optional: the carrier tariff zone of each depot.",
    ),
    SheetSpec(
        "Tariffs",
        (
            Column("carrier", "text", True, note="Name of the carrier (the haulier you buy from).",
                   width=16),
            Column("from_zone", "text", True, note="Zone of the origin (Zones sheet), or a depot_id.",
                   width=12),
            Column("to_zone", "text", True, note="Zone of the destination (Zones sheet), or a depot_id.",
                   width=12),
            Column("min_kg", "number", True, "kg", "Lightest chargeable weight of the band: the row "
                   "holds weights from min_kg up to but not including max_kg.", minimum=0.0,
                   maximum=1e7, width=9),
            Column("max_kg", "number", False, "kg", "End of the band (not included). Blank: no upper "
                   "end.", minimum=0.0, maximum=1e7, width=9),
            Column("price_per_100kg", "number", True, "tariff currency per 100 kg", "Freight per 100 "
                   "kg of chargeable weight, pro rata (see weight_step_kg).", minimum=0.0, width=12),
            Column("min_charge", "number", False, "tariff currency per consignment", "Least freight "
                   "charged for one consignment. Blank: 0.", default=0.0, minimum=0.0, width=11),
            Column("currency", "text", False, note="ISO 4217 code of the row's prices, e.g. EUR. Blank: "
                   "the run's currency (Settings).", width=9),
            Column("price_per_consignment", "number", False, "tariff currency per consignment",
                   "Fixed charge per consignment on top of the freight (paperwork, booking). Blank: 0.",
                   default=0.0, minimum=0.0, width=12),
            Column("valid_from", "date", False, "date", "First ready_date the row applies to. Blank: "
                   "no start.", width=11),
            Column("valid_to", "date", False, "date", "Last ready_date the row applies to. Blank: no "
                   "end.", width=11),
            Column("price_per_pallet", "number", False, "tariff currency per pallet", "Charge per "
                   "pallet place (the shipment's pallets) on top of the freight. Blank: 0.",
                   default=0.0, minimum=0.0, width=11),
            Column("weight_step_kg", "number", False, "kg", "The chargeable weight is rounded up to a "
                   "multiple of this before pricing and band look-up, e.g. 100 for 'per started 100 "
                   "kg'. Blank: no rounding (pro rata).", minimum=0.0, maximum=100000.0, width=11),
            Column("hazmat_allowed", "yesno", False, note="yes: the carrier takes dangerous goods on "
                   "this row. Blank: no.", choices=YES_NO, default=False, width=10),
        ),
        required=False,
        note="Optional carrier tariffs: what a carrier charges to take a consignment from one zone "
             "to another, by weight band. Each shipment is priced both ways (own vehicles and the "
             "cheapest carrier) and the cheaper for the week is chosen.",
    ),
    SheetSpec(
        "Currencies",
        (
            Column("currency", "text", True, note="ISO 4217 code of a currency that Rates or Tariffs "
                   "rows use, e.g. USD.", width=9),
            Column("rate", "number", True, "run currency per unit", "Units of the run's currency "
                   "(Settings currency) per one unit of this currency, e.g. 0.92 EUR per USD.",
                   minimum=0.0, width=12),
            Column("date", "date", False, "date", "Day the rate was taken (for your reference; shown "
                   "in the Run sheet).", width=11),
        ),
        required=False,
        note="Optional exchange rates into the run's currency, for Rates and Tariffs rows in another "
             "currency.",
    ),
    SheetSpec(
        "Fuel surcharges",
        (
            Column("carrier", "text", True, note="Carrier (as on the Tariffs sheet) whose fuel surcharge "
                   "this band sets.", width=16),
            Column("fuel_price_from", "number", True, "currency per litre", "Lowest fuel price of the "
                   "band (Settings fuel_price_per_litre, the run's currency): the band holds prices from "
                   "fuel_price_from up to but not including fuel_price_to.", minimum=0.0, maximum=100.0,
                   width=12),
            Column("fuel_price_to", "number", False, "currency per litre", "End of the band (not "
                   "included). Blank: no upper end.", minimum=0.0, maximum=100.0, width=12),
            Column("surcharge_pct", "number", True, "per cent", "Fuel surcharge in per cent of the "
                   "freight charge (the larger of freight and min_charge), e.g. 12.5. Negative: a "
                   "rebate.", minimum=-100.0, maximum=1000.0, width=11),
        ),
        required=False,
        note="Optional fuel surcharge index per carrier: at the fuel price of Settings "
             "fuel_price_per_litre, the band's per cent is added to the carrier's freight charge.",
    ),
)

SHEETS_BY_NAME = {s.name: s for s in SHEETS}


TUNNEL_CODE_FORMAT = "B, C, D or E, a split code such as D/E or C/D, B1000C, or - for none"


def tunnel_letter(code: str | None) -> str | None:
    """The ADR tunnel category letter from which a load with tunnel restriction `code` is kept
    out (that category and every later one, to E), or None for no restriction.

    ADR 8.6 / 1.9.5 ([V-2ND] in ../shared/references.md 8.1): code X forbids tunnels of category X
    to E; a split code X/Y applies X to carriage in tanks and Y to other carriage, and X is the
    letter used here (the safe reading when the sheet does not say which); codes such as B1000C
    switch at a net explosive mass, and their first letter (the stricter) is used.

    Raises
    ------
    ValueError
        `code` is not one of these forms (the message says what is allowed).
    """
    if code is None:
        return None
    c = str(code).strip().upper().replace(" ", "").strip("()")
    if c in ("", "-"):
        return None
    import re

    m = re.fullmatch(r"([BCDE])(?:1000C)?(?:/([BCDE]))?", c)
    if not m:
        raise ValueError(f"tunnel_code {code!r} is not an ADR tunnel restriction code; use "
                         + TUNNEL_CODE_FORMAT)
    return m.group(1)


def tunnel_forbids(letter: str | None, category: str | None) -> bool:
    """Whether a load kept out from category `letter` on may not use a tunnel of `category`
    (category A, or no tunnel, restricts nothing)."""
    if letter is None or category is None or category == "A":
        return False
    return TUNNEL_CATEGORIES.index(category) >= TUNNEL_CATEGORIES.index(letter)


def closest(value: str, known, cutoff: float = 0.6) -> str | None:
    """The one known name most like `value`, for "did you mean ...?" hints; None if none is close.

    Parameters
    ----------
    value : str
        What the user typed (already normalised where the names are).
    known : iterable of str
        The names it may have meant.
    cutoff : float
        Least similarity, 0 to 1 (difflib's ratio); 0.6 unless a list of short codes needs less.
    """
    close = difflib.get_close_matches(value, list(known), n=1, cutoff=cutoff)
    return close[0] if close else None


def did_you_mean(value: str, known, cutoff: float = 0.6) -> str:
    """``"did you mean X? "`` for the closest known name, or ``""``."""
    close = closest(value, known, cutoff)
    return f"did you mean {close}? " if close else ""


def normalise_header(text: object) -> str:
    """`Distance km`, ` distance_KM ` and `distance-km` all become `distance_km`."""
    s = str(text if text is not None else "").strip().lower()
    out = []
    for ch in s:
        if ch.isalnum():
            out.append(ch)
        elif out and out[-1] != "_":
            out.append("_")
    return "".join(out).strip("_")


# Shared by the check stage's cell checks and scenario parsing.
# Numbers the contract leaves unbounded above (money, payloads, weight limits) are refused
# beyond this: no freight figure is that large in any currency, and it keeps every cost the
# tool computes finite and within the 28 digits of decimal rounding.
MAX_PLAUSIBLE_NUMBER = 1e9
# A payload below this (10 kg) is almost always a figure typed in kg instead of tonnes; it
# would also split a shipment over millions of vehicles.
MIN_PAYLOAD_T = 0.01
# Error values a spreadsheet stores in place of a failed formula's result.
SPREADSHEET_ERRORS = ("#NULL!", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#N/A",
                      "#GETTING_DATA", "#SPILL!", "#CALC!", "#FIELD!", "#BLOCKED!", "#BUSY!",
                      "#CONNECT!", "#UNKNOWN!")
