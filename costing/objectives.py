"""The objectives a route can be chosen by: one table, one entry per objective.

An objective is a weighted sum of route quantities. Every part of the tool that needs to know
about an objective reads this table: the input contract (its choices), the network builder
(how a lane's, a start's, an exit's and a transfer's weight is computed: the same weighted sum
of the same quantities), a costed route (how its value is read) and the output (its unit).

=========  ==============================  ========================================
name       value of a route                unit
=========  ==============================  ========================================
cost       total cost                      the run's currency
time       driving + handling hours        hours
distance   km                              km
emissions  kg CO2e                         kg CO2e
blended    cost + value_of_time x hours    the run's currency (incl. value of time)
=========  ==============================  ========================================

Quantities: ``cost`` (money, rounded as the legs are), ``hours`` (driving and handling, and
breaks and rests when driving rules are on with the driving clock in the search),
``km`` and ``co2e`` (kg CO2e). A term's coefficient is 1 or a named Setting, so
``blended = 1 x cost + value_of_time_per_hour x hours``.

Adding an objective: one ``Objective`` entry here; if it needs a new quantity, the
quantity's weight in ``costing.network.build`` and its route value in
``costing.price.cost.CostedShipment.quantity``.
"""

from __future__ import annotations

from dataclasses import dataclass

QUANTITIES = ("cost", "hours", "km", "co2e")


@dataclass(frozen=True)
class Objective:
    """One objective: a weighted sum of route quantities.

    Attributes
    ----------
    name : str
        As typed in the workbook (Settings ``objective``, Shipments ``objective``).
    terms : tuple of (quantity, coefficient setting or None)
        None means a coefficient of 1; a name means that Settings field.
    unit : str
        Unit of the objective's value; ``"currency"`` is the run's currency.
    description : str
        For the contract's notes and the command's help.
    """

    name: str
    terms: tuple[tuple[str, str | None], ...]
    unit: str
    description: str

    @property
    def quantity(self) -> str | None:
        """The single quantity of a one-term objective with coefficient 1, else None."""
        if len(self.terms) == 1 and self.terms[0][1] is None:
            return self.terms[0][0]
        return None

    @property
    def in_money(self) -> bool:
        """True when the objective's value is an amount of the run's currency."""
        return self.unit == "currency"

    def combine(self, quantity, coefficient) -> float:
        """The objective's value: the sum of coefficient x quantity over the terms, in term order.

        Parameters
        ----------
        quantity : callable
            ``quantity(name) -> float`` for each quantity the terms name.
        coefficient : callable
            ``coefficient(setting name) -> float`` for the terms whose coefficient is a Setting.

        A one-term objective with coefficient 1 is its quantity exactly (no arithmetic), so a
        lane's weight and a route's value are the same float the quantity is.
        """
        if self.quantity is not None:
            return quantity(self.quantity)
        total = 0.0
        for q, c in self.terms:
            total += (1.0 if c is None else coefficient(c)) * quantity(q)
        return total

    def unit_text(self, currency: str) -> str:
        """The unit as the output prints it (e.g. ``EUR``, ``h``, ``kg CO2e``)."""
        return currency if self.in_money else self.unit


TABLE: tuple[Objective, ...] = (
    Objective("cost", (("cost", None),), "currency", "cost"),
    Objective("time", (("hours", None),), "hours", "time (hours)"),
    Objective("distance", (("km", None),), "km", "distance (km)"),
    Objective("emissions", (("co2e", None),), "kg CO2e", "emissions (kg CO2e)"),
    Objective("blended", (("cost", None), ("hours", "value_of_time_per_hour")), "currency",
              "blended (cost + value_of_time_per_hour x hours)"),
)

OBJECTIVES: tuple[str, ...] = tuple(o.name for o in TABLE)
BY_NAME: dict[str, Objective] = {o.name: o for o in TABLE}


def objective(name: str) -> Objective:
    """The table entry of ``name``.

    Raises
    ------
    ValueError
        ``name`` is not an objective; the message lists the ones there are.
    """
    try:
        return BY_NAME[name]
    except KeyError:
        raise ValueError(f"unknown objective {name!r}; choose one of {', '.join(OBJECTIVES)}") from None
