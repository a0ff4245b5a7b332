"""Two runs of one input without SOURCE_DATE_EPOCH differ only where the Run sheet's
`reproducible?` note says: 'run at (UTC)', the 'seconds: ...' rows and the file's creation time.
SOURCE_DATE_EPOCH is the reproducible-builds.org convention (seconds since 1970-01-01 UTC; from
memory). The expectation is the note's own list, checked cell by cell with openpyxl."""

from __future__ import annotations

import zipfile

import openpyxl


def _cells(path: str) -> dict:
    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        out = {}
        for name in wb.sheetnames:
            ws = wb[name]
            if not hasattr(ws, "iter_rows"):
                continue
            for r, row in enumerate(ws.iter_rows(values_only=True), start=1):
                label = row[0] if name == "Run" and row else None
                for c, v in enumerate(row, start=1):
                    out[(name, r, c, label)] = v
        return out
    finally:
        wb.close()


def test_runs_differ_only_where_the_note_says(cli, make_input, tmp_path, monkeypatch):
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    inp = make_input()
    a, b = str(tmp_path / "a.xlsx"), str(tmp_path / "b.xlsx")
    assert cli("run", inp, "-o", a)[0] == 0
    assert cli("run", inp, "-o", b)[0] == 0
    ca, cb = _cells(a), _cells(b)
    assert ca.keys() == cb.keys()
    differ = {k for k in ca if ca[k] != cb[k]}
    allowed = {k for k in ca if k[0] == "Run" and k[2] == 2 and
               (k[3] == "run at (UTC)" or str(k[3]).startswith("seconds: "))}
    assert differ <= allowed, differ - allowed
    note = next(v for k, v in ca.items() if k[3] == "reproducible?" and k[2] == 2)
    assert note.startswith("no:") and "'run at (UTC)'" in note and "'seconds: ...'" in note
    assert "SOURCE_DATE_EPOCH" in note
    # outside the cells, only docProps/core.xml (the creation time) may differ
    with zipfile.ZipFile(a) as za, zipfile.ZipFile(b) as zb:
        assert za.namelist() == zb.namelist()
        for name in za.namelist():
            if name.startswith("xl/worksheets/") or name in ("xl/sharedStrings.xml", "docProps/core.xml"):
                continue  # cell contents, compared above
            assert za.read(name) == zb.read(name), name


def test_note_says_yes_with_source_date_epoch(cli, make_input, tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    out = str(tmp_path / "a.xlsx")
    assert cli("run", make_input(), "-o", out)[0] == 0
    run = dict(openpyxl.load_workbook(out)["Run"].iter_rows(min_row=2, max_col=2, values_only=True))
    assert run["reproducible?"].startswith("yes: SOURCE_DATE_EPOCH=1767225600")
