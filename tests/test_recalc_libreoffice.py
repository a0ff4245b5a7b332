"""Verified in a real spreadsheet: LibreOffice Calc recalculates the costed example workbook
from our formulas, and every recalculated value equals the value we cached, to the cent.
LibreOffice is the outside reference here (an independent spreadsheet engine)."""

from __future__ import annotations

import openpyxl
import pytest

from tests.spreadsheet_app import recalc_mismatches

# skips without LibreOffice locally, fails without it in CI (tests/conftest.py)
pytestmark = pytest.mark.needs_soffice


def test_libreoffice_recalculation_matches_cached_values(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, err = cli("demo", "-o", "costed.xlsx")
    assert code == 0, err
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(tmp_path / "costed.xlsx"), str(tmp_path / "recalc"))
    assert checked > 1000, "the example should exercise many formulas"
    assert not mismatches, mismatches[:10]
    # money cells agree to the cent, not just within half a cent
    cached = openpyxl.load_workbook(tmp_path / "costed.xlsx", data_only=True)
    fresh = openpyxl.load_workbook(tmp_path / "recalc" / "costed.xlsx", data_only=True)
    # the total_cost column found by its header text in the output (name written here)
    header = next(cached["Summary"].iter_rows(max_row=1, values_only=True))
    col = header.index("total_cost")
    ours = [r for r in cached["Summary"].iter_rows(values_only=True) if r[0] == "TOTAL"][0][col]
    theirs = [r for r in fresh["Summary"].iter_rows(values_only=True) if r[0] == "TOTAL"][0][col]
    assert round(ours * 100) == round(theirs * 100)
    print(f"LibreOffice recalculated {checked} formulas; all equal to the cached values")


def test_libreoffice_recalculation_with_legs_on_several_sheets(cli, tmp_path, monkeypatch):
    # the cross-sheet formulas (Summary, Lane usage, reconciliation) over Legs, Legs 2, ...
    import costing.sheets.legs as legs

    monkeypatch.setattr(legs, "LEGS_SHEET_ROWS", 40)
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "split.xlsx")[0] == 0
    names = openpyxl.load_workbook("split.xlsx").sheetnames
    assert "Legs 2" in names and "Scenario legs 2" in names
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(tmp_path / "split.xlsx"), str(tmp_path / "recalc"))
    assert checked > 1000 and not mismatches, mismatches[:10]


def test_libreoffice_recalculates_both_kinds_of_lane_usage_formulas(cli, tmp_path, monkeypatch):
    # lanes of few runs add their runs' cells by name, lanes of more runs use SUMIFS over the
    # whole Vehicle runs sheet: both recalculate to the cached values
    import costing.sheets.lane_usage as lane_usage

    monkeypatch.setattr(lane_usage, "NAMED_RUNS", 1)
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "lanes.xlsx")[0] == 0
    formulas = [c.value for row in openpyxl.load_workbook("lanes.xlsx")["Lane usage"].iter_rows(min_row=2)
                for c in row if isinstance(c.value, str) and c.value.startswith("=")]
    assert any("SUMIFS" in f for f in formulas) and any("COUNT(" in f for f in formulas)
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(tmp_path / "lanes.xlsx"), str(tmp_path / "recalc"))
    assert checked > 1000 and not mismatches, mismatches[:10]


def test_lane_usage_named_sums_stay_under_the_formula_limit(tmp_path):
    # a spreadsheet formula holds at most 8,192 characters (Excel specifications and limits,
    # "length of formula contents"; from memory): a lane of NAMED_RUNS runs on rows past a
    # million must still fit, or fall back to SUMIFS
    import datetime as dt
    from types import SimpleNamespace

    from costing.model import Model, Settings
    from costing.plan.analysis import LaneTotals
    from costing.sheets import lane_usage
    from costing.sheets.formats import Writer

    lane = SimpleNamespace(lane_id="L1")
    runs = [SimpleNamespace(leg=SimpleNamespace(use=SimpleNamespace(lane=lane)))] * lane_usage.NAMED_RUNS
    other = SimpleNamespace(leg=SimpleNamespace(use=SimpleNamespace(lane=SimpleNamespace(lane_id="L0"))))
    runs = [other] * 1_040_000 + runs  # the lane's runs on rows 1,040,002 and after
    analysis = SimpleNamespace(lanes=[LaneTotals("L1", "A", "B", "road", runs=lane_usage.NAMED_RUNS)])
    path = str(tmp_path / "lane_limit.xlsx")
    w = Writer(path, Model(Settings(), (), (), (), ()), dt.datetime(2026, 1, 1))
    lane_usage.write_lane_usage(w, w.wb.add_worksheet("Lane usage"), analysis, len(runs), runs)
    w.wb.close()
    ws = openpyxl.load_workbook(path)["Lane usage"]
    formulas = [c.value for row in ws.iter_rows(min_row=2) for c in row if isinstance(c.value, str)
                and c.value.startswith("=")]
    assert formulas and max(len(f) for f in formulas) <= 8192
    assert any("'Vehicle runs'!" in f and "SUMIFS" not in f for f in formulas), "named sums kept"
