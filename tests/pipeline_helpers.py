"""Route and price a Model through the one pipeline (costing.pipeline.run), analyses and
scenarios off: what the tests of routing and costing need."""

from __future__ import annotations

from costing import pipeline


def route_all(model, objective=None):
    """(results, search statistics, problems raised while routing) for every shipment."""
    costed = pipeline.run(model, pipeline.Options(objective=objective, analyses=False, scenarios=False))
    return costed.results, costed.stats, costed.problems[len(model.problems):]
