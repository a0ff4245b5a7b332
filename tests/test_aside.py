"""Work set aside in a second process (costing.aside) and its users: the trade-off searches
beside the plan stage, the map beside the sheets, the worksheet files assembled in two
processes. The reference everywhere is the same work done in one process (COSTING_ASIDE=0 or
a plain call): the results and the workbook's bytes must be the same."""

from __future__ import annotations

import os
import shutil
import threading
import time
import zipfile
from pathlib import Path

import pytest

from costing import aside, cli, pipeline
from costing.network.build import build_graph
from costing.plan.route import Router
from costing.sheets import assemble

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "hollowmere-week.xlsx"
needs_fork = pytest.mark.skipif(not aside.available(), reason="forking is not available here "
                                "(one core, no os.fork, or other threads running)")


def _parent_only(pid: int, value):
    """`value` in the process `pid`; any other process dies without answering."""
    if os.getpid() != pid:
        os._exit(3)
    return value


def _fail(pid: int):
    raise ValueError(f"failed in {'the parent' if os.getpid() == pid else 'a child'}")


def _touch(box: list) -> int:
    box.append(os.getpid())
    return len(box)


@needs_fork
def test_a_forked_job_gives_the_plain_call_s_value():
    with aside.start(sorted, [3, 1, 2], reverse=True) as job:
        assert job.forked
        assert job.result() == [3, 2, 1]
        assert job.result() == [3, 2, 1]  # kept


@needs_fork
def test_what_the_child_changes_stays_in_the_child():
    box: list = []
    with aside.start(_touch, box) as job:
        assert job.result() == 1
    assert box == []


@needs_fork
def test_a_child_that_dies_costs_time_not_the_result():
    with aside.start(_parent_only, os.getpid(), {"a": 1.5}) as job:
        assert job.forked
        assert job.result() == {"a": 1.5}  # computed here after the child exited with 3


@needs_fork
def test_a_series_sends_each_value_and_the_rest_is_made_here():
    pid = os.getpid()
    with aside.series([(sum, ([1, 2],), {}), (_parent_only, (pid, 7), {}), (max, ([4, 9],), {})]) as job:
        assert job.forked
        assert job.result(0) == 3  # sent by the child before it died
        assert job.result(2) == 9 and job.result(1) == 7  # the child gave no more: made here


@needs_fork
def test_an_error_is_raised_here_with_its_own_traceback():
    with aside.start(_fail, os.getpid()) as job:
        with pytest.raises(ValueError, match="failed in the parent"):
            job.result()


@needs_fork
def test_close_stops_a_child_whose_value_is_not_wanted():
    job = aside.start(time.sleep, 60)
    pid = job._pid
    t0 = time.perf_counter()
    job.close()
    assert time.perf_counter() - t0 < 10
    with pytest.raises(ChildProcessError):  # reaped: no zombie left behind
        os.waitpid(pid, os.WNOHANG)


def test_no_fork_when_switched_off_or_with_threads(monkeypatch):
    monkeypatch.setenv(aside.ENV, "0")
    assert not aside.available()
    job = aside.start(sum, [1, 2])
    assert not job.forked and job.result() == 3
    monkeypatch.delenv(aside.ENV)
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        assert not aside.available()  # a second thread: forking could leave a lock held
    finally:
        stop.set()
        t.join()
    assert not aside.start(sum, [1], fork=False).forked


@needs_fork
def test_a_frontier_searched_elsewhere_is_priced_and_recorded_as_if_searched_here():
    from tests.test_frontier_clock import random_model

    model = random_model(16, "eu_561_2006")
    s = model.shipments[1]
    here = Router(model, build_graph(model))
    want = here.frontier(s, 50, clock_labels=2)  # falls back: a problem and a fallback recorded
    elsewhere = Router(model, build_graph(model))
    with aside.start(elsewhere.frontier_found, s, 50, clock_labels=2) as job:
        found = job.result()
    assert elsewhere.problems == [] and not hasattr(elsewhere, "frontier_fallbacks")
    got = elsewhere.frontier(s, 50, found=found)
    assert got == want
    assert elsewhere.problems == here.problems and here.problems
    assert elsewhere.frontier_fallbacks == here.frontier_fallbacks == {s.shipment_id}
    assert elsewhere.stats.searches == here.stats.searches
    assert set(elsewhere.networks) == set(here.networks)


@needs_fork
@pytest.mark.parametrize("week", ["example", "generated"])
def test_the_pipeline_gives_the_same_analysis_with_the_searches_aside(monkeypatch, tmp_path, week):
    path = str(EXAMPLE)
    if week == "generated":  # seeded, invented: batched searches (the example has too few per origin)
        from benchmarks.bench_workbook import make_input

        path = str(tmp_path / "week.xlsx")
        make_input(path, 60, 150, 120, 4, settings={})
    model, problems, _digest = pipeline.load(path)
    assert model is not None
    monkeypatch.setattr(pipeline, "ASIDE_SHIPMENTS", 1)
    one = pipeline.run(model, pipeline.Options(scenarios=False))
    two = pipeline.run(model, pipeline.Options(scenarios=False, aside=True))
    assert two.stats.seconds.get("trade-off searches in a second process, beside the plan "
                                 "(within analyses)", 0.0) > 0.0  # it did run aside
    assert two.analysis.frontiers == one.analysis.frontiers and one.analysis.frontiers
    assert two.analysis.alternatives == one.analysis.alternatives
    assert two.results == one.results and two.problems == one.problems
    counts = ("searches", "networks", "batches", "batched", "settled", "pushed")
    assert [getattr(two.stats, k) for k in counts] == [getattr(one.stats, k) for k in counts]
    assert two.stats.bounds == one.stats.bounds and list(two.stats.bounds) == list(one.stats.bounds)


def _parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist() if not n.startswith("docProps")}


@needs_fork
def test_the_costed_workbook_is_the_same_bytes_with_work_aside(tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    inp = tmp_path / "in.xlsx"
    shutil.copy(EXAMPLE, inp)
    before = inp.read_bytes()
    monkeypatch.setenv(aside.ENV, "0")
    assert cli.main(["run", str(inp), "-o", str(tmp_path / "one.xlsx"), "--quiet"]) == 0
    monkeypatch.delenv(aside.ENV)
    # every part of the run aside, however small the week: trade-offs, map, worksheet files
    monkeypatch.setattr(pipeline, "ASIDE_SHIPMENTS", 1)
    monkeypatch.setattr(assemble, "ASIDE_CELLS", 0)
    forks = []
    series = aside.series

    def counted(calls, fork=None):  # aside.start goes through aside.series too
        job = series(calls, fork)
        forks.extend((getattr(fn, "__name__", "?"), job.forked) for fn, _a, _k in calls)
        return job

    monkeypatch.setattr(aside, "series", counted)
    assert cli.main(["run", str(inp), "-o", str(tmp_path / "two.xlsx"), "--quiet"]) == 0
    assert {name for name, forked in forks if forked} == {"prepared", "search_frontiers", "draw_map",
                                                          "assemble"}
    assert _parts(tmp_path / "one.xlsx") == _parts(tmp_path / "two.xlsx")
    assert inp.read_bytes() == before


class _Sheet:
    """Just what `assemble.split` looks at."""

    def __init__(self, name: str, n: int, ok: bool = True):
        self.name, self.n, self.ok = name, n, ok


def test_split_deals_the_heaviest_sheets_to_the_lighter_process(monkeypatch):
    monkeypatch.setattr(assemble, "cells", lambda ws: ws.n)
    monkeypatch.setattr(assemble, "eligible", lambda ws: ws.ok)
    files = [(_Sheet(n, w, ok), f"f{k}") for k, (n, w, ok) in
             enumerate([("Summary", 200_000, True), ("Runs", 800_000, True), ("Legs", 4_500_000, True),
                        ("Trade-offs", 150_000, True), ("Lanes", 20_000, False)])]
    assert [ws.name for ws, _f in assemble.split(files)] == ["Legs"]
    files[2][0].ok = False  # Legs stays here: the child, the lighter side, takes the others it may
    assert [ws.name for ws, _f in assemble.split(files)] == ["Runs", "Summary", "Trade-offs"]
    small = [(_Sheet("Summary", 1_000), "f0"), (_Sheet("Legs", 2_000), "f1")]
    assert assemble.split(small) == []  # below ASIDE_CELLS: no fork


def test_a_sheet_with_an_unnumbered_format_or_a_link_stays_here(tmp_path):
    import xlsxwriter

    wb = xlsxwriter.Workbook(str(tmp_path / "t.xlsx"))
    ws = wb.add_worksheet()
    f1, f2, f3 = wb.add_format({"bold": True}), wb.add_format({"bold": True}), wb.add_format({"italic": True})
    ws.write_number(0, 0, 1.0, f1)
    assert not assemble.indexed(ws)  # xlsxwriter numbers f1 only when the sheet is assembled
    f1._get_xf_index()
    ws.write_number(1, 0, 2.0, f2)  # equal to f1: takes f1's number, records nothing
    assert assemble.indexed(ws) and assemble.eligible(ws)
    ws.set_column(3, 3, 10, f3)
    assert not assemble.indexed(ws)
    f3._get_xf_index()
    assert assemble.eligible(ws)
    ws.write_url(5, 0, "https://example.org/")
    assert not assemble.eligible(ws)  # its link goes to a relationships file written here
    wb.close()



@needs_fork
def test_batches_made_aside_for_other_shipments_are_not_adopted(tmp_path):
    from benchmarks.bench_workbook import make_input
    from costing.plan.analysis import Aside
    from costing.plan.route import objective_for
    from costing.price.cost import ROUTED

    make_input(str(tmp_path / "week.xlsx"), 60, 150, 120, 4, settings={})  # seeded, invented
    model, _problems, _digest = pipeline.load(str(tmp_path / "week.xlsx"))
    router = Router(model, build_graph(model))
    router.prepare(model.shipments, None)
    results = [router.route(s, objective_for(model, s, None)) for s in model.shipments]
    with Aside(model, router, results, "cost") as found:
        ships = [r.shipment for r in results if r.status == ROUTED and r.objective != "time"]
        before = dict(router._batched)
        assert not found.adopt(router, "time", ships[1:])  # the plan dropped a shipment: not these
        assert router._batched == before
        assert found.adopt(router, "time", ships)
        assert len(router._batched) > len(before) > 0
        adopted = (dict(router._batched), router.stats.batches, router.stats.settled, router.stats.pushed)
        router.prepare(ships, "time", force=True)  # nothing left for it: analyse skips it
        assert (dict(router._batched), router.stats.batches, router.stats.settled,
                router.stats.pushed) == adopted
        here = Router(model, build_graph(model))
        here.prepare(model.shipments, None)
        for s in model.shipments:
            here.route(s, objective_for(model, s, None))
        here.prepare(ships, "time", force=True)
        assert {k: res for k, (_cn, res) in router._batched.items()} == \
            {k: res for k, (_cn, res) in here._batched.items()}
        assert (router.stats.batches, router.stats.settled) == (here.stats.batches, here.stats.settled)


def test_a_lexicographic_weight_pickles_to_itself():
    import pickle

    from costing.network.lex import Lex

    w = Lex(7.49, 106193, 3)
    back = pickle.loads(pickle.dumps(w))
    assert type(back) is Lex and tuple(back) == (7.49, 106193, 3)  # was Lex((7.49, 106193, 3), 0, 0)


def test_single_process_forks_nothing(tmp_path, monkeypatch):
    monkeypatch.setattr(pipeline, "ASIDE_SHIPMENTS", 1)
    monkeypatch.setattr(assemble, "ASIDE_CELLS", 0)
    forked = []
    series = aside.series

    def counted(calls, fork=None):
        job = series(calls, fork)
        forked.append(job.forked)
        return job

    monkeypatch.setattr(aside, "series", counted)
    argv = ["run", str(EXAMPLE), "-o", str(tmp_path / "one.xlsx"), "--quiet", "--single-process"]
    assert cli.main(argv) == 0
    assert forked and not any(forked)  # the jobs were made, all in this process
    with aside.one_process():
        assert not aside.available()


def test_the_addon_costs_in_one_process(tmp_path, monkeypatch):
    from costing.addon import core

    seen = []
    monkeypatch.setattr(cli, "main", lambda argv: seen.append(argv) or 1)
    core.cost(str(EXAMPLE), "week.xlsx", str(tmp_path / "out.xlsx"))
    assert seen and "--single-process" in seen[0]
