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
#: allowed depreciation methods (docs/case-format.md, tenure.tax)
DEPRECIATION_METHODS = ("straight-line", "declining-balance", "table", "macrs")
#: MACRS GDS recovery periods with a half-year table (IRS Publication 946, Table A-1)
MACRS_RECOVERY_YEARS = (3, 5, 7, 10, 15, 20)
#: allowed money bases of the caps and of the discount rate (docs/conventions.md, "Nominal money")
MONEY_BASES = ("constant", "nominal")
RATE_BASES = ("real", "nominal")


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
        When ``tax_rate`` is set it is the after-tax rate.
    end_value : str
        ``"salvage"`` or ``"continuing"``.
    tax_rate : float or None
        Combined marginal income-tax rate [-]; None for a before-tax analysis.
    inflation : float
        General inflation per year [1/year], converting constant and nominal money.
    rate_basis : str
        ``"real"`` or ``"nominal"``: how the case file stated the rate.  ``discount_rate``
        is always the real rate the solvers use; with ``"nominal"`` it was derived by the
        Fisher relation from ``nominal_rate``.
    nominal_rate : float or None
        The stated nominal rate [1/year] when ``rate_basis = "nominal"``.
    carbon_price : float
        Money per tonne CO2e, constant currency, paid with each service year's O&M.
    """

    title: str
    start_year: int
    horizon: int
    discount_rate: float
    end_value: str = "salvage"
    inflation: float = 0.0
    rate_basis: str = "real"
    nominal_rate: float | None = None
    carbon_price: float = 0.0
    tax_rate: float | None = None

    def deflator(self, year: int) -> float:
        """Constant money per unit of nominal money of calendar ``year``: ``1/(1+inflation)^k``."""
        return (1.0 + self.inflation) ** -(year - self.start_year)

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
class Depreciation:
    """Tax depreciation of a type, as fractions of the basis by service year (``tenure.tax``).

    ``method`` is ``"straight-line"`` (``(1 − salvage)/life`` in each of
    ``life`` years), ``"declining-balance"`` (``rate`` × book value for
    ``life`` years, switching to straight line over the remaining life when
    that gives more if ``switch``), ``"table"`` (``rates``, one fraction per
    service year) or ``"macrs"`` (the GDS half-year table of
    ``recovery_years``, IRS Publication 946, Table A-1).
    """

    method: str
    life: int = 0
    salvage: float = 0.0
    rate: float = 0.0
    switch: bool = False
    rates: tuple[float, ...] = ()
    recovery_years: int = 0

    def describe(self) -> str:
        """A short label for reports, e.g. ``"MACRS 5-year"``."""
        if self.method == "straight-line":
            tail = f", salvage {self.salvage:.0%}" if self.salvage else ""
            return f"straight line {self.life} years{tail}"
        if self.method == "declining-balance":
            return (f"declining balance {self.rate:.0%} over {self.life} years"
                    + (", switch to straight line" if self.switch else ""))
        if self.method == "table":
            return f"table of {len(self.rates)} years"
        return f"MACRS {self.recovery_years}-year"


@dataclass(frozen=True)
class Emissions:
    """Tonnes CO2e per unit-year of service: ``first`` for the start-year vintage, changing
    geometrically by ``change`` per later vintage [t/year]."""

    first: float = 0.0
    change: float = 0.0


@dataclass(frozen=True)
class Overhaul:
    """A mid-life overhaul (rebuild) a unit of a type may get once (docs/conventions.md, "Overhaul").

    ``cost`` [money, constant start-year currency] is paid at the start of the
    year it is done; it is allowed when the unit has completed ``age_from`` …
    ``age_to`` years; afterwards the O&M of service year j after the overhaul is
    ``om(om_age_after + j)``; the max age grows by ``adds_years`` [years].
    """

    cost: float
    age_from: int
    age_to: int
    om_age_after: int
    adds_years: int

    @property
    def ages(self) -> range:
        return range(self.age_from, self.age_to + 1)


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
    depreciation : Depreciation or None
        Tax depreciation; used only when ``Study.tax_rate`` is set.
    min_age : int
        No unit of this type is sold or replaced before this age [years] (0: no minimum).
    emissions : Emissions
        Tonnes CO2e per unit-year of service by vintage.
    usage_reference : float or None
        Yearly usage (km, hours, …) for which ``om`` and ``salvage`` are given.
    usage_max : float or None
        Lifetime usage at which a unit must go.
    overhaul : Overhaul or None
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
    min_age: int = 0
    emissions: Emissions = Emissions()
    depreciation: Depreciation | None = None
    usage_reference: float | None = None
    usage_max: float | None = None
    overhaul: Overhaul | None = None

    def buyable(self, year: int) -> bool:
        """True when a new unit of this type can be bought in calendar ``year``."""
        return (self.buy_from is None or self.buy_from <= year) and (
            self.buy_until is None or year <= self.buy_until
        )


@dataclass(frozen=True)
class Unit:
    """One inventory row: ``count`` identical units of one type and age.

    ``age`` is the completed years of service at the start of the start year
    [years] (docs/conventions.md, "Inventory ages"); it may exceed the type's
    ``max_age`` (an overdue unit, replaced in the first planning year).  A row
    without a count keeps its id in every output; a block of ``count`` > 1
    units is named ``id#1 … id#count``.  ``attributes`` are the inventory's
    other columns, (name, text) pairs in file order, carried into the outputs.
    ``usage`` is the job's yearly usage (None: the type's ``usage_reference``).
    """

    id: str
    type: str
    age: int
    count: int = 1
    attributes: tuple[tuple[str, str], ...] = ()
    usage: float | None = None

    def names(self) -> list[str]:
        """Unit names used in outputs."""
        if self.count == 1:
            return [self.id]
        return [f"{self.id}#{j}" for j in range(1, self.count + 1)]

    def attribute(self, name: str, default: str = "") -> str:
        """The value of one kept column (``default`` when the row has none)."""
        for k, v in self.attributes:
            if k == name:
                return v
        return default


@dataclass(frozen=True)
class Budget:
    """Annual capital caps.

    ``cap`` applies to every planning year without an entry in
    ``cap_by_year`` (calendar year → cap); ``None`` means uncapped.
    ``basis`` is ``"gross"`` (purchase prices) or ``"net"`` (purchase prices
    less market value of the units sold that year).  ``money`` is the currency
    the caps are stated in: ``"constant"`` (start-year money) or ``"nominal"``
    (then-year money, deflated by ``inflation`` from ``start_year``).
    """

    cap: float | None = None
    cap_by_year: Mapping[int, float] = field(default_factory=dict)
    basis: str = "gross"
    money: str = "constant"
    inflation: float = 0.0
    start_year: int = 0

    def cap_for(self, year: int) -> float | None:
        """The cap of calendar ``year`` as the case states it (in ``money``), or None when uncapped."""
        return self.cap_by_year.get(year, self.cap)

    def constant_cap(self, year: int) -> float | None:
        """The cap of calendar ``year`` in constant start-year money (what the solvers use), or None.

        A nominal cap C of year ``start_year + k`` is worth ``C/(1+inflation)^k``.
        """
        c = self.cap_for(year)
        if c is None or self.money == "constant":
            return c
        return c * (1.0 + self.inflation) ** -(year - self.start_year)


@dataclass(frozen=True)
class Limit:
    """At most ``max_buys_per_year`` new units of ``class_`` in each planning year."""

    class_: str
    max_buys_per_year: int


@dataclass(frozen=True)
class Demand:
    """Units of ``class_`` in service from each calendar year on: ``count_by_year`` (year → count),
    each entry held until the next; before the first entry the class keeps its starting size."""

    class_: str
    count_by_year: Mapping[int, int]


@dataclass(frozen=True)
class Order:
    """``count`` new units of ``type`` entering service at age 0 in calendar ``year`` (price paid
    then); the inventory unit names in ``replaces`` are sold that year."""

    type: str
    count: int
    year: int
    replaces: tuple[str, ...] = ()


@dataclass(frozen=True)
class Target:
    """A transition target over ``classes`` from calendar year ``from_`` on.

    ``share_of_buys``: units bought of ``types`` ≥ share × all units bought in
    ``classes`` each year; ``share_in_service``: units of ``types`` in service ≥
    share × all units in service in ``classes`` (None: that part is absent).
    """

    types: tuple[str, ...]
    classes: tuple[str, ...]
    from_: int
    share_of_buys: float | None = None
    share_in_service: float | None = None
    label: str = ""


@dataclass(frozen=True)
class EmissionCap:
    """At most ``tonnes`` CO2e a year from the whole fleet, from calendar year ``from_`` on
    (until ``until``, inclusive, when given)."""

    from_: int
    tonnes: float
    until: int | None = None


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

    ``group_by`` is the kept inventory column that buy lists and summaries are
    grouped by (``[fleet] group_by``), or None.  ``raw`` keeps the parsed document (with the inventory inlined) so that
    scenario overrides can be applied and the result validated like any case.
    """

    study: Study
    types: tuple[AssetType, ...]
    units: tuple[Unit, ...]
    budget: Budget | None = None
    limits: tuple[Limit, ...] = ()
    scenarios: tuple[Scenario, ...] = ()
    uncertain: tuple[Uncertain, ...] = ()
    demands: tuple[Demand, ...] = ()
    orders: tuple[Order, ...] = ()
    targets: tuple[Target, ...] = ()
    emission_caps: tuple[EmissionCap, ...] = ()
    source: str = "<memory>"
    group_by: str | None = None
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
    def coupled(self) -> bool:
        """True when a rule couples units of a class or across classes (demand, orders,
        targets, emission caps): such plans go through the cohort program."""
        return bool(self.demands or self.orders or self.targets or self.emission_caps)

    def emission_cap_for(self, year: int) -> float | None:
        """The tightest emission cap of calendar ``year`` [t], or None."""
        caps = [c.tonnes for c in self.emission_caps
                if c.from_ <= year and (c.until is None or year <= c.until)]
        return min(caps) if caps else None

    @property
    def unit_count(self) -> int:
        return sum(u.count for u in self.units)

    @property
    def attribute_names(self) -> tuple[str, ...]:
        """Names of the kept inventory columns, in order of first appearance."""
        seen: dict[str, None] = {}
        for u in self.units:
            for k, _ in u.attributes:
                seen.setdefault(k, None)
        return tuple(seen)

    def overdue(self) -> list[tuple[str, int, list[int], list[str]]]:
        """Units past their type's max age, one entry per type in case order: (type, units, ages, unit names)."""
        out = []
        for t in self.types:
            late = [u for u in self.units if u.type == t.id and u.age > t.max_age]
            if late:
                out.append((t.id, sum(u.count for u in late), sorted({u.age for u in late}),
                            [n for u in late for n in u.names()]))
        return out
