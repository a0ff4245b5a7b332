"""Share one vehicle run's cost (or emissions) among the loads on it, to the minor unit.

A run that carries several loads costs one amount; each load is charged a share in proportion
to a key, its tonne-km on the run (the allocation ISO 14083 prescribes for emissions; the same
keys serve cost). The shares are rounded to the currency's minor unit (ISO 4217 ``places``) by
the largest remainder method (Hamilton's method of apportionment), so they add up to the run's
amount exactly, with no rounding penny left over or missing.

Method, for a total of T minor units (T = total x 10**places, an integer) and keys k_1..k_n
with K = k_1 + ... + k_n > 0:

1. the quota of load i is q_i = T x k_i / K, computed exactly (integer arithmetic on the
   keys' binary values, each float being an integer over a power of two: no floating-point
   error);
2. every load first gets floor(q_i) units;
3. the R = T - sum floor(q_i) units left over go one each to the R loads with the largest
   fractional parts q_i - floor(q_i); equal fractional parts go to the earlier load.

Guarantee (proof). Each floor(q_i) satisfies q_i - 1 < floor(q_i) <= q_i. Summing over i,
T - n < sum floor(q_i) <= T because sum q_i = T. Hence R is an integer with 0 <= R < n, so
step 3 hands out exactly R units, at most one to each load, and the shares sum to
sum floor(q_i) + R = T units exactly. Moreover every share is floor(q_i) or floor(q_i) + 1, so
it is within one minor unit of its exact proportional value (the quota rule), and a load with
key 0 gets 0 unless all keys are 0. The result depends only on the inputs and their order.
The shares are returned as floats ``units / 10**places``; summing them in any order and
rounding to ``places`` gives the total back (each is the nearest float to a decimal with
``places`` decimals, and n x the float error stays far below half a minor unit).

When all keys are 0 (for instance empty loads) the total is split equally (all keys taken as
1). A negative total (a rebate) is shared as the negative of sharing its absolute value.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction

from costing.money import round_money


def _units(amount: float, places: int, what: str) -> int:
    """`amount` as an integer number of minor units; ValueError when it is not on the unit."""
    if not math.isfinite(amount):
        raise ValueError(f"{what} must be a finite number, not {amount!r}")
    scaled = amount * 10 ** places
    units = round(scaled)
    if abs(scaled - units) > 1e-6 + 1e-12 * abs(scaled):
        raise ValueError(f"{what} {amount!r} is not a whole number of minor units at {places} "
                         f"decimal places; round it with costing.money.round_money first")
    return int(units)


def _check_keys(keys: Sequence[float]) -> list[int]:
    """The keys as integers in the same exact ratios: a finite float is num / 2**e exactly
    (``float.as_integer_ratio``), so multiplying every key by the largest such denominator
    gives integers proportional to the keys' binary values, with nothing rounded."""
    ratios = []
    for i, k in enumerate(keys):
        if not math.isfinite(k):
            raise ValueError(f"allocation key {i} must be a finite number, not {k!r}")
        if k < 0:
            raise ValueError(f"allocation key {i} is negative ({k!r}); keys are tonne-km "
                             f"or another non-negative quantity")
        ratios.append(k.as_integer_ratio() if isinstance(k, float) else Fraction(k).as_integer_ratio())
    scale = max((den for _num, den in ratios), default=1)  # denominators are powers of two
    return [num * (scale // den) for num, den in ratios]


def allocate_units(total_units: int, keys: Sequence[float]) -> list[int]:
    """Split an integer number of minor units by the largest remainder method.

    Parameters
    ----------
    total_units : int
        The amount to share, in minor units (cents for EUR); may be negative.
    keys : sequence of float
        Non-negative allocation keys, one per load (tonne-km, or any unit: only ratios count).

    Returns
    -------
    list of int
        One share per key, in minor units, summing to `total_units` exactly.

    Raises
    ------
    ValueError
        A key is negative or not finite, or there are no keys but a non-zero total.

    Notes
    -----
    Exact in integers: with the keys as integers K_i in the same ratios (``_check_keys``) and
    W their sum, the quota T x K_i / W has floor (T x K_i) // W and fractional part
    ((T x K_i) mod W) / W, so comparing the remainders compares the fractional parts."""
    ks = _check_keys(keys)
    if not ks:
        if total_units:
            raise ValueError(f"cannot share {total_units} minor units among no loads")
        return []
    if total_units < 0:
        return [-u for u in allocate_units(-total_units, keys)]
    if sum(ks) == 0:
        ks = [1] * len(ks)
    whole = sum(ks)
    parts = [divmod(total_units * k, whole) for k in ks]
    shares = [q for q, _r in parts]
    left = total_units - sum(shares)
    # largest fractional part first; equal parts: earlier position first
    order = sorted(range(len(ks)), key=lambda i: (-parts[i][1], i))
    for i in order[:left]:
        shares[i] += 1
    return shares


def allocate(total: float, keys: Sequence[float], places: int) -> list[float]:
    """Share `total` among loads in proportion to `keys`, rounded so the shares add up exactly.

    Parameters
    ----------
    total : float
        The run's cost in the run's currency (or its emissions, kg CO2e), already rounded to
        `places` decimals (e.g. 776.25 EUR).
    keys : sequence of float
        Allocation keys, one per load: tonne-km on the run (t x km). Non-negative; when all are
        zero the total is split equally.
    places : int
        Decimal places of the minor unit (ISO 4217: 2 for EUR, 0 for JPY, 3 for KWD).

    Returns
    -------
    list of float
        One share per key, in the unit of `total`, each within one minor unit of its exact
        proportional value; their sum rounded to `places` is `total` (the module docstring
        proves it).

    Raises
    ------
    ValueError
        A key is negative or not finite; `total` is not a whole number of minor units."""
    units = allocate_units(_units(total, places, "total"), keys)
    scale = 10 ** places
    return [round_money(u / scale, places) for u in units]


def cap_at_standalone(shares: Sequence[float], standalone: Sequence[float],
                      places: int) -> tuple[list[float], list[int]]:
    """Cap each load's share at what it would cost alone, and pass the excess to the others.

    A load never pays more for consolidation than it would pay travelling alone on its own
    route. Where a share exceeds its stand-alone cost, the share is cut to the stand-alone cost
    and the excess is shared among the other loads in proportion to their room (stand-alone
    cost minus share), by the largest remainder method. Because each of those gets at most the
    ceiling of an exact quota that is no more than its (whole-unit) room, no load is pushed
    above its own stand-alone cost, and the shares still sum to the same total exactly.

    Parameters
    ----------
    shares : sequence of float
        Each load's allocated cost (currency), on the minor unit, e.g. from `allocate` summed
        over the runs the load uses.
    standalone : sequence of float
        Each load's cost alone on the same route (currency), on the minor unit.
    places : int
        Decimal places of the currency's minor unit.

    Returns
    -------
    (list of float, list of int)
        The capped shares (same total to the minor unit) and the positions that were capped.

    Raises
    ------
    ValueError
        Lengths differ, an amount is not on the minor unit, or the shares' total exceeds the
        stand-alone costs' total (then no capping can hold)."""
    if len(shares) != len(standalone):
        raise ValueError(f"{len(shares)} shares but {len(standalone)} stand-alone costs")
    s = [_units(x, places, f"share {i}") for i, x in enumerate(shares)]
    a = [_units(x, places, f"stand-alone cost {i}") for i, x in enumerate(standalone)]
    if sum(s) > sum(a):
        raise ValueError(f"the shares total {sum(s) / 10 ** places} but the loads alone cost "
                         f"{sum(a) / 10 ** places}: consolidation is dearer than no consolidation, "
                         f"so shares cannot all be capped at the stand-alone cost")
    capped = [i for i in range(len(s)) if s[i] > a[i]]
    excess = sum(s[i] - a[i] for i in capped)
    out = list(s)
    for i in capped:
        out[i] = a[i]
    others = [i for i in range(len(s)) if i not in set(capped)]
    room = [max(0, a[i] - s[i]) for i in others]
    if excess:
        for i, extra in zip(others, allocate_units(excess, room)):
            out[i] += extra
    scale = 10 ** places
    return [round_money(u / scale, places) for u in out], capped
