"""The committed template equals what `costing template` writes, and carries the contract."""

from __future__ import annotations

import openpyxl
import pytest

from costing.contract.inputs import SHEETS

COMMITTED = "templates/costing-input-template.xlsx"


def _describe(path):
    wb = openpyxl.load_workbook(path)
    out = {}
    for ws in wb:
        out[ws.title] = {
            "headers": [c.value for c in ws[1]],
            "notes": [c.comment.text if c.comment else None for c in ws[1]],
            "validations": sorted((str(dv.sqref), dv.type, dv.formula1) for dv in
                                  ws.data_validations.dataValidation),
            "freeze": ws.freeze_panes,
            "rows": [[c.value for c in row] for row in ws.iter_rows(min_row=2)],
        }
    return out


def test_committed_template_is_current(cli, tmp_path):
    fresh = tmp_path / "t.xlsx"
    code, out, _ = cli("template", str(fresh))
    assert code == 0 and "template written" in out
    assert _describe(fresh) == _describe(COMMITTED), \
        "templates/ is stale: run `costing template templates/costing-input-template.xlsx --overwrite`"


def test_template_has_every_contract_column_with_note_and_dropdowns():
    d = _describe(COMMITTED)
    assert list(d) == [s.name for s in SHEETS]
    for spec in SHEETS:
        sheet = d[spec.name]
        assert sheet["headers"] == [c.name for c in spec.columns]
        assert all(sheet["notes"]), f"{spec.name}: every header has a note"
        assert sheet["freeze"] == "A2"
    lanes = {v[0].split(":")[0]: v for v in d["Lanes"]["validations"]}
    assert '"road,rail,sea,inland_water,air"' in lanes["D2"][2]  # mode dropdown
    assert lanes["B2"][2].startswith("Depots!")  # from_depot lists depot ids
    ships = {v[0].split(":")[0]: v for v in d["Shipments"]["validations"]}
    assert ships["E2"][2].startswith("Rates!")  # vehicle lists Rates vehicles
    assert ships["G2"][2] == '"yes,no"'
    notes = dict(zip(d["Lanes"]["headers"], d["Lanes"]["notes"]))
    assert "Unit: km" in notes["distance_km"]


def test_template_refuses_to_overwrite(cli, tmp_path):
    p = tmp_path / "t.xlsx"
    p.write_bytes(b"keep me")
    code, _, err = cli("template", str(p))
    assert code == 2 and "--overwrite" in err
    assert p.read_bytes() == b"keep me"
    code, _, _ = cli("template", str(p), "--overwrite")
    assert code == 0 and p.read_bytes()[:2] == b"PK"


@pytest.mark.parametrize("header, key", [("Distance km", "distance_km"), (" DISTANCE_KM ", "distance_km"),
                                          ("distance-km", "distance_km"), ("Lane ID", "lane_id")])
def test_forgiving_headers(header, key):
    from costing.contract.inputs import normalise_header

    assert normalise_header(header) == key


def test_readme_column_reference_is_current():
    from costing.docs import column_reference

    assert column_reference() in open("README.md", encoding="utf-8").read(), \
        "README column reference is stale: paste the output of `python -m costing.docs`"
