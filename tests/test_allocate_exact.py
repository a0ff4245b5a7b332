"""The largest remainder split in integers against a rational-number oracle.

Oracle: Hamilton's method of apportionment (the largest remainder method) as textbooks state it,
computed here independently with Python's ``fractions.Fraction`` (exact rational arithmetic of
the standard library): quota T x k_i / K, floor, then one unit each to the largest fractional
parts, ties to the earlier position. Reference for the method: M. L. Balinski and H. P. Young,
"Fair Representation", 2nd ed. 2001, ch. 2 (Hamilton's method) - cited from memory.
"""

from __future__ import annotations

import math
import random
from fractions import Fraction

import numpy as np
import pytest

from costing.price.allocate import allocate_units


def hamilton(total: int, keys: list) -> list[int]:
    ks = [Fraction(k) for k in keys]
    if sum(ks) == 0:
        ks = [Fraction(1)] * len(ks)
    whole = sum(ks)
    quotas = [total * k / whole for k in ks]
    floors = [math.floor(q) for q in quotas]
    left = total - sum(floors)
    ranked = sorted(range(len(ks)), key=lambda i: (-(quotas[i] - floors[i]), i))
    for i in ranked[:left]:
        floors[i] += 1
    return floors


@pytest.mark.parametrize("seed", range(40))
def test_integer_split_equals_the_rational_oracle(seed):
    rng = random.Random(seed)
    n = rng.randint(1, 12)
    pick = rng.random()
    if pick < 0.3:  # tonne-km as the plan makes them
        keys = [round(rng.uniform(0, 24), 3) * round(rng.uniform(1, 900), 1) for _ in range(n)]
    elif pick < 0.5:  # magnitudes far apart, and zeros
        keys = [rng.choice([0.0, 1e-9, 3.3e-7, 0.1, 7.0, 1e6, 2.5e12]) for _ in range(n)]
    elif pick < 0.7:  # whole numbers (the capping step's rooms) and equal keys (ties)
        keys = [rng.choice([0, 1, 2, 2, 5, 17]) for _ in range(n)]
    else:
        keys = [rng.random() * 10 ** rng.randint(-3, 6) for _ in range(n)]
    total = rng.choice([0, 1, 7, 99, 12345, rng.randint(0, 10 ** 9)])
    got = allocate_units(total, keys)
    assert got == hamilton(total, keys)
    assert sum(got) == total
    assert allocate_units(-total, keys) == [-u for u in hamilton(total, keys)]


def test_numpy_and_all_zero_keys():
    assert allocate_units(10, [np.float64(1.5), np.float64(0.5)]) == hamilton(10, [1.5, 0.5]) == [8, 2]
    assert allocate_units(10, [0.0, 0.0, 0.0]) == [4, 3, 3]  # split equally, earlier first
