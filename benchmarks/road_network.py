"""A seeded generator of road-like lane networks for the search benchmarks.

Points are placed in a square region (km): a share of them uniform, the rest in Gaussian clusters
(towns), so the density varies as on a road map. Neighbouring points are joined by the edges of
their Delaunay triangulation (scipy.spatial), a planar graph with about three edges per point,
each edge a two-way lane. Per lane:

    km    = straight line x detour, detour uniform in [1.05, 1.5]
    speed = uniform in [50, 110] km/h, hours = km / speed
    cost  = ROUND(km x per_km, 2) + ROUND(hours x per_hour, 2)      (money in cents, as the product)

The two directions of a lane share km and hours. Everything follows from the seed, so the same
arguments give the same network on any machine with the same numpy and scipy.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

PER_KM = 1.15  # currency per km (invented, a plausible truck rate)
PER_HOUR = 38.0  # currency per driving hour (invented)


@dataclass
class RoadNetwork:
    """Arcs u -> v (both directions of each lane), node coordinates in km, and the least cost
    per straight-line km over all arcs (for the straight-line lower bound)."""

    n: int
    xy: np.ndarray  # (n, 2) float64, km
    tail: np.ndarray  # (m,) int32
    head: np.ndarray  # (m,) int32
    km: np.ndarray  # (m,) float64
    hours: np.ndarray  # (m,) float64
    cost: np.ndarray  # (m,) float64
    rate_per_km: float  # min cost / straight-line km over the arcs

    @property
    def m(self) -> int:
        return int(self.tail.shape[0])

    def straight_line_bound(self, target: int) -> np.ndarray:
        """Straight-line km to target x the least cost per straight-line km: a consistent lower
        bound on the cost (each arc costs at least rate x its straight line, and the straight
        line obeys the triangle inequality)."""
        d = np.hypot(self.xy[:, 0] - self.xy[target, 0], self.xy[:, 1] - self.xy[target, 1])
        return d * (self.rate_per_km * (1.0 - 1e-9))

    def nbytes(self) -> int:
        return sum(a.nbytes for a in (self.xy, self.tail, self.head, self.km, self.hours, self.cost))


def _round_cents(x: np.ndarray) -> np.ndarray:
    """Half away from zero to 2 places (amounts here are positive)."""
    return np.floor(x * 100.0 + 0.5) / 100.0


def generate(n: int, seed: int = 1, clustered: float = 0.6) -> RoadNetwork:
    """A road-like network of n nodes. `clustered` is the share of points placed in towns."""
    from scipy.spatial import Delaunay

    rng = np.random.default_rng(seed)
    side = 12.0 * math.sqrt(n)  # mean spacing of roughly 10 km whatever n
    n_towns = max(1, n // 400)
    n_clustered = int(n * clustered)
    centres = rng.uniform(0.05 * side, 0.95 * side, size=(n_towns, 2))
    spread = rng.uniform(0.2, 1.0, size=n_towns) * side / math.sqrt(n_towns) * 0.25
    which = rng.integers(0, n_towns, size=n_clustered)
    pts_c = centres[which] + rng.normal(size=(n_clustered, 2)) * spread[which, None]
    pts_u = rng.uniform(0.0, side, size=(n - n_clustered, 2))
    xy = np.clip(np.vstack([pts_c, pts_u]), 0.0, side)
    # Coincident points would make zero-length lanes; nudge them apart deterministically.
    xy += rng.uniform(-1e-3, 1e-3, size=xy.shape)
    xy = xy[rng.permutation(n)]  # node ids carry no geometry

    tri = Delaunay(xy)
    s = tri.simplices.astype(np.int64)
    del tri
    a = np.concatenate([s[:, 0], s[:, 1], s[:, 2]])
    b = np.concatenate([s[:, 1], s[:, 2], s[:, 0]])
    del s
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    del a, b
    key = np.unique(lo * n + hi)
    del lo, hi
    u = (key // n).astype(np.int32)
    v = (key % n).astype(np.int32)
    del key
    straight = np.hypot(xy[u, 0] - xy[v, 0], xy[u, 1] - xy[v, 1])
    km = np.round(straight * rng.uniform(1.05, 1.5, size=u.shape[0]), 1)
    km = np.maximum(km, 0.1)
    speed = rng.uniform(50.0, 110.0, size=u.shape[0])
    hours = np.round(km / speed, 2)
    hours = np.maximum(hours, 0.01)
    cost = _round_cents(km * PER_KM) + _round_cents(hours * PER_HOUR)
    tail = np.concatenate([u, v])
    head = np.concatenate([v, u])
    km2 = np.concatenate([km, km])
    hours2 = np.concatenate([hours, hours])
    cost2 = np.concatenate([cost, cost])
    straight2 = np.concatenate([straight, straight])
    ok = straight2 > 0
    rate = float(np.min(cost2[ok] / straight2[ok])) if ok.any() else 0.0
    return RoadNetwork(n, xy, tail, head, km2, hours2, cost2, rate)


def workload_many_per_origin(net: RoadNetwork, shipments: int = 10_000, origins: int = 20,
                             seed: int = 2) -> list[tuple[int, int]]:
    """`shipments` (origin, destination) pairs from `origins` origins, destinations uniform."""
    rng = np.random.default_rng(seed)
    orig = rng.choice(net.n, size=origins, replace=False)
    out = []
    for i in range(shipments):
        o = int(orig[i % origins])
        d = int(rng.integers(0, net.n))
        while d == o:
            d = int(rng.integers(0, net.n))
        out.append((o, d))
    return out


def workload_mixed(net: RoadNetwork, shipments: int = 2_000, big_origins: int = 4,
                   big_share: float = 0.2, seed: int = 3) -> list[tuple[int, int]]:
    """Most origins have one or two shipments; a few (`big_origins`) carry `big_share` of them.
    Destinations uniform."""
    rng = np.random.default_rng(seed)
    n_big = int(shipments * big_share)
    pairs: list[tuple[int, int]] = []
    used: set[int] = set()

    def fresh_origin() -> int:
        while True:
            o = int(rng.integers(0, net.n))
            if o not in used:
                used.add(o)
                return o

    def dest(o: int) -> int:
        d = int(rng.integers(0, net.n))
        while d == o:
            d = int(rng.integers(0, net.n))
        return d

    bigs = [fresh_origin() for _ in range(big_origins)]
    for i in range(n_big):
        o = bigs[i % big_origins]
        pairs.append((o, dest(o)))
    while len(pairs) < shipments:
        o = fresh_origin()
        for _ in range(min(int(rng.integers(1, 3)), shipments - len(pairs))):
            pairs.append((o, dest(o)))
    order = rng.permutation(len(pairs))
    return [pairs[i] for i in order]
