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
    network_file: str | None = None  # network file, relative to the workbook (costing.network.netfile)


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
        """Lanes with a hazmat ban or a weight limit: usually few, so each shipment's profile
        looks at these only, not at every lane."""
        return tuple(ln for ln in self.lanes if not ln.hazmat_allowed or ln.max_weight_t is not None)

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
