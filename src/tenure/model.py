"""Frozen model objects: what a case file says, after validation.

Nothing here reads files or computes economics; ``tenure.case`` builds these
objects and ``tenure.curves`` evaluates them.  The timing convention that
gives the fields their meaning is stated once, in ``docs/conventions.md``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

#: allowed end-value rules (docs/conventions.md, "End of the horizon")
END_VALUES = ("salvage", "continuing")
#: allowed budget bases
BUDGET_BASES = ("gross", "net")


@dataclass(frozen=True)
class Study:
    """The planning frame.

    Attributes
    ----------
    title : str
    start_year : int
        Calendar year of planning year k = 0.
    horizon : int
        Number of planning years [years]; years k = 0 … horizon-1.
    discount_rate : float
        Real discount rate [1/year]; money is constant start-year currency.
    end_value : str
        ``"salvage"`` or ``"continuing"``.
    """

    title: str
    start_year: int
    horizon: int
    discount_rate: float
    end_value: str = "salvage"

    @property
    def years(self) -> range:
        """Calendar years of the planning years."""
        return range(self.start_year, self.start_year + self.horizon)


@dataclass(frozen=True)
class OMCurve:
    """O&M of service year 1, 2, … of a unit of the start-year vintage [money/year].

    ``kind`` is ``"gradient"`` (first + gradient·(a-1)), ``"growth"``
    (first·(1+growth)^(a-1)) or ``"table"`` (one figure per age 1 … max_age).
    """

    kind: str
    first: float = 0.0
    gradient: float = 0.0
    growth: float = 0.0
    table: tuple[float, ...] = ()


@dataclass(frozen=True)
class ValueCurve:
    """Market value by age, as a fraction of (or scaled by) the current new price.

    ``kind`` is ``"retain"`` (retain^age), ``"line"`` (straight line to
    ``floor`` at ``life`` years, flat after) or ``"table"`` (values by age
    1 … n for a sale in the start year; later ages keep the last value).
    """

    kind: str
    retain: float = 1.0
    life: float = 1.0
    floor: float = 0.0
    table: tuple[float, ...] = ()


@dataclass(frozen=True)
class AssetType:
    """A model of unit that can be held, and perhaps bought.

    Attributes
    ----------
    id, class_ : str
        Type id; the class of interchangeable units it belongs to.
    price : float
        First cost of a new unit bought in the start year [money].
    price_change : float
        Geometric change of price per later purchase year [1/year].
    buy_from, buy_until : int or None
        First and last calendar year it can be bought (None: no bound).
    max_age : int
        Age at which a unit must be replaced [years].
    om : OMCurve
    om_change : float
        Geometric change of the whole O&M curve per later vintage [1/year].
    salvage : ValueCurve
    """

    id: str
    class_: str
    price: float
    max_age: int
    om: OMCurve
    salvage: ValueCurve
    price_change: float = 0.0
    om_change: float = 0.0
    buy_from: int | None = None
    buy_until: int | None = None

    def buyable(self, year: int) -> bool:
        """True when a new unit of this type can be bought in calendar ``year``."""
        return (self.buy_from is None or self.buy_from <= year) and (
            self.buy_until is None or year <= self.buy_until
        )


@dataclass(frozen=True)
class Unit:
    """One inventory row: ``count`` identical units of one type and age.

    ``age`` is the completed years of service at the start of the start year
    [years]; the units are named ``id#1 … id#count`` in every output.
    """

    id: str
    type: str
    age: int
    count: int = 1

    def names(self) -> list[str]:
        """Unit names used in outputs."""
        return [f"{self.id}#{j}" for j in range(1, self.count + 1)]


@dataclass(frozen=True)
class Budget:
    """Annual capital caps.

    ``cap`` applies to every planning year without an entry in
    ``cap_by_year`` (calendar year → cap); ``None`` means uncapped.
    ``basis`` is ``"gross"`` (purchase prices) or ``"net"`` (purchase prices
    less market value of the units sold that year).
    """

    cap: float | None = None
    cap_by_year: Mapping[int, float] = field(default_factory=dict)
    basis: str = "gross"

    def cap_for(self, year: int) -> float | None:
        """The cap of calendar ``year`` [money], or None when uncapped."""
        return self.cap_by_year.get(year, self.cap)


@dataclass(frozen=True)
class Limit:
    """At most ``max_buys_per_year`` new units of ``class_`` in each planning year."""

    class_: str
    max_buys_per_year: int


@dataclass(frozen=True)
class Scenario:
    """A named set of overrides: dotted path → value (see ``tenure.scenarios``)."""

    id: str
    note: str
    set: Mapping[str, Any]
    #: chance that this scenario comes true [fraction]; None when the case file gives none
    probability: float | None = None


@dataclass(frozen=True)
class Uncertain:
    """An uncertain input for Monte Carlo sweeps.

    ``dist`` is ``"uniform"`` (low, high), ``"triangular"`` (low, mode, high)
    or ``"normal"`` (mean, sd, clipped to low, high).
    """

    path: str
    dist: str
    low: float
    high: float
    mode: float | None = None
    mean: float | None = None
    sd: float | None = None


@dataclass(frozen=True)
class Case:
    """A validated case: the single input of every solver.

    ``raw`` keeps the parsed document (with the inventory inlined) so that
    scenario overrides can be applied and the result validated like any case.
    """

    study: Study
    types: tuple[AssetType, ...]
    units: tuple[Unit, ...]
    budget: Budget | None = None
    limits: tuple[Limit, ...] = ()
    scenarios: tuple[Scenario, ...] = ()
    uncertain: tuple[Uncertain, ...] = ()
    source: str = "<memory>"
    raw: Mapping[str, Any] = field(default_factory=dict, repr=False, compare=False)

    # -- look-ups -------------------------------------------------------
    def type(self, type_id: str) -> AssetType:
        for t in self.types:
            if t.id == type_id:
                return t
        raise KeyError(type_id)

    @property
    def classes(self) -> list[str]:
        """Class names in order of first appearance among the types."""
        seen: dict[str, None] = {}
        for t in self.types:
            seen.setdefault(t.class_, None)
        return list(seen)

    def types_of(self, class_: str) -> tuple[AssetType, ...]:
        """Types of a class, in case-file order (the tie-break order)."""
        return tuple(t for t in self.types if t.class_ == class_)

    def units_of(self, class_: str) -> tuple[Unit, ...]:
        ids = {t.id for t in self.types_of(class_)}
        return tuple(u for u in self.units if u.type in ids)

    def limit_for(self, class_: str) -> int | None:
        for lim in self.limits:
            if lim.class_ == class_:
                return lim.max_buys_per_year
        return None

    @property
    def capped(self) -> bool:
        """True when the case has a cap in any year or a purchase limit."""
        has_cap = self.budget is not None and (
            self.budget.cap is not None or len(self.budget.cap_by_year) > 0
        )
        return has_cap or len(self.limits) > 0

    @property
    def unit_count(self) -> int:
        return sum(u.count for u in self.units)
