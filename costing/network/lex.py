"""Lexicographic weights: (primary, secondary, tertiary) triples that add component by component
and compare in order. The search core (`costing.network.search`) only adds and compares weights,
so a network whose weights are `Lex` triples is searched for the least primary, then, among
routes of equal primary, the least secondary, then the least tertiary. Nothing here knows about
freight: the network builder decides what the three parts are.

Why the core's argument carries over. Dijkstra's invariant needs (1) an order that is total and
compatible with addition (a <= b implies a + c <= b + c) and (2) non-negative arc weights. Triples
under lexicographic order with component-wise addition are an ordered abelian group, so (1)
holds; a triple is non-negative when its first non-zero part is positive, so (2) holds when every
arc's triple is lexicographically >= (0, 0, 0) (the builder makes every part >= 0, which is
stronger). A bound h on the primary alone is added to the primary; if it is consistent for the
primary weights, the reduced triple w - (h(u), 0, 0) + (h(v), 0, 0) has a primary >= 0, and when
that primary is 0 its other parts are the arc's own, >= 0: the reduced weights are
lexicographically non-negative and A* with the bound stays exact.

Comparison with a plain number x treats it as (x, 0, 0), so the core's infinity (a float) is
above every finite triple and a float start weight of 0 is the zero triple. Equality is the
tuple's (a triple never equals a plain number), which the core only uses to ask "still infinite?".

Ties of the primary are exact float equalities: two routes whose primaries are meant to be equal
but were summed in different orders may differ in the last bit and are then not a tie. The
secondary and tertiary parts are integers (the builder uses minor currency units and leg counts),
so they add exactly.
"""

from __future__ import annotations


class Lex(tuple):
    """A weight (primary, secondary, tertiary) for lexicographic least-weight search.

    Parameters
    ----------
    primary : float
        The objective's weight (its unit).
    secondary, tertiary : int
        Tie-breaking keys, compared only between equal primaries (then equal secondaries).
    """

    __slots__ = ()

    def __new__(cls, primary: float, secondary: int = 0, tertiary: int = 0) -> Lex:
        return tuple.__new__(cls, (primary, secondary, tertiary))

    def __getnewargs__(self) -> tuple:
        """pickle's arguments for `__new__` (the default would pass the whole tuple as primary)."""
        return tuple(self)

    @staticmethod
    def _of(other) -> tuple:
        return other if isinstance(other, tuple) else (other, 0, 0)

    def __add__(self, other) -> Lex:  # type: ignore[override]
        if isinstance(other, tuple):
            return tuple.__new__(Lex, (self[0] + other[0], self[1] + other[1], self[2] + other[2]))
        return tuple.__new__(Lex, (self[0] + other, self[1], self[2]))

    __radd__ = __add__

    def __lt__(self, other) -> bool:  # type: ignore[override]
        return tuple.__lt__(self, Lex._of(other))

    def __le__(self, other) -> bool:  # type: ignore[override]
        return tuple.__le__(self, Lex._of(other))

    def __gt__(self, other) -> bool:  # type: ignore[override]
        return tuple.__gt__(self, Lex._of(other))

    def __ge__(self, other) -> bool:  # type: ignore[override]
        return tuple.__ge__(self, Lex._of(other))

    def __float__(self) -> float:
        return float(self[0])

    def __repr__(self) -> str:
        return f"Lex({self[0]!r}, {self[1]!r}, {self[2]!r})"


def primary(w) -> float:
    """The primary part of a weight (a plain number is its own primary)."""
    return w[0] if isinstance(w, Lex) else w
