"""Hedging: one commitment of the first planning years, best across scenarios that re-plan later.

- :mod:`.stage`      the scenarios with probabilities, column keys, the re-plan task;
- :mod:`.extensive`  the extensive form (stacked programs, non-anticipativity rows);
- :mod:`.decompose`  Lagrangian decomposition with a valid lower bound;
- :mod:`.result`     the :class:`Hedge` result (``hedge.json`` is its ``to_dict()``);
- :mod:`.run`        :func:`hedge`, the sequence from scenarios to the result.

The method is described in docs/hedging.md.
"""

from .extensive import NoCommonCommitment, build_extensive, solve_extensive
from .result import HEDGE_KEYS, CommitAction, Hedge, HedgedScenario
from .run import EXTENSIVE_COLUMNS, METHODS, OBJECTIVES, hedge
from .stage import probabilities

__all__ = ["EXTENSIVE_COLUMNS", "HEDGE_KEYS", "METHODS", "OBJECTIVES", "CommitAction", "Hedge", "HedgedScenario",
           "NoCommonCommitment", "build_extensive", "hedge", "probabilities", "solve_extensive"]
