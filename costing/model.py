"""Frozen records that flow through the pipeline. No I/O here."""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from functools import cached_property

ERROR = "error"
WARNING = "warning"
INFO = "info"


@dataclass(frozen=True)
class Problem:
    severity: str  # error | warning | info
    sheet: str
    cell: str  # e.g. "D14", or "" for a whole sheet
    message: str
    fix: str

    @property
    def where(self) -> str:
        """``Sheet!Cell`` of the problem (the sheet alone, or ``workbook`` when it is the file)."""
        if not self.sheet:
            return "workbook"
        sheet = f"'{self.sheet}'" if (" " in self.sheet or "-" in self.sheet) else self.sheet
        return f"{sheet}!{self.cell}" if self.cell else sheet

    def __str__(self) -> str:
        return f"{self.where}: {self.message} ({self.fix})"


@dataclass(frozen=True)
class Depot:
    depot_id: str
    name: str
    latitude: float | None
    longitude: float | None
    kind: str = "depot"
    handling_cost: float = 0.0
    handling_hours: float = 0.0
    row: int = 0


@dataclass(frozen=True)
class Lane:
    lane_id: str
    from_depot: str
    to_depot: str
    mode: str
    distance_km: float | None
    drive_hours: float | None
    toll: float = 0.0
    fixed_cost: float = 0.0
    two_way: bool = True
    max_weight_t: float | None = None
    hazmat_allowed: bool = True
    open: bool = True
    row: int = 0
    toll_medium: float | None = None  # toll of a medium vehicle (over 3.5 t to 12 t); None: toll
    toll_light: float | None = None  # toll of a light vehicle (up to 3.5 t); None: 0 (exempt)
    tunnel_category: str | None = None  # ADR tunnel category A to E; None: no tunnel


# the money fields of a rate card: converted into the run's currency when given in another
RATE_CARD_MONEY_FIELDS = ("per_km", "per_hour", "per_trip", "min_charge", "fuel_included_at")


@dataclass(frozen=True)
class RateCard:
    vehicle: str
    mode: str
    per_km: float
    per_hour: float
    payload_t: float
    per_trip: float = 0.0
    fuel_l_per_100km: float | None = None
    co2e_kg_per_litre: float | None = None
    min_charge: float = 0.0
    row: int = 0
    fuel_included_at: float | None = None  # fuel price per litre the per_km rate includes
    tare_t: float = 0.0  # empty weight of one vehicle, for lane weight limits
    pallet_places: float | None = None  # pallets one vehicle carries (None: no limit)
    volume_m3: float | None = None  # load volume of one vehicle, m3 (None: no limit)
    currency: str | None = None  # the currency the card was given in (None: the run's)
    fx_rate: float = 1.0  # run currency per unit of `currency`: the money fields are converted
    fuel_empty_l_per_100km: float | None = None  # fuel use running empty (then fuel_l_per_100km is laden)
    wtw_co2e_kg_per_litre: float | None = None  # well-to-wheel factor; None: TTW + diesel well-to-tank
    toll_class: str | None = None  # light | medium | heavy; None: from tare_t + payload_t
    given: tuple = ()  # (field, amount) of the money fields as typed in `currency`, before conversion


@dataclass(frozen=True)
class Shipment:
    shipment_id: str
    origin: str
    destination: str
    weight_t: float
    vehicle: str | None = None
    objective: str | None = None
    hazmat: bool = False
    customer: str = ""
    row: int = 0
    ready_date: _dt.date | None = None  # None: the first day of the run
    due_date: _dt.date | None = None
    pallets: float | None = None
    volume_m3: float | None = None
    loading_metres: float | None = None  # metres of trailer floor, for carrier tariffs
    quoted_price: float | None = None  # revenue, run currency
    invoiced: float | None = None  # the invoice to check against the computed cost, run currency
    tunnel_code: str | None = None  # ADR tunnel restriction code, e.g. D/E; implies hazmat


@dataclass(frozen=True)
class Settings:
    currency: str = "EUR"
    objective: str = "cost"
    detour_factor: float = 1.25
    default_speed_kmh: float = 70.0
    value_of_time_per_hour: float = 0.0
    driving_rules: str = "none"
    fuel_price_per_litre: float | None = None
    # driving-time rule numbers; None = the published numbers of driving_rules
    break_after_driving_hours: float | None = None
    break_hours: float | None = None
    daily_driving_hours: float | None = None
    daily_rest_hours: float | None = None
    break_hours_paid: str = "yes"
    rest_hours_paid: str = "no"
    compare_objectives: str = "yes"
    frontier_max_routes: float = 6
    consolidate: str = "yes"
    return_empty: str = "no"
    volumetric_kg_per_m3: float = 333.0  # chargeable kg per m3 (carrier tariffs)
    kg_per_loading_metre: float = 1750.0  # chargeable kg per loading metre (carrier tariffs)
    driving_clock_in_search: str = "yes"
    network_file: str | None = None  # network file, relative to the workbook (costing.network.netfile)


@dataclass(frozen=True)
class Tariff:
    """One carrier tariff row: a weight band from one zone to another (Tariffs sheet)."""

    carrier: str
    from_zone: str
    to_zone: str
    min_kg: float
    max_kg: float | None  # None: no upper end; the band holds min_kg <= kg < max_kg
    price_per_100kg: float
    min_charge: float = 0.0
    currency: str | None = None  # None: the run's currency
    price_per_consignment: float = 0.0
    valid_from: _dt.date | None = None
    valid_to: _dt.date | None = None
    price_per_pallet: float = 0.0
    weight_step_kg: float | None = None
    hazmat_allowed: bool = False
    row: int = 0


@dataclass(frozen=True)
class FuelBand:
    """One band of a carrier's fuel surcharge index (Fuel surcharges sheet)."""

    carrier: str
    fuel_price_from: float
    fuel_price_to: float | None  # None: no upper end; the band holds from <= price < to
    surcharge_pct: float  # per cent of the freight charge
    row: int = 0


@dataclass(frozen=True)
class Model:
    settings: Settings
    depots: tuple[Depot, ...]
    lanes: tuple[Lane, ...]
    rates: tuple[RateCard, ...]
    shipments: tuple[Shipment, ...]
    problems: tuple[Problem, ...] = field(default_factory=tuple)
    # where things are in the input: sheet -> (title in the file, column -> letter)
    layout: dict[str, tuple[str, dict[str, str]]] = field(default_factory=dict)
    scenarios: tuple = ()  # costing.check.scenarios.Scenario, each costed beside the base case
    tariffs: tuple[Tariff, ...] = ()  # carrier tariff rows (Tariffs sheet)
    zones: dict[str, str] = field(default_factory=dict)  # depot_id -> tariff zone (Zones sheet)
    # ISO 4217 code -> units of the run's currency per unit (Currencies sheet)
    currencies: dict[str, float] = field(default_factory=dict)
    fuel_bands: tuple[FuelBand, ...] = ()  # carriers' fuel surcharge index (Fuel surcharges sheet)

    def zone(self, depot_id: str) -> str:
        """The tariff zone of a depot: its Zones row, else its own id."""
        return self.zones.get(depot_id, depot_id)

    @cached_property
    def tariffs_by_zones(self) -> dict[tuple[str, str], tuple[Tariff, ...]]:
        """(from_zone, to_zone) -> its tariff rows in sheet order, built once per Model (each
        shipment looks up its own zone pair only)."""
        out: dict[tuple[str, str], list[Tariff]] = {}
        for t in self.tariffs:
            out.setdefault((t.from_zone, t.to_zone), []).append(t)
        return {k: tuple(v) for k, v in out.items()}

    def cell(self, sheet: str, column: str, row: int) -> tuple[str, str]:
        """(sheet title, cell address) of a value in the input, for problem reports."""
        title, letters = self.layout.get(sheet, (sheet, {}))
        letter = letters.get(column)
        return title, (f"{letter}{row}" if letter else f"row {row}")

    def depot(self, depot_id: str) -> Depot:
        """The depot with id `depot_id` (KeyError if there is none)."""
        return self.depot_index[depot_id]

    @cached_property
    def depot_index(self) -> dict[str, Depot]:
        """depot id -> depot, built once per Model (looked up for every shipment and leg)."""
        return {d.depot_id: d for d in self.depots}

    @cached_property
    def restricted_lanes(self) -> tuple[Lane, ...]:
        """Lanes with a hazmat ban, a weight limit or a restricted ADR tunnel category: usually few,
        so each shipment's profile looks at these only, not at every lane."""
        return tuple(ln for ln in self.lanes if not ln.hazmat_allowed or ln.max_weight_t is not None
                     or ln.tunnel_category not in (None, "A"))

    def vehicles(self) -> list[str]:
        """Vehicle names of the rate cards, each once, in the order first seen."""
        seen: dict[str, None] = {}
        for r in self.rates:
            seen.setdefault(r.vehicle, None)
        return list(seen)

    def cards_for(self, vehicle: str) -> dict[str, RateCard]:
        """mode -> rate card of one vehicle."""
        return {r.mode: r for r in self.rates if r.vehicle == vehicle}


@dataclass(frozen=True)
class LaneUse:
    """One direction of one open lane, with its resolved figures."""

    lane: Lane
    from_depot: str
    to_depot: str
    reverse: bool
    km: float
    km_estimated: bool
    hours: float
    hours_estimated: bool

    @property
    def key(self) -> str:
        """Edge key in the lane graph: the lane id and ``>`` (as typed) or ``<`` (reverse)."""
        return f"{self.lane.lane_id}{'<' if self.reverse else '>'}"
