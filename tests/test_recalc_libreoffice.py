"""Verified in a real spreadsheet: LibreOffice Calc recalculates the costed example workbook
from our formulas, and every recalculated value equals the value we cached, to the cent.
LibreOffice is the outside reference here (an independent spreadsheet engine)."""

from __future__ import annotations

import openpyxl
import pytest

from costing.writer import SUMMARY_COLUMNS
from tests.spreadsheet_app import convert, soffice

pytestmark = pytest.mark.skipif(soffice() is None,
                                reason="LibreOffice Calc is not installed (apt-get install "
                                "libreoffice-calc); CI installs it")


def test_libreoffice_recalculation_matches_cached_values(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, err = cli("demo", "-o", "costed.xlsx")
    assert code == 0, err
    (tmp_path / "recalc").mkdir()
    recalculated = convert(str(tmp_path / "costed.xlsx"), str(tmp_path / "recalc"))
    formulas = openpyxl.load_workbook(tmp_path / "costed.xlsx")
    cached = openpyxl.load_workbook(tmp_path / "costed.xlsx", data_only=True)
    fresh = openpyxl.load_workbook(recalculated, data_only=True)
    checked, mismatches = 0, []
    for ws in formulas:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type != "f":
                    continue
                ours = cached[ws.title][cell.coordinate].value
                theirs = fresh[ws.title][cell.coordinate].value
                checked += 1
                if not isinstance(theirs, (int, float)) or abs(ours - theirs) > 0.005:
                    mismatches.append((ws.title, cell.coordinate, cell.value, ours, theirs))
    assert checked > 1000, "the example should exercise many formulas"
    assert not mismatches, mismatches[:10]
    # money cells must agree exactly to the cent, not just within half a cent
    summary_total = [r for r in fresh["Summary"].iter_rows(values_only=True) if r[0] == "TOTAL"][0]
    ours_total = [r for r in cached["Summary"].iter_rows(values_only=True) if r[0] == "TOTAL"][0]
    col = [name for name, _w, _k in SUMMARY_COLUMNS].index("total_cost")
    assert round(summary_total[col] * 100) == round(ours_total[col] * 100)
    print(f"LibreOffice recalculated {checked} formulas; all equal to the cached values")


def test_libreoffice_recalculation_with_legs_on_several_sheets(cli, tmp_path, monkeypatch):
    # the cross-sheet formulas (Summary, Lane usage, reconciliation) over Legs, Legs 2, ...
    import costing.writer as writer

    monkeypatch.setattr(writer, "LEGS_SHEET_ROWS", 40)
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "split.xlsx")[0] == 0
    (tmp_path / "recalc").mkdir()
    recalculated = convert(str(tmp_path / "split.xlsx"), str(tmp_path / "recalc"))
    formulas = openpyxl.load_workbook(tmp_path / "split.xlsx")
    cached = openpyxl.load_workbook(tmp_path / "split.xlsx", data_only=True)
    fresh = openpyxl.load_workbook(recalculated, data_only=True)
    assert "Legs 2" in formulas.sheetnames
    bad = [(ws.title, c.coordinate) for ws in formulas for row in ws.iter_rows() for c in row
           if c.data_type == "f" and not (isinstance(fresh[ws.title][c.coordinate].value, (int, float))
                                          and abs(fresh[ws.title][c.coordinate].value
                                                  - cached[ws.title][c.coordinate].value) <= 0.005)]
    assert not bad, bad[:10]
