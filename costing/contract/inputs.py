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
                   "Handling is charged at a hub the route passes through. Blank: depot.",
                   choices=DEPOT_KINDS, default="depot", width=10),
            Column("handling_cost", "number", False, "currency per vehicle", "Cost of handling one "
                   "vehicle here (loading, unloading or cross-dock), charged where a route starts, "
                   "ends, or passes through a hub. Blank: 0.", default=0.0, minimum=0.0, width=14),
            Column("handling_hours", "number", False, "hours", "Hours one vehicle spends being "
                   "handled here. Blank: 0.", default=0.0, minimum=0.0, maximum=240.0, width=14),
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
                   "vehicle. Blank: no emissions are computed for this card.", minimum=0.0,
                   maximum=10000.0, width=14),
            Column("co2e_kg_per_litre", "number", False, "kg CO2e per litre", "Emission factor of "
                   "the fuel, e.g. diesel about 2.5 to 2.7 tank-to-wheel.", minimum=0.0,
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
)

SHEETS_BY_NAME = {s.name: s for s in SHEETS}


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
