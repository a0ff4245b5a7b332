"""The collector's thresholds during a run (costing.collector): raised while a week is costed and
written, put back after it, also when the run fails; the costed workbook is the same cell for cell
with the interpreter's default thresholds (the collector frees memory, it never changes a value).
Reference: Python's own gc module (documented thresholds, gc.get_threshold)."""

from __future__ import annotations

import doctest
import gc

import openpyxl
import pytest

import costing.collector as collector
from costing import pipeline


def test_docstring_examples():
    assert doctest.testmod(collector).failed == 0


def _thresholds_seen_in(monkeypatch, module, name: str) -> list:
    """The collector's thresholds at each call of ``module.name`` (wrapped for the test)."""
    seen = []
    real = getattr(module, name)

    def spy(*args, **kwargs):
        seen.append(gc.get_threshold())
        return real(*args, **kwargs)

    monkeypatch.setattr(module, name, spy)
    return seen


def test_thresholds_raised_in_the_run_and_put_back(monkeypatch, tmp_path):
    from costing.example import write_example

    path = str(tmp_path / "in.xlsx")
    write_example(path)
    model, problems, _note = pipeline.load(path)
    assert model is not None
    before = gc.get_threshold()
    seen = _thresholds_seen_in(monkeypatch, pipeline, "plan_week")
    pipeline.run(model)
    assert seen and all(t == collector.THRESHOLDS for t in seen)
    assert gc.get_threshold() == before

    def fail(*_a, **_k):
        raise RuntimeError("stop")

    monkeypatch.setattr(pipeline, "plan_week", fail)
    with pytest.raises(RuntimeError):
        pipeline.run(model)
    assert gc.get_threshold() == before


def test_same_workbook_with_the_default_thresholds(cli, tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    code, _o, err = cli("demo", "-o", str(tmp_path / "tuned.xlsx"))
    assert code == 0, err
    monkeypatch.setattr(collector, "THRESHOLDS", gc.get_threshold())
    code, _o, err = cli("demo", "-o", str(tmp_path / "default.xlsx"))
    assert code == 0, err
    a = openpyxl.load_workbook(tmp_path / "tuned.xlsx")
    b = openpyxl.load_workbook(tmp_path / "default.xlsx")
    assert a.sheetnames == b.sheetnames
    for name in a.sheetnames:
        if name == "Run":  # run times differ
            continue
        va = [[c.value for c in row] for row in a[name].iter_rows()]
        vb = [[c.value for c in row] for row in b[name].iter_rows()]
        assert va == vb, name


def test_the_command_line_run_is_one_block(cli, tmp_path, monkeypatch):
    """Between the run and the writing (the map's imports and figure), the thresholds stay raised:
    `costing run` is one block; after it the previous thresholds are back."""
    import costing.sheets.map as map_module

    before = gc.get_threshold()
    seen = _thresholds_seen_in(monkeypatch, map_module, "draw_map")
    code, _o, err = cli("demo", "-o", str(tmp_path / "out.xlsx"))
    assert code == 0, err
    assert seen == [collector.THRESHOLDS]
    assert gc.get_threshold() == before


def test_blocks_in_two_threads_hold_the_thresholds_until_the_last_ends():
    # two blocks open at once in two threads (as weeks costed at once on threads are): the first
    # ends while the second is still open; the raised thresholds stay until the second ends, and
    # the thresholds found before the first are back after both (Python's gc module is one per
    # process)
    import threading

    before = gc.get_threshold()
    first_in, second_in, first_out = threading.Event(), threading.Event(), threading.Event()
    seen = {}

    def first():
        with collector.fewer_collections():
            first_in.set()
            assert second_in.wait(30)
        first_out.set()

    def second():
        assert first_in.wait(30)
        with collector.fewer_collections():
            second_in.set()
            assert first_out.wait(30)
            seen["second, after the first ended"] = gc.get_threshold()

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    # the second thread opens its block only once the first's is open; the first closes its
    # block while the second's is open
    threads[1].start()
    threads[0].start()
    for t in threads:
        t.join(60)
    assert seen == {"second, after the first ended": collector.THRESHOLDS}
    assert gc.get_threshold() == before
