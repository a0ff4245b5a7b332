"""The compact network file: Depot and Lane records of a large road graph in one ``.npz`` file.

A workbook points to it with Settings ``network_file`` (``costing import-network --compact``
writes both); ``costing.pipeline.load`` reads it straight into records, so a graph of a
hundred thousand nodes never passes through spreadsheet rows.

Format (numpy ``savez_compressed``, no pickled objects): ``format`` = ``FORMAT``; per depot
``depot_id``, ``name``, ``kind`` (text), ``latitude``, ``longitude`` (degrees, NaN = blank),
``handling_cost`` (currency per vehicle), ``handling_hours`` (h); per lane ``lane_id``,
``from_depot``, ``to_depot``, ``mode`` (text), ``distance_km`` (km, NaN = blank),
``drive_hours`` (h, NaN = blank), ``toll``, ``fixed_cost`` (currency per vehicle),
``max_weight_t`` (t, NaN = none), ``two_way``, ``hazmat_allowed``, ``open`` (booleans).

Guarantees: ``read_network_file(write_network_file(depots, lanes))`` gives back equal records
(``row`` is 0: they are in no sheet); a file that is missing, not such a file, damaged or
inconsistent (array lengths, blank or repeated ids, numbers that are not finite and at least 0,
coordinates out of range, unknown modes or depot kinds) raises ``NetworkFileError`` with what is
wrong and how to fix it, before any record is returned. Whether every lane's depots exist is for
the caller to check: a lane may join a depot of the workbook to a node of the file.
"""

from __future__ import annotations

import math
import os
import zipfile

import numpy as np

from costing.contract.inputs import DEPOT_KINDS, MODES
from costing.model import Depot, Lane

FORMAT = "costing network file 1"
SUFFIX = ".network.npz"

DEPOT_TEXT = ("depot_id", "name", "kind")
DEPOT_NUMBERS = ("latitude", "longitude", "handling_cost", "handling_hours")
LANE_TEXT = ("lane_id", "from_depot", "to_depot", "mode")
LANE_NUMBERS = ("distance_km", "drive_hours", "toll", "fixed_cost", "max_weight_t")
LANE_FLAGS = ("two_way", "hazmat_allowed", "open")
REWRITE = ("write it again with `costing import-network NODE.csv LINK.csv -w WORKBOOK -o OUTPUT "
           "--compact`, or clear Settings network_file to use the Depots and Lanes sheets alone")


class NetworkFileError(Exception):
    """The network file cannot be used: ``message`` says why, ``fix`` what to do."""

    def __init__(self, message: str, fix: str = REWRITE):
        super().__init__(message)
        self.message = message
        self.fix = fix


def _text(values) -> np.ndarray:
    return np.array([str(v) for v in values], dtype=str) if len(values) else np.array([], dtype="<U1")


def _num(values) -> np.ndarray:
    return np.array([math.nan if v is None else float(v) for v in values], dtype=float)


def write_network_file(path: str, depots, lanes) -> None:
    """Write Depot and Lane records to `path` (numpy ``.npz``, compressed).

    Parameters
    ----------
    path : str
        The file to write (the caller writes it atomically: to a part file, then renamed).
    depots : sequence of Depot
        Latitude and longitude in degrees, handling in currency per vehicle and hours.
    lanes : sequence of Lane
        distance_km in km, drive_hours in h, toll and fixed_cost in currency per vehicle.
    """
    arrays: dict[str, np.ndarray] = {"format": np.array(FORMAT)}
    for name in DEPOT_TEXT:
        arrays[f"depot.{name}"] = _text([getattr(d, name) for d in depots])
    for name in DEPOT_NUMBERS:
        arrays[f"depot.{name}"] = _num([getattr(d, name) for d in depots])
    for name in LANE_TEXT:
        arrays[f"lane.{name}"] = _text([getattr(ln, name) for ln in lanes])
    for name in LANE_NUMBERS:
        arrays[f"lane.{name}"] = _num([getattr(ln, name) for ln in lanes])
    for name in LANE_FLAGS:
        arrays[f"lane.{name}"] = np.array([bool(getattr(ln, name)) for ln in lanes], dtype=bool)
    with open(path, "wb") as f:
        np.savez_compressed(f, **arrays)


def _array(data, key: str, kind: str, n: int | None) -> np.ndarray:
    if key not in data.files:
        raise NetworkFileError(f"it has no {key} table")
    a = data[key]
    ok = {"text": a.dtype.kind == "U", "number": a.dtype.kind == "f", "flag": a.dtype == bool}[kind]
    if not ok or a.ndim != 1:
        raise NetworkFileError(f"its {key} table holds {a.dtype} values, not {kind}s")
    if n is not None and len(a) != n:
        raise NetworkFileError(f"its {key} table has {len(a):,} entries, not {n:,} like the others")
    return a


def _numbers(data, table: str, names, n: int, bounds: dict) -> dict[str, np.ndarray]:
    out = {}
    for name in names:
        a = _array(data, f"{table}.{name}", "number", n)
        lo, hi, blank_ok = bounds[name]
        bad = ~np.isnan(a) & ((a < lo) | (a > hi) | ~np.isfinite(a))
        if not blank_ok:
            bad |= np.isnan(a)
        if bad.any():
            i = int(np.argmax(bad))
            raise NetworkFileError(f"{table} {i + 1} has {name} {a[i]!r}, outside {lo:g} to {hi:g}")
        out[name] = a
    return out


def _unique(ids: np.ndarray, what: str) -> None:
    if len(ids) and (ids == "").any():
        raise NetworkFileError(f"{what} {int(np.argmax(ids == '')) + 1} has a blank id")
    uniq, counts = np.unique(ids, return_counts=True)
    if len(uniq) != len(ids):
        raise NetworkFileError(f"{what} id '{uniq[np.argmax(counts > 1)]}' is repeated")


def _none(x: float) -> float | None:
    return None if math.isnan(x) else x


def read_network_file(path: str) -> tuple[tuple[Depot, ...], tuple[Lane, ...]]:
    """Depot and Lane records from a network file written by ``write_network_file``.

    Parameters
    ----------
    path : str
        The ``.npz`` file.

    Returns
    -------
    depots, lanes : tuple of Depot, tuple of Lane
        In file order; units as ``write_network_file`` takes them; ``row`` 0.

    Raises
    ------
    NetworkFileError
        The file is missing, not a network file, damaged or inconsistent.
    """
    if not os.path.isfile(path):
        raise NetworkFileError(f"file not found: {path}",
                               "put the network file beside the workbook (the path is relative to the "
                               "workbook's folder) or correct the path; " + REWRITE)
    try:
        with np.load(path, allow_pickle=False) as data:
            return _read(data)
    except NetworkFileError:
        raise
    except (zipfile.BadZipFile, ValueError, OSError, EOFError, KeyError, TypeError) as e:
        raise NetworkFileError(f"{os.path.basename(path)} is not a readable network file ({e})") from None


def _read(data) -> tuple[tuple[Depot, ...], tuple[Lane, ...]]:
    if "format" not in data.files or str(data["format"]) != FORMAT:
        raise NetworkFileError(f"it is not a network file of this tool (format '{FORMAT}' expected)")
    ids = _array(data, "depot.depot_id", "text", None)
    n = len(ids)
    text = {name: _array(data, f"depot.{name}", "text", n) for name in DEPOT_TEXT}
    big = float("inf")
    nums = _numbers(data, "depot", DEPOT_NUMBERS, n, {"latitude": (-90, 90, True),
                                                      "longitude": (-180, 180, True),
                                                      "handling_cost": (0, big, False),
                                                      "handling_hours": (0, 240, False)})
    _unique(ids, "depot")
    kinds = set(text["kind"].tolist()) - set(DEPOT_KINDS)
    if kinds:
        raise NetworkFileError(f"it has depots of kind '{sorted(kinds)[0]}'")
    lane_ids = _array(data, "lane.lane_id", "text", None)
    m = len(lane_ids)
    ltext = {name: _array(data, f"lane.{name}", "text", m) for name in LANE_TEXT}
    lnums = _numbers(data, "lane", LANE_NUMBERS, m, {"distance_km": (0, 25000, True),
                                                     "drive_hours": (0, 1000, True), "toll": (0, big, False),
                                                     "fixed_cost": (0, big, False),
                                                     "max_weight_t": (0, big, True)})
    flags = {name: _array(data, f"lane.{name}", "flag", m) for name in LANE_FLAGS}
    _unique(lane_ids, "lane")
    modes = set(ltext["mode"].tolist()) - set(MODES)
    if modes:
        raise NetworkFileError(f"it has lanes of mode '{sorted(modes)[0]}'")
    if m and ((ltext["from_depot"] == "").any() or (ltext["to_depot"] == "").any()
              or (ltext["from_depot"] == ltext["to_depot"]).any()):
        raise NetworkFileError("a lane has a blank depot or starts and ends at the same depot")

    lat, lon = nums["latitude"].tolist(), nums["longitude"].tolist()
    placed = [not (math.isnan(a) or math.isnan(o)) for a, o in zip(lat, lon)]  # half a position is none
    depots = tuple(
        Depot(i, name, a if p else None, o if p else None, kind, hc, hh)
        for i, name, a, o, p, kind, hc, hh in zip(ids.tolist(), text["name"].tolist(), lat, lon, placed,
                                                  text["kind"].tolist(), nums["handling_cost"].tolist(),
                                                  nums["handling_hours"].tolist()))
    lanes = tuple(
        Lane(i, a, b, mode, _none(km), _none(h), toll, fixed, two, _none(w), haz, op)
        for i, a, b, mode, km, h, toll, fixed, w, two, haz, op in zip(
            lane_ids.tolist(), ltext["from_depot"].tolist(), ltext["to_depot"].tolist(),
            ltext["mode"].tolist(), lnums["distance_km"].tolist(), lnums["drive_hours"].tolist(),
            lnums["toll"].tolist(), lnums["fixed_cost"].tolist(), lnums["max_weight_t"].tolist(),
            flags["two_way"].tolist(), flags["hazmat_allowed"].tolist(), flags["open"].tolist()))
    return depots, lanes
