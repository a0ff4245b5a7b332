"""GMNS (General Modeling Network Specification) node and link tables -> our Depots and Lanes.

GMNS is an open standard for road networks: ``node.csv`` (``node_id``, ``x_coord``, ``y_coord``,
optional ``name``) and ``link.csv`` (``link_id``, ``from_node_id``, ``to_node_id``,
``directed``, optional ``length``, ``free_speed``, ``toll``, ``lanes``, ``capacity``), with the
units in an optional ``config.csv`` (``long_length``, ``speed``, ``crs``). This module reads
them with the csv module (no I/O beyond the three files) and maps them to frozen records:

================  =========================================================================
GMNS              ours
================  =========================================================================
node              a Depot ``gmns_n<node_id>`` (kind depot, no handling), WGS84
                  ``y_coord`` -> latitude, ``x_coord`` -> longitude
link              a road Lane ``gmns_l<link_id>``
``directed``      true: a one-way lane (``two_way`` no); false: usable both ways
``length``        ``distance_km`` (converted from ``long_length``: km, m, mi, ft); blank:
                  estimated by the run as straight line x detour_factor
``free_speed``    ``drive_hours`` = km / speed (``speed``: kph, mph, m/s); blank or 0: the run's
                  default_speed_kmh
``toll``          ``toll`` (currency units of the link; the workbook's currency is assumed)
``lanes`` = 0 or  ``open`` no (GMNS: no lane / no capacity open to motor vehicles): the lane
``capacity`` = 0  is kept, closed, so the run can say why a place is cut off
================  =========================================================================

Guarantees: every node and every link becomes exactly one record, in file order; a problem in
a file (missing column, unknown node, bad number, coordinates not WGS84) raises InputError
naming the file, the line and the fix, before anything is written. Snapping (``snap``) joins
each workbook depot to its nearest node (great-circle km, ``costing.geo``) with a two-way road
connector lane of that length, and reports the distance.
"""

from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass

import numpy as np

from costing.errors import InputError
from costing.geo import great_circle_km_many
from costing.model import ERROR, Depot, Lane, Problem

# long_length / speed unit names (lower case, as GMNS config.csv writes them) -> km / km/h
LENGTH_UNITS = {"km": 1.0, "kilometer": 1.0, "kilometers": 1.0, "kilometre": 1.0, "kilometres": 1.0,
                "m": 0.001, "meter": 0.001, "meters": 0.001, "metre": 0.001, "metres": 0.001,
                "mi": 1.609344, "mile": 1.609344, "miles": 1.609344,
                "ft": 0.0003048, "feet": 0.0003048, "foot": 0.0003048}
SPEED_UNITS = {"kph": 1.0, "km/h": 1.0, "kmh": 1.0, "kmph": 1.0,
               "mph": 1.609344, "mi/h": 1.609344, "m/s": 3.6, "mps": 3.6}
WGS84_CRS = ("", "epsg:4326", "wgs84", "wgs 84", "+proj=longlat +datum=wgs84 +no_defs", "crs84")
IMPORT_PREFIX = "gmns_"  # every id an import writes starts with this
TRUE = ("true", "1", "yes", "t", "y")
FALSE = ("false", "0", "no", "f", "n")


@dataclass(frozen=True)
class Snap:
    """One workbook depot joined to its nearest network node."""

    depot_id: str
    node_depot_id: str  # the node's depot id in the workbook
    km: float  # great-circle km from the depot to the node
    lane_id: str  # the connector lane


@dataclass(frozen=True)
class Network:
    """The imported network: one Depot per GMNS node, one Lane per GMNS link."""

    depots: tuple[Depot, ...]
    lanes: tuple[Lane, ...]
    length_unit: str
    speed_unit: str


def _problem(file: str, line: int | str, message: str, fix: str) -> InputError:
    where = f"line {line}" if line != "" else ""
    return InputError([Problem(ERROR, os.path.basename(file), where, message, fix)])


def _rows(path: str, required: tuple[str, ...]):
    """(line number, row dict) of a CSV file whose header holds every `required` field."""
    if not os.path.isfile(path):
        raise _problem(path, "", f"file not found: {path}", "give the path of the GMNS csv file")
    with open(path, newline="", encoding="utf-8-sig") as f:
        reader = csv.DictReader(f)
        fields = [(h or "").strip() for h in (reader.fieldnames or [])]
        missing = [r for r in required if r not in fields]
        if missing:
            raise _problem(path, 1, f"no {', '.join(missing)} column (header: {', '.join(fields)[:200]})",
                           "use the GMNS field names in the first line")
        reader.fieldnames = fields
        for row in reader:
            yield reader.line_num, {k: (v or "").strip() for k, v in row.items() if k is not None}


def _number(path: str, line: int, field: str, text: str, minimum: float | None = 0.0) -> float | None:
    if text == "" or text.lower() == "nan":
        return None
    try:
        x = float(text)
    except ValueError:
        raise _problem(path, line, f"{field} is '{text[:40]}', not a number",
                       f"write {field} as a plain number or leave it blank") from None
    if not math.isfinite(x) or (minimum is not None and x < minimum):
        raise _problem(path, line, f"{field} is {text}", f"{field} must be a finite number >= {minimum:g}")
    return x


def read_config(path: str | None) -> dict[str, str]:
    """The one row of a GMNS ``config.csv`` (field -> value, lower case), or {} when `path` is None."""
    if path is None:
        return {}
    rows = list(_rows(path, ()))
    return {k: v.lower() for k, v in rows[0][1].items()} if rows else {}


def read_gmns(node_csv: str, link_csv: str, config_csv: str | None = None, *,
              length_unit: str | None = None, speed_unit: str | None = None,
              node_prefix: str = "gmns_n", link_prefix: str = "gmns_l") -> Network:
    """Read GMNS ``node.csv`` and ``link.csv`` into Depots and road Lanes.

    Parameters
    ----------
    node_csv, link_csv : str
        The GMNS node and link tables.
    config_csv : str, optional
        GMNS ``config.csv``; when None, a ``config.csv`` beside `link_csv` is read if present.
    length_unit, speed_unit : str, optional
        Override ``long_length`` and ``speed`` of the config (e.g. ``m``, ``mph``). Lengths
        given with no unit anywhere are refused (a silent guess would be wrong by 1000 or 1.6).
    node_prefix, link_prefix : str
        Prepended to GMNS ids to make depot and lane ids, so they cannot clash with the
        workbook's own.

    Returns
    -------
    Network
        Depots (latitude, longitude in degrees) and Lanes (km, hours, toll in currency).

    Raises
    ------
    InputError
        Naming the file, the line and the fix.
    """
    if config_csv is None:
        beside = os.path.join(os.path.dirname(os.path.abspath(link_csv)), "config.csv")
        config_csv = beside if os.path.isfile(beside) else None
    config = read_config(config_csv)
    crs = config.get("crs", "")
    if crs not in WGS84_CRS:
        raise _problem(config_csv or link_csv, 2, f"crs is '{crs}'; coordinates must be WGS84 longitude "
                       "and latitude", "convert x_coord, y_coord to EPSG:4326 and set crs to EPSG:4326")
    lu = (length_unit or config.get("long_length", "")).lower()
    su = (speed_unit or config.get("speed", "")).lower()
    for unit, table, what in ((lu, LENGTH_UNITS, "long_length"), (su, SPEED_UNITS, "speed")):
        if unit and unit not in table:
            raise _problem(config_csv or link_csv, 2, f"{what} unit '{unit}' is not known",
                           f"use one of {', '.join(sorted(table))}")

    depots: list[Depot] = []
    seen: set[str] = set()
    for line, r in _rows(node_csv, ("node_id", "x_coord", "y_coord")):
        nid = r["node_id"]
        if not nid or nid in seen:
            raise _problem(node_csv, line, f"node_id '{nid}' is blank or repeated",
                           "give each node its own id")
        seen.add(nid)
        lon = _number(node_csv, line, "x_coord", r["x_coord"], minimum=None)
        lat = _number(node_csv, line, "y_coord", r["y_coord"], minimum=None)
        if lon is None or lat is None or not (-180 <= lon <= 180 and -90 <= lat <= 90):
            raise _problem(node_csv, line, f"node {nid} has x_coord {r['x_coord']}, y_coord {r['y_coord']}",
                           "x_coord is WGS84 longitude (-180..180), y_coord latitude (-90..90)")
        depots.append(Depot(node_prefix + nid, r.get("name", "") or f"node {nid}", lat, lon, row=line))

    lanes: list[Lane] = []
    links: set[str] = set()
    for line, r in _rows(link_csv, ("link_id", "from_node_id", "to_node_id", "directed")):
        lid, a, b = r["link_id"], r["from_node_id"], r["to_node_id"]
        if not lid or lid in links:
            raise _problem(link_csv, line, f"link_id '{lid}' is blank or repeated",
                           "give each link its own id")
        links.add(lid)
        for end in (a, b):
            if end not in seen:
                raise _problem(link_csv, line, f"link {lid} refers to node '{end}', which node.csv does not "
                               "hold", "add the node or remove the link")
        directed = r["directed"].lower()
        if directed not in TRUE + FALSE:
            raise _problem(link_csv, line, f"directed is '{r['directed']}'", "write true or false")
        length = _number(link_csv, line, "length", r.get("length", ""))
        km = None
        if length is not None:
            if not lu:
                raise _problem(link_csv, line, "length is given but its unit is not",
                               "add config.csv with long_length (km, m, mi, ft) or pass --length-unit")
            km = length * LENGTH_UNITS[lu]
        speed = _number(link_csv, line, "free_speed", r.get("free_speed", ""))
        hours = None
        if speed and km is not None:
            if not su:
                raise _problem(link_csv, line, "free_speed is given but its unit is not",
                               "add config.csv with speed (kph, mph, m/s) or pass --speed-unit")
            hours = km / (speed * SPEED_UNITS[su])
        toll = _number(link_csv, line, "toll", r.get("toll", "")) or 0.0
        n_lanes = _number(link_csv, line, "lanes", r.get("lanes", ""))
        capacity = _number(link_csv, line, "capacity", r.get("capacity", ""))
        closed = n_lanes == 0 or capacity == 0
        lanes.append(Lane(link_prefix + lid, node_prefix + a, node_prefix + b, "road", km, hours, toll=toll,
                          two_way=directed in FALSE, open=not closed, row=line))
    return Network(tuple(depots), tuple(lanes), lu, su)


def snap(depots, network: Network, connector_prefix: str = "gmns_c") -> tuple[list[Snap], list[Lane]]:
    """Join each depot with coordinates to its nearest network node.

    Parameters
    ----------
    depots : iterable of Depot
        The workbook's depots; those without coordinates are left unjoined.
    network : Network
        The imported nodes.
    connector_prefix : str
        Connector lanes are ``<prefix><depot_id>``.

    Returns
    -------
    snaps : list of Snap
        Per joined depot: the node and the great-circle distance in km.
    connectors : list of Lane
        One two-way road lane per snap, ``distance_km`` the snap distance rounded to 0.001 km
        (hours from the run's default speed).
    """
    if not network.depots:
        return [], []
    lats = np.array([d.latitude for d in network.depots], dtype=float)
    lons = np.array([d.longitude for d in network.depots], dtype=float)
    snaps, connectors = [], []
    for d in depots:
        if d.latitude is None or d.longitude is None:
            continue
        gc = great_circle_km_many(lats, lons, d.latitude, d.longitude)
        i = int(np.argmin(gc))
        km = float(gc[i])
        node = network.depots[i].depot_id
        lane_id = connector_prefix + d.depot_id
        snaps.append(Snap(d.depot_id, node, km, lane_id))
        connectors.append(Lane(lane_id, d.depot_id, node, "road", round(km, 3), None))
    return snaps, connectors
