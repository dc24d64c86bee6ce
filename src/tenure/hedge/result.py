"""The result of a hedge: the commitment of the first years, and each scenario re-planned from it.

Money is present worth at time 0 [money] except ``capital_by_year`` (undiscounted purchase
prices by calendar year).  Definitions (Birge & Louveaux, *Introduction to Stochastic
Programming*, 2nd ed., §4.1–4.2):

- ``cost`` of a scenario: the least present cost of carrying out the commitment and re-planning
  the later years under that scenario;
- ``own_optimum``: the scenario's best known plan on its own (its own plan, or the re-plan when
  that is cheaper — a plan is never reported as beaten under its own assumptions);
- ``regret = cost − own_optimum``;
- ``expected_cost = Σ p_s cost_s``;
- ``evpi = expected_cost − Σ p_s own_optimum_s`` (expected value of perfect information, of the
  hedged plan);
- ``vss = Σ p_s cost_s(base plan's first years) − expected_cost`` (value of the stochastic
  solution; None when the base plan's first years cannot be carried out in some scenario).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

from ..scenarios.tasks import round2 as _r

#: the top-level keys of hedge.json, in order
HEDGE_KEYS = ("commitment", "scenarios", "expected_cost", "max_regret", "evpi", "vss", "gap", "objective",
              "commit_years")


@dataclass(frozen=True)
class CommitAction:
    """What one unit does in one committed year: ``action`` "keep", "overhaul" or "sell" (``type``
    the held type; "sell": sold without a replacement, as a class shrinks), "replace" or "buy"
    (``type`` the type bought; "buy": a unit the plan adds, bought without a sale)."""

    unit: str
    year: int
    action: str
    type: str

    def to_dict(self) -> dict:
        return {"unit": self.unit, "year": self.year, "action": self.action, "type": self.type}


@dataclass(frozen=True)
class HedgedScenario:
    """One scenario under the commitment (see the module docstring for the figures).

    ``base_cost``: its cost when the base plan's first years are committed instead (None when
    they cannot be carried out there); ``own_gap``: the proven gap of its own solve.
    """

    id: str
    note: str
    probability: float
    cost: float
    own_optimum: float
    regret: float
    own_gap: float
    base_cost: float | None
    capital_by_year: Mapping[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"id": self.id, "probability": self.probability, "cost": _r(self.cost),
                "own_optimum": _r(self.own_optimum), "regret": _r(self.regret)}


@dataclass(frozen=True)
class Hedge:
    """A hedged commitment of the first ``commit_years`` planning years across scenarios.

    ``method`` names the solve ("extensive form" or "Lagrangian decomposition"); ``gap`` is its
    proven relative gap on the objective; ``lower_bound`` the proven bound of the objective
    [money, time 0] (for ``regret``, of the largest regret); ``notes`` cautions in words.
    """

    case: str
    title: str
    start_year: int
    commit_years: int
    objective: str
    method: str
    commitment: tuple[CommitAction, ...]
    scenarios: tuple[HedgedScenario, ...]
    expected_cost: float
    max_regret: float
    evpi: float
    vss: float | None
    gap: float
    lower_bound: float
    notes: tuple[str, ...] = ()

    @property
    def buys(self) -> tuple[CommitAction, ...]:
        """The committed purchases, replacements and added units (the buy list)."""
        return tuple(c for c in self.commitment if c.action in ("replace", "buy"))

    @property
    def other_actions(self) -> tuple[CommitAction, ...]:
        """The committed overhauls and sales without a replacement."""
        return tuple(c for c in self.commitment if c.action in ("overhaul", "sell"))

    def to_dict(self) -> dict:
        """The ``hedge.json`` document (exactly :data:`HEDGE_KEYS`)."""
        return {"commitment": [c.to_dict() for c in self.commitment],
                "scenarios": [s.to_dict() for s in self.scenarios], "expected_cost": _r(self.expected_cost),
                "max_regret": _r(self.max_regret), "evpi": _r(self.evpi), "vss": _r(self.vss),
                "gap": self.gap if math.isfinite(self.gap) else None,
                "objective": self.objective, "commit_years": self.commit_years}

    def commitment_frame(self):
        """Every committed action (unit, year, action, type) as a pandas DataFrame."""
        import pandas as pd

        return pd.DataFrame([c.to_dict() for c in self.commitment], columns=["unit", "year", "action", "type"])

    def buys_frame(self):
        """``hedge.csv``: the committed purchases (unit, year, type)."""
        import pandas as pd

        return pd.DataFrame([{"unit": c.unit, "year": c.year, "type": c.type} for c in self.buys],
                            columns=["unit", "year", "type"])

    def scenarios_frame(self):
        """One row per scenario: id, probability, cost, own optimum, regret, base-plan cost."""
        import pandas as pd

        return pd.DataFrame([{**s.to_dict(), "base_plan_cost": _r(s.base_cost)} for s in self.scenarios],
                            columns=["id", "probability", "cost", "own_optimum", "regret", "base_plan_cost"])
