"""Cost per customer and the invoice check: per customer shipments, tonnes, pallets, cost per
tonne / pallet / shipment, margin on quoted prices; invoiced amounts against the computed cost,
largest difference first. Figures worked by hand in the comments (each shipment alone costs
776.25: test_week_plan's hand-worked artic on a 250 km lane); the prices are invented inputs."""

from __future__ import annotations

import datetime as dt
from dataclasses import replace

import openpyxl
import pandas as pd
import pytest

from costing import pipeline
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.sheets.customers import customer_table
from costing.sheets.run import RunInfo
from costing.sheets.writer import write_costed

DAY = dt.date(2026, 12, 7)


def _costed():
    depots = (Depot("A", "Ashby", None, None), Depot("C", "Corrin", None, None))
    lanes = (Lane("L1", "A", "C", "road", 250.0, 3.5),)
    rates = (RateCard("artic", "road", 1.85, 45.0, 24.5, per_trip=156.25),)
    ships = (
        Shipment("S1", "A", "C", 5, customer="Acme", pallets=10, quoted_price=900, invoiced=800,
                 ready_date=DAY),
        Shipment("S2", "A", "C", 20, customer="Acme", quoted_price=700, invoiced=776.25, ready_date=DAY),
        Shipment("S3", "A", "C", 5, invoiced=700, ready_date=DAY),
    )
    model = Model(Settings(consolidate="no", compare_objectives="no", frontier_max_routes=0), depots,
                  lanes, rates, ships)
    return pipeline.run(model, pipeline.Options(analyses=False, scenarios=False))


def test_customer_figures_by_hand():
    t = customer_table(_costed().results, 2).set_index("customer")
    acme, none = t.loc["Acme"], t.loc[""]
    # Acme: 2 shipments, 25 t, 1552.50; per tonne 62.10, per pallet 155.25 (10 pallets), per
    # shipment 776.25; quoted 1600 -> margin 47.50 = 2.96875 %; invoiced 1576.25 -> +23.75
    assert (acme.shipments, acme.routed, acme.tonnes, acme.total_cost) == (2, 2, 25, 1552.5)
    assert (acme.cost_per_tonne, acme.cost_per_pallet, acme.cost_per_shipment) == (62.1, 155.25, 776.25)
    assert (acme.quoted_price, acme.margin) == (1600, 47.5) and acme.margin_pct == pytest.approx(0.0296875)
    assert (acme.invoiced, acme.invoice_difference) == (1576.25, 23.75)
    # no customer: 5 t at 776.25 = 155.25 per tonne, no pallets, no quote
    assert none.cost_per_tonne == 155.25 and pd.isna(none.cost_per_pallet) and pd.isna(none.margin_pct)
    assert list(t.index) == ["Acme", ""]  # largest total first


def test_workbook_sheets(tmp_path):
    costed = _costed()
    path = tmp_path / "out.xlsx"
    info = RunInfo("in.xlsx", "0" * 64, None, dt.datetime(2026, 12, 7), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, runs=costed.runs)
    wb = openpyxl.load_workbook(path, data_only=True)
    rows = list(wb["Invoice check"].iter_rows(values_only=True))
    head = rows[0]
    diffs = [(r[head.index("shipment_id")], r[head.index("invoice_difference")]) for r in rows[1:]]
    # largest absolute difference first: S3 700 - 776.25 = -76.25, S1 +23.75, S2 0
    assert diffs == [("S3", -76.25), ("S1", 23.75), ("S2", 0)]
    rows = list(wb["Cost per customer"].iter_rows(values_only=True))
    head = rows[0]
    assert [r[head.index("customer")] for r in rows[1:]] == ["Acme", "(no customer)"]
    summary = list(wb["Summary"].iter_rows(values_only=True))
    sh = summary[0]
    total = [r for r in summary if r[0] == "TOTAL"][0]
    assert total[sh.index("margin")] == 47.5 and total[sh.index("invoice_difference")] == -52.5


@pytest.mark.needs_soffice
def test_libreoffice_recomputes_customer_and_invoice_sheets(tmp_path):
    # LibreOffice Calc (an independent spreadsheet engine) recomputes the SUMPRODUCT formulas
    from tests.spreadsheet_app import recalc_mismatches

    costed = _costed()
    path = tmp_path / "out.xlsx"
    info = RunInfo("in.xlsx", "0" * 64, None, dt.datetime(2026, 12, 7), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, runs=costed.runs)
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(path), str(tmp_path / "recalc"))
    assert checked > 30 and not mismatches, mismatches[:10]


def _costed_two_spellings():
    """The module's three shipments with S2's customer typed "ACME": the same customer to a
    spreadsheet, whose = compares text without regard to case."""
    costed = _costed()
    s2 = costed.model.shipments[1]
    ships = (costed.model.shipments[0], replace(s2, customer="ACME"),
             costed.model.shipments[2])
    model = Model(costed.model.settings, costed.model.depots, costed.model.lanes, costed.model.rates, ships)
    return pipeline.run(model, pipeline.Options(analyses=False, scenarios=False))


def _customer_rows(path):
    wb = openpyxl.load_workbook(path, data_only=True)
    rows = list(wb["Cost per customer"].iter_rows(values_only=True))
    head = rows[0]
    table = {r[head.index("customer")]: dict(zip(head, r)) for r in rows[1:]}
    summary = list(wb["Summary"].iter_rows(values_only=True))
    total = [r for r in summary if r[0] == "TOTAL"][0][summary[0].index("total_cost")]
    return table, total


def test_customer_spelled_two_ways_is_one_customer(tmp_path):
    costed = _costed_two_spellings()
    t = customer_table(costed.results, 2)
    # one row for Acme/ACME with both shipments (the figures of test_customer_figures_by_hand)
    assert list(t["customer"]) == ["Acme", ""] and list(t["shipments"]) == [2, 1]
    acme = t.iloc[0]
    assert (acme.total_cost, acme.spellings) == (1552.5, "Acme, ACME")
    path = tmp_path / "out.xlsx"
    info = RunInfo("in.xlsx", "0" * 64, None, dt.datetime(2026, 12, 7), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, runs=costed.runs)
    table, total = _customer_rows(path)
    # openpyxl reads the cached values: the customers' totals add up to the Summary TOTAL
    # (1552.50 + 776.25 = 2328.75), each shipment counted once
    assert set(table) == {"Acme", "(no customer)"}
    assert table["Acme"]["shipments"] == 2 and table["Acme"]["spellings"] == "Acme, ACME"
    assert round(sum(r["total_cost"] for r in table.values()), 2) == total == 2328.75


@pytest.mark.needs_soffice
def test_libreoffice_ties_out_customer_spelled_two_ways(tmp_path):
    # LibreOffice Calc recomputes the SUMPRODUCT(... = ...) formulas, which match "Acme" and
    # "ACME" as one name: the recomputed values equal the cached ones and still tie out
    from tests.spreadsheet_app import convert, recalc_mismatches

    costed = _costed_two_spellings()
    path = tmp_path / "out.xlsx"
    info = RunInfo("in.xlsx", "0" * 64, None, dt.datetime(2026, 12, 7), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, runs=costed.runs)
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(path), str(tmp_path / "recalc"))
    assert checked > 30 and not mismatches, mismatches[:10]
    (tmp_path / "again").mkdir()
    table, total = _customer_rows(convert(str(path), str(tmp_path / "again")))
    assert table["Acme"]["shipments"] == 2 and table["Acme"]["total_cost"] == 1552.5
    assert round(sum(r["total_cost"] for r in table.values()), 2) == total == 2328.75


@pytest.mark.needs_soffice
def test_grouping_key_agrees_with_libreoffice_text_match(tmp_path):
    # LibreOffice Calc's = on text (the engine the formulas run in) against customer_key: the
    # module docstring's measured cases; the ligature is the known exception
    import xlsxwriter

    from costing.sheets.customers import customer_key
    from tests.spreadsheet_app import convert

    pairs = [("Acme", "ACME"), ("élan", "ÉLAN"), ("ΟΔΟΣ", "οδος"), ("Straße", "STRASSE"), ("a ", "a"),
             ("ﬁne", "FINE")]
    path = tmp_path / "eq.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet()
    for i, (a, b) in enumerate(pairs):
        ws.write_string(i, 0, a)
        ws.write_string(i, 1, b)
        ws.write_formula(i, 2, f"=SUMPRODUCT((A{i + 1}:A{i + 1}=B{i + 1})*1)", None, 0)
    wb.close()
    (tmp_path / "recalc").mkdir()
    got = [r[2] for r in openpyxl.load_workbook(convert(str(path), str(tmp_path / "recalc")),
                                                data_only=True).active.iter_rows(values_only=True)]
    ours = [int(customer_key(a) == customer_key(b)) for a, b in pairs]
    assert got == [1, 1, 1, 0, 0, 1] and ours == [1, 1, 1, 0, 0, 0]
