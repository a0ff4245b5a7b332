"""The pipeline: the one place where the stages are strung together.

::

    workbook -read-> rows -check-> Model -build-> Network -route-> Routes -plan-> Runs
             -price-> Costed -write-> workbook

``run(model, options) -> Costed`` takes a checked Model to its costed result. The command
line, the scenarios (each scenario is ``run`` on a changed copy of the Model), the benchmarks
and the tests all call it; nobody else calls the stages in sequence. ``load`` (read and check)
and ``write`` (the costed workbook, written atomically by the caller) are the two ends, so the
command line and any other front end open and write workbooks the same way.

What ``run`` guarantees:

- every shipment of the Model gets exactly one result, in the Model's order, routed or with
  the reason it was not (``no_route``, ``rejected``);
- a routed shipment's route is optimal under its objective (the search core's proof, in
  ``costing.network.search``) and its total is the sum of its rounded legs (``costing.price``);
- the Model is never changed (records are frozen); scenarios run on changed copies.

The plan stage (``costing.plan.week``) sits between route and price: loads ready on the same
day share vehicle runs on the lanes they have in common (Settings ``consolidate``), each pays a
tonne-km share of its runs, and with ``consolidate = no`` every leg is a run of its own, so each
total is the shipment's stand-alone total.
"""

from __future__ import annotations

import contextlib
import os
import time
from collections.abc import Callable
from dataclasses import dataclass, field, replace

from costing.collector import fewer_collections
from costing.model import Model, Problem
from costing.plan.analysis import Analysis, Aside, ScenarioRun, analyse, lane_usage
from costing.plan.route import Router, RunStats, objective_for
from costing.plan.week import VehicleRun, plan_week
from costing.price.cost import ROUTED, CostedShipment

Progress = Callable[[int, int], None]
# a week routing this many shipments makes its analyses' searches in a second process (Options.aside):
# below it, starting the process (a fork, the answers pickled back) costs more than it saves
ASIDE_SHIPMENTS = 500
PLAN_OBJECTIVE = "cost"  # the objective the plan stage routes under (hub halves, re-routes)


def _no_progress(_done: int, _total: int) -> None:
    return None


@dataclass(frozen=True)
class Options:
    """How to run the pipeline.

    Attributes
    ----------
    objective : str or None
        Objective for shipments that name none (overrides Settings ``objective``); one of
        ``costing.objectives.OBJECTIVES``.
    analyses : bool
        Run the comparison across objectives and the cost-time trade-offs (each only when
        Settings asks for it). Off for scenario runs, which show totals and routes only.
    scenarios : bool
        Cost every scenario of the Model beside the base case.
    progress : callable, optional
        ``progress(stage) -> callback(done, total)``; stage is ``"routing"``,
        ``"comparing"`` or ``"scenarios"``. None: silent.
    aside : bool
        Make the analyses' searches (the comparison's batched searches, the cost-time
        trade-offs) in a second process (`costing.aside`) while this one plans the week, when
        the week routes ASIDE_SHIPMENTS or more shipments and forking is available; the results
        are the same. Off by default (the command line turns it on).
    """

    objective: str | None = None
    analyses: bool = True
    scenarios: bool = True
    progress: Callable[[str], Progress] | None = None
    aside: bool = False

    def bar(self, stage: str) -> Progress:
        """The progress callback of `stage` (a no-op when there is no progress)."""
        return self.progress(stage) if self.progress else _no_progress


@dataclass
class Costed:
    """The pipeline's result: everything the output workbook is written from.

    Attributes
    ----------
    model : Model
        The inputs the run costed.
    results : list of CostedShipment
        One per shipment, in the Model's order.
    problems : list of Problem
        The Model's findings followed by those of routing (e.g. a shipment split over vehicles).
    stats : RunStats
        Search statistics; ``stats.seconds`` holds the search's own timings.
    analysis : Analysis
        Best route per objective, trade-offs and lane totals.
    scenarios : list of ScenarioRun
        One per scenario of the Model (empty when ``Options.scenarios`` is off).
    seconds : dict of str to float
        Wall seconds of each stage, in the order they ran.
    runs : list of VehicleRun
        The vehicle runs of the week (one per leg when Settings ``consolidate`` is no).
    """

    model: Model
    results: list[CostedShipment]
    problems: list[Problem]
    stats: RunStats
    analysis: Analysis
    scenarios: list[ScenarioRun] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)  # stage -> wall seconds
    runs: list[VehicleRun] = field(default_factory=list)


@fewer_collections()  # costing.collector: the same results, fewer full collections
def run(model: Model, options: Options | None = None) -> Costed:
    """Route, plan and price every shipment of a checked Model.

    Parameters
    ----------
    model : Model
        A Model without errors (``load`` returns one, or build it in code).
    options : Options, optional
        Defaults: the Settings objective, analyses and scenarios as Settings ask, no progress.

    Returns
    -------
    Costed

    Raises
    ------
    ValueError
        A Model built in code holds a lane with a negative cost weight (validation refuses
        such input workbooks).

    Examples
    --------
    >>> from costing import pipeline
    >>> costed = pipeline.run(model)                     # doctest: +SKIP
    >>> sum(r.total_cost for r in costed.results)        # doctest: +SKIP
    """
    from costing.check.scenarios import apply_scenario
    from costing.network.build import build_graph

    options = options or Options()
    times: dict[str, float] = {}
    t0 = time.perf_counter()
    graph = build_graph(model)
    times["build network"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    router = Router(model, graph)
    router.prepare(model.shipments, options.objective)
    bar = options.bar("routing")
    results = []
    total = len(model.shipments)
    for k, s in enumerate(model.shipments):
        results.append(router.route(s, objective_for(model, s, options.objective)))
        bar(k + 1, total)
    times["search and cost"] = time.perf_counter() - t0

    with _analyses_aside(model, router, results, options) as found:
        t0 = time.perf_counter()
        week = plan_week(model, lambda s: router.route(s, PLAN_OBJECTIVE, notes=False), results,
                         lambda ships: router.prepare(ships, PLAN_OBJECTIVE))
        results = week.results
        router.problems += week.problems
        times["plan (vehicle runs)"] = time.perf_counter() - t0

        t0 = time.perf_counter()
        if options.analyses:
            analysis = analyse(model, router, results, options.bar("comparing"), week.runs, found)
            times["comparison and trade-offs"] = time.perf_counter() - t0
        else:
            analysis = Analysis(lanes=lane_usage(week.runs))

    runs: list[ScenarioRun] = []
    if options.scenarios and model.scenarios:
        t0 = time.perf_counter()
        bar = options.bar("scenarios")
        sub = replace(options, analyses=False, scenarios=False, progress=None)
        for k, sc in enumerate(model.scenarios):
            changed = run(apply_scenario(model, sc), sub)
            runs.append(ScenarioRun(sc, changed.results, changed.stats, changed.runs))
            bar(k + 1, len(model.scenarios))
        times["scenarios"] = time.perf_counter() - t0

    router.stats.networks = len(router.networks)
    return Costed(model, results, list(model.problems) + router.problems, router.stats, analysis, runs,
                  times, week.runs)


@contextlib.contextmanager
def _analyses_aside(model: Model, router: Router, results: list[CostedShipment], options: Options):
    """`costing.plan.analysis.Aside`: the analyses' searches in a second process while the block
    runs (None when Options.aside is off, no analyses are asked, the week is small or forking
    is not available); the child is stopped if the block ends without its answers."""
    from costing import aside

    st = model.settings
    routed = sum(r.status == ROUTED for r in results)
    if not (options.aside and options.analyses and routed >= ASIDE_SHIPMENTS and aside.available()
            and (st.compare_objectives == "yes" or int(st.frontier_max_routes) > 0)):
        yield None
        return
    with Aside(model, router, results, PLAN_OBJECTIVE) as found:
        yield found


@fewer_collections()  # costing.collector
def load(path: str, network: bool = True) -> tuple[Model | None, list[Problem], str | None]:
    """Read and check an input workbook.

    Parameters
    ----------
    path : str
        The input workbook (.xlsx); opened read-only, never changed.
    network : bool
        Read the network file Settings ``network_file`` names (``costing.network.netfile``): its
        depots and lanes are added to the sheets'. A missing or damaged file is one error at the
        setting's cell, and no Model. False: the sheets alone (``costing import-network``, which
        replaces the file).

    Returns
    -------
    model : Model or None
        None when the file cannot be read at all.
    problems : list of Problem
        Every finding, errors first where the file cannot be read.
    sha256 : str or None
        SHA-256 of the file's bytes, for the Run sheet.
    """
    from costing.check.validate import validate
    from costing.errors import InputError
    from costing.workbook.reader import read_workbook

    try:
        raw = read_workbook(path)
    except InputError as e:
        return None, list(e.problems), None
    net, problem = _network_file(raw, path) if network else (None, None)
    if problem is not None:
        return None, [problem], raw.sha256
    model = validate(raw, net)
    return model, list(model.problems), raw.sha256


def _network_file(raw, path: str):
    """(FileNetwork, None) when Settings ``network_file`` names a readable network file,
    (None, None) when it names none, (None, Problem at the setting's cell) when it cannot be read."""
    from costing.check.validate import FileNetwork
    from costing.contract.inputs import normalise_header
    from costing.model import ERROR
    from costing.network.netfile import NetworkFileError, read_network_file

    sheet = raw.sheets.get("Settings")
    if sheet is None:
        return None, None
    for rr in sheet.rows:
        if normalise_header(rr.values.get("setting")) != "network_file" or "value" in rr.formulas:
            continue
        value = rr.values.get("value")
        name = "" if value is None else str(value).strip()
        if not name:
            return None, None
        cell = sheet.cell("value", rr.row)
        full = os.path.join(os.path.dirname(os.path.abspath(path)), name)
        try:
            depots, lanes = read_network_file(full)
        except NetworkFileError as e:
            return None, Problem(ERROR, sheet.title, cell, f"network_file '{name}': {e.message}", e.fix)
        return FileNetwork(depots, lanes, sheet.title, cell, name), None
    return None, None
