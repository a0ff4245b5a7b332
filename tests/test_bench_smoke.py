"""The search benchmark's smoke mode: a ~2,000-node road-like network, both W2 workloads and the
point-to-point queries, every available engine. Checks only that it runs and that every engine
gives the same cost for every shipment it answered; it asserts no timing (figures are printed
by `python -m benchmarks.bench_search`, see benchmarks/README.md).

Source of truth for the costs: the reference libraries themselves (scipy.sparse.csgraph.dijkstra,
networkx dijkstra and astar_path, rustworkx when installed), compared with our engine's.
"""

from __future__ import annotations

import importlib.util

from benchmarks import bench_search


def test_smoke_mode_runs_and_all_engines_agree(capsys):
    reports = bench_search.main(["--smoke"])
    out = capsys.readouterr().out
    assert len(reports) == 1
    rep = reports[0]
    assert rep.nodes == 2000
    engines = {r.engine for r in rep.runs}
    expected = {"ours", "scipy", "scipy (costs only)", "networkx-dijkstra", "networkx-astar"}
    if importlib.util.find_spec("rustworkx") is not None:
        expected.add("rustworkx")
    else:
        assert "rustworkx" in rep.skipped
    assert expected <= engines
    for r in rep.runs:
        assert r.answered > 0, r
        assert r.mismatches == 0, r
    assert rep.all_agree
    # A* never settles more than Dijkstra stopped at the target (same queries)
    assert rep.p2p["astar_settled"] <= rep.p2p["dijkstra_settled"]
    assert "| engine |" in out and "all costs agree" in out


def test_workbook_benchmark_smoke(capsys):
    # W1 end to end through workbooks on a small network: it runs and prints its ratio line
    from benchmarks.bench_workbook import main

    main(["--smoke"])
    out = capsys.readouterr().out
    assert "costing run end to end" in out and "ratio" in out


def test_week_benchmark_smoke(capsys):
    # every sheet on, small: it runs, prints the stage table and the ratio against the floor
    from benchmarks.bench_week import main

    report = main(["--smoke"])
    out = capsys.readouterr().out
    assert "ratio end to end / floor" in out and "sheet: comparison" in out
    assert report["counts"]["comparison shipments"] > 0 and report["counts"]["trade-off routes"] > 0


def test_tariffs_benchmark_smoke(capsys):
    # make or buy at scale, small: it runs and prints its table and ratio (no timing asserted)
    from benchmarks.bench_tariffs import main

    main(["--smoke"])
    out = capsys.readouterr().out
    assert "ratio with / without tariffs" in out and "with tariffs" in out
