"""Write imported network rows into a copy of an input workbook (``costing import-network``).

Guarantees: the input workbook is opened read-only in the sense that matters (it is loaded
into memory and never saved back); the result is saved to a different path, which the caller
writes atomically. Rows are matched to columns by header text (``contract.inputs``), so the
workbook's own column order is kept. Re-importing replaces the rows an earlier import wrote
(lane and depot ids that start with the import's prefixes) and keeps every other row.
"""

from __future__ import annotations

from costing.contract.inputs import SETTINGS_BY_NAME, SHEETS_BY_NAME, normalise_header
from costing.errors import InputError
from costing.model import ERROR, Depot, Lane, Problem

YES_NO = {True: "yes", False: "no"}


def _depot_values(d: Depot) -> dict[str, object]:
    return {"depot_id": d.depot_id, "name": d.name, "latitude": d.latitude, "longitude": d.longitude,
            "kind": d.kind, "handling_cost": d.handling_cost, "handling_hours": d.handling_hours}


def _lane_values(ln: Lane) -> dict[str, object]:
    return {"lane_id": ln.lane_id, "from_depot": ln.from_depot, "to_depot": ln.to_depot, "mode": ln.mode,
            "distance_km": None if ln.distance_km is None else round(ln.distance_km, 4),
            "drive_hours": None if ln.drive_hours is None else round(ln.drive_hours, 5),
            "toll": ln.toll, "fixed_cost": ln.fixed_cost, "two_way": YES_NO[ln.two_way],
            "max_weight_t": ln.max_weight_t, "hazmat_allowed": YES_NO[ln.hazmat_allowed],
            "open": YES_NO[ln.open]}


def _sheet(wb, name: str):
    for ws in wb.worksheets:
        if ws.title.strip().lower() == name.lower():
            return ws
    raise InputError([Problem(ERROR, name, "", f"the workbook has no {name} sheet",
                              "start from `costing template` and import into that")])


def _columns(ws, name: str) -> dict[str, int]:
    """Contract column -> 1-based index, from the header row (row 1)."""
    known = {c.name for c in SHEETS_BY_NAME[name].columns}
    cols = {}
    for cell in ws[1]:
        key = normalise_header(cell.value)
        if key in known and key not in cols:
            cols[key] = cell.column
    id_col = SHEETS_BY_NAME[name].id_column
    if id_col not in cols:
        raise InputError([Problem(ERROR, ws.title, "A1", f"no {id_col} header in row 1",
                                  "the header row of the sheet must name its columns")])
    return cols


def _replace_rows(ws, name: str, records: list[dict], drop_prefixes: tuple[str, ...]) -> None:
    cols = _columns(ws, name)
    id_idx = cols[SHEETS_BY_NAME[name].id_column]
    keep = []
    for row in ws.iter_rows(min_row=2, values_only=True):
        if all(v is None or str(v).strip() == "" for v in row):
            continue
        rid = row[id_idx - 1] if len(row) >= id_idx else None
        if rid is not None and str(rid).startswith(drop_prefixes):
            continue
        keep.append(row)
    if ws.max_row > 1:
        ws.delete_rows(2, ws.max_row - 1)
    for row in keep:
        ws.append(list(row))
    width = max(cols.values())
    for rec in records:
        out = [None] * width
        for key, value in rec.items():
            if key in cols:
                out[cols[key] - 1] = value
        ws.append(out)


def _set_setting(wb, name: str, value: str | None) -> None:
    """Settings `name` = `value`: its row's value replaced, or (unless `value` is None) a row
    added, and the sheet too if missing."""
    ws = next((w for w in wb.worksheets if w.title.strip().lower() == "settings"), None)
    if ws is None and value is None:
        return
    if ws is None:
        ws = wb.create_sheet("Settings", 0)
        ws.append(["setting", "value", "note"])
    cols = {normalise_header(c.value): c.column for c in ws[1]}
    if ("setting" not in cols or "value" not in cols) and value is None:
        return
    if "setting" not in cols or "value" not in cols:
        raise InputError([Problem(ERROR, ws.title, "A1", "no setting and value headers in row 1",
                                  "the Settings sheet's first row must name its columns setting, value")])
    for r in range(2, ws.max_row + 1):
        if normalise_header(ws.cell(r, cols["setting"]).value) == name:
            ws.cell(r, cols["value"]).value = value
            return
    if value is None:
        return
    row = ws.max_row + 1
    ws.cell(row, cols["setting"]).value = name
    ws.cell(row, cols["value"]).value = value
    if "note" in cols:
        ws.cell(row, cols["note"]).value = SETTINGS_BY_NAME[name].note


def write_network(input_path: str, output_path: str, depots: list[Depot], lanes: list[Lane],
                  prefixes: tuple[str, ...], network_file: str | None = None) -> None:
    """Save a copy of `input_path` to `output_path` with `depots` and `lanes` in its sheets.

    Parameters
    ----------
    input_path : str
        The input workbook; never written.
    output_path : str
        Where the copy goes (a different path; the caller renames it into place).
    depots, lanes : list
        Rows to add to Depots and Lanes (after the workbook's own rows).
    prefixes : tuple of str
        Ids starting with these were written by an earlier import and are replaced.
    network_file : str, optional
        Settings ``network_file`` of the copy (the compact file the network went to instead of
        rows; pass no `depots` and `lanes` then). None leaves the setting blank, so rows and an
        earlier file do not both hold the network.
    """
    import openpyxl

    wb = openpyxl.load_workbook(input_path)
    try:
        _replace_rows(_sheet(wb, "Depots"), "Depots", [_depot_values(d) for d in depots], prefixes)
        _replace_rows(_sheet(wb, "Lanes"), "Lanes", [_lane_values(ln) for ln in lanes], prefixes)
        _set_setting(wb, "network_file", network_file)
        wb.save(output_path)
    finally:
        wb.close()

