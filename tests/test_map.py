"""The Map picture: depot labels that never overlap, a legend off the data, routed tonnes
readable, land and borders when the outline data is installed, any place on Earth. Oracles:
matplotlib's own text and legend extents (a general-purpose library, measured after drawing),
a point-in-polygon test written here (ray casting), and place facts from memory (Utrecht lies in
the Netherlands; Sydney in Australia)."""

from __future__ import annotations

import itertools
import random
from dataclasses import replace

import pytest

from costing import pipeline
from costing.example import write_example
from costing.model import Depot, Lane
from costing.plan.analysis import LaneTotals
from costing.sheets import map as netmap


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    src = tmp_path_factory.mktemp("map") / "example.xlsx"
    write_example(str(src))
    model, _, _ = pipeline.load(str(src))
    costed = pipeline.run(model, pipeline.Options(analyses=False, scenarios=False))
    return model, costed.analysis.lanes


def _extents(fig, artists):
    renderer = fig.canvas.get_renderer()
    return [a.get_window_extent(renderer) for a in artists]


def _disjoint(a, b) -> bool:
    return a.x1 <= b.x0 or b.x1 <= a.x0 or a.y1 <= b.y0 or b.y1 <= a.y0


def _check_layout(fig, ax, legend, placed):
    fig.canvas.draw()  # final layout, then measure what matplotlib drew
    boxes = _extents(fig, placed)
    for (i, a), (j, b) in itertools.combinations(enumerate(boxes), 2):
        assert _disjoint(a, b), (placed[i].get_text(), placed[j].get_text())
    frame = ax.get_window_extent(fig.canvas.get_renderer())
    for t, b in zip(placed, boxes):
        assert frame.x0 <= b.x0 and b.x1 <= frame.x1 and frame.y0 <= b.y0 and b.y1 <= frame.y1, t.get_text()
    # the legend is beside the map, not on it
    assert _disjoint(legend.get_window_extent(fig.canvas.get_renderer()), frame)


def test_demo_labels_do_not_overlap_and_the_legend_is_off_the_map(demo):
    import matplotlib.pyplot as plt

    model, lanes = demo
    fig, ax, legend, placed, skipped = netmap.map_figure(model, lanes, "demo")
    try:
        _check_layout(fig, ax, legend, placed)
        with_coords = {d.depot_id for d in model.depots if d.latitude is not None}
        shown = {t.get_text().split()[0] for t in placed}
        assert shown | set(skipped) == with_coords and not shown & set(skipped)
        assert len(placed) >= 0.8 * len(with_coords)  # the demo's 38 depots mostly fit
        # names, not only ids: the operator's name shared by most depots is left off
        texts = [t.get_text() for t in placed]
        assert any(t.startswith("D11 Utrecht") for t in texts), texts
        # routed tonnes readable: the busiest lane's tonnes and round values below it in the legend
        top = max(u.tonnes for u in lanes)
        entries = [t.get_text() for t in legend.get_texts()]
        assert f"{top:,.0f} t (busiest lane)" in entries
        assert sum(e.endswith(" t") for e in entries) >= 2
    finally:
        plt.close(fig)


def test_crowded_depots_get_labels_that_never_overlap(demo):
    import matplotlib.pyplot as plt

    model, _ = demo
    # invented positions: 68 depots within a twentieth of a degree, two more 5 degrees away
    rng = random.Random(7)
    depots = tuple(Depot(f"X{i:02d}", f"Crowded Site Number {i}", 51.0 + rng.random() * 0.05,
                         4.0 + rng.random() * 0.05) for i in range(68))
    depots += (Depot("X68", "Far Away North", 55.0, 8.0), Depot("X69", "Far Away South", 50.0, 3.0))
    lanes = tuple(Lane(f"L{i}", depots[i].depot_id, depots[i + 1].depot_id, "road", None, None)
                  for i in range(69))
    crowded = replace(model, depots=depots, lanes=lanes, shipments=())
    totals = [LaneTotals(ln.lane_id, ln.from_depot, ln.to_depot, "road", 1, 10.0 * (i + 1))
              for i, ln in enumerate(lanes[:10])]
    fig, ax, legend, placed, skipped = netmap.map_figure(crowded, totals, "crowded")
    try:
        _check_layout(fig, ax, legend, placed)
        assert skipped  # not all fit: those are left off rather than overlapping
        assert len(placed) + len(skipped) == 70
    finally:
        plt.close(fig)


@pytest.mark.parametrize("where", [
    [(-33.87, 151.21), (-37.81, 144.96), (-27.47, 153.03)],  # Sydney, Melbourne, Brisbane
    [(78.22, 15.65), (69.65, 18.96), (70.66, 23.68)],  # far north: Longyearbyen, Tromso, Hammerfest
    [(-12.05, -77.04), (-16.40, -71.54), (-13.53, -71.97)],  # west and south: Lima, Arequipa, Cusco
    [(0.0, 0.0), (0.01, 0.01)],  # a tiny network
])
def test_the_map_draws_anywhere_on_earth(demo, where):
    import math

    import matplotlib.pyplot as plt

    model, _ = demo
    depots = tuple(Depot(f"P{i}", f"Place {i}", lat, lon) for i, (lat, lon) in enumerate(where))
    lanes = tuple(Lane(f"L{i}", f"P{i}", f"P{i + 1}", "road", None, None) for i in range(len(where) - 1))
    small = replace(model, depots=depots, lanes=lanes, shipments=())
    totals = [LaneTotals("L0", "P0", "P1", "road", 1, 12.0)]
    fig, ax, legend, placed, skipped = netmap.map_figure(small, totals, "anywhere")
    try:
        _check_layout(fig, ax, legend, placed)
        assert not skipped  # a few depots far apart: every one labelled
        (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
        assert all(x0 < lon < x1 and y0 < lat < y1 for lat, lon in where)  # every depot in view
        # equirectangular with standard parallel at mid latitude: a degree of latitude is drawn
        # 1/cos(latitude) times as long as a degree of longitude (the projection's definition)
        mid = (min(lat for lat, _ in where) + max(lat for lat, _ in where)) / 2
        a = ax.transData.transform([(0.0, 0.0), (1.0, 0.0), (0.0, 1.0)])
        ratio = (a[2][1] - a[0][1]) / (a[1][0] - a[0][0])
        assert ratio == pytest.approx(1 / max(0.2, math.cos(math.radians(mid))), rel=0.01)
    finally:
        plt.close(fig)
    assert netmap.draw_map(small, totals, "anywhere")[:8] == b"\x89PNG\r\n\x1a\n"


def test_no_map_without_two_depots_with_coordinates(demo):
    model, _ = demo
    depots = (Depot("A", "A", None, None), Depot("B", "B", 52.0, 5.0))
    assert netmap.draw_map(replace(model, depots=depots, lanes=(), shipments=()), [], "t") is None


def test_without_outline_data_the_map_still_draws(demo, monkeypatch):
    model, lanes = demo
    monkeypatch.setattr(netmap, "_country_rings", lambda: ())
    assert netmap.draw_map(model, lanes, "no outlines")[:8] == b"\x89PNG\r\n\x1a\n"


def _inside(pt, ring) -> bool:
    # ray casting, even-odd rule (written here; shares nothing with the map code)
    x, y = pt
    hit = False
    for (x1, y1), (x2, y2) in zip(ring, ring[1:] + ring[:1]):
        if (y1 > y) != (y2 > y) and x < x1 + (y - y1) * (x2 - x1) / (y2 - y1):
            hit = not hit
    return hit


@pytest.mark.parametrize("place", [(5.12, 52.09), (151.21, -33.87)])  # Utrecht, Sydney (from memory)
def test_outlines_hold_known_places_on_land(place):
    pytest.importorskip("countryinfo")
    x, y = place
    rings = netmap.country_outlines(x - 1, y - 1, x + 1, y + 1)
    assert rings and any(_inside(place, list(r)) for r in rings)
    # and the North Sea west of the Dutch coast is in none of them (52.3 N, 3.0 E)
    sea = netmap.country_outlines(2.0, 51.5, 4.0, 53.0)
    assert not any(_inside((3.0, 52.3), list(r)) for r in sea)
