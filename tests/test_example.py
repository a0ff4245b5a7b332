"""The bundled example: committed file current, big enough, and showing what it must show.
(The example is invented demo data; these tests check its shape, not any check values.)"""

from __future__ import annotations

import openpyxl
from pipeline_helpers import route_all

from costing.check.validate import validate
from costing.example import example_data, write_example
from costing.workbook.reader import read_workbook

COMMITTED = "examples/hollowmere-week.xlsx"


def _rows(path):
    wb = openpyxl.load_workbook(path)
    return {ws.title: [[c.value for c in r] for r in ws.iter_rows()] for ws in wb}


def test_committed_example_is_current(tmp_path):
    p = tmp_path / "ex.xlsx"
    write_example(str(p))
    assert _rows(p) == _rows(COMMITTED), "run write_example('examples/hollowmere-week.xlsx')"


def test_example_size_and_story():
    d = example_data()
    assert len(d["Depots"]) >= 25 and len(d["Lanes"]) >= 60 and len(d["Shipments"]) >= 40
    assert len({r["vehicle"] for r in d["Rates"]}) >= 4
    assert len({r["mode"] for r in d["Lanes"]}) >= 2
    model = validate(read_workbook(COMMITTED))
    assert not [p for p in model.problems if p.severity == "error"]
    typo = [p for p in model.problems if "straight line" in p.message]
    assert len(typo) == 1 and typo[0].sheet == "Lanes"
    results, _stats, _ = route_all(model)
    status = [r.status for r in results]
    assert status.count("no_route") == 1
    assert status.count("routed") == len(results) - 1
