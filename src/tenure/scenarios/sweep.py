"""Sweeps: the case solved over a grid of values or over Monte Carlo draws.

:func:`sweep` solves the case over a grid of values (axes) or over Monte
Carlo draws of the case's ``[[uncertain]]`` inputs (seeded, one
``numpy.random.default_rng(seed)``), and reports quantiles of the present
cost, how often each first-year action is optimal, and a one-at-a-time
sensitivity table.  Values for whole-number fields are rounded
(:func:`tenure.scenarios.overrides.coerce`).
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from ..case import CaseError
from ..model import Case, Uncertain
from .overrides import case_with, coerce
from .tasks import make_task, solve_all as _solve_all
from .tasks import round2 as _r
from .tasks import solved as _solved

#: quantiles of present cost reported by a sweep [%]
QUANTILES = (5, 25, 50, 75, 95)


@dataclass(frozen=True)
class SweepInput:
    """One swept input: a grid axis (``steps``) or an uncertain input (``dist`` and its parameters)."""

    path: str
    low: float
    high: float
    steps: int | None = None
    dist: str | None = None
    mode: float | None = None
    mean: float | None = None
    sd: float | None = None

    def to_dict(self) -> dict:
        if self.dist is None:
            return {"path": self.path, "low": self.low, "high": self.high, "steps": self.steps}
        return {"path": self.path, "dist": self.dist, "low": self.low, "high": self.high,
                **{k: getattr(self, k) for k in ("mode", "mean", "sd") if getattr(self, k) is not None}}


@dataclass(frozen=True)
class SweepBase:
    """The case as written, solved once: status, present cost [money, cents], start-year actions."""

    status: str
    present_cost: float | None
    first_year_actions: Mapping[str, str]

    def to_dict(self) -> dict:
        return {"status": self.status, "present_cost": self.present_cost,
                "first_year_actions": dict(self.first_year_actions)}


@dataclass(frozen=True)
class CostSummary:
    """Present cost over the solved points [money, cents]: quantiles (``QUANTILES`` %, linear
    interpolation between order statistics, numpy's default), mean, min and max (None when none solved)."""

    solved: int
    not_solved: int
    quantiles: Mapping[str, float | None]
    mean: float | None
    min: float | None
    max: float | None

    def to_dict(self) -> dict:
        return {"solved": self.solved, "not_solved": self.not_solved, "quantiles": dict(self.quantiles),
                "mean": self.mean, "min": self.min, "max": self.max}


@dataclass(frozen=True)
class Sensitivity:
    """One input at its low and at its high end, the others as in the case; ``swing`` = |cost difference|."""

    path: str
    low: float
    high: float
    cost_at_low: float | None
    cost_at_high: float | None
    status_at_low: str
    status_at_high: str
    swing: float | None

    def to_dict(self) -> dict:
        return {"path": self.path, "low": self.low, "high": self.high, "cost_at_low": self.cost_at_low,
                "cost_at_high": self.cost_at_high, "status_at_low": self.status_at_low,
                "status_at_high": self.status_at_high, "swing": self.swing}


@dataclass(frozen=True)
class SweepDraw:
    """One point of a grid or one Monte Carlo draw: its input values (path → value) and its solve."""

    point: int
    values: Mapping[str, Any]
    status: str
    present_cost: float | None

    def to_dict(self) -> dict:
        return {"point": self.point, "values": dict(self.values), "status": self.status,
                "present_cost": self.present_cost}


@dataclass(frozen=True)
class Sweep:
    """A case solved over a grid or Monte Carlo draws; one result object per sweep.

    :meth:`to_dict` is ``sweep.json``.  ``first_year_actions`` maps a unit to
    each start-year action and the share of solved points where it is optimal.
    """

    case: str
    title: str
    start_year: int
    mode: str
    seed: int | None
    points_count: int
    inputs: tuple[SweepInput, ...]
    base: SweepBase
    present_cost: CostSummary
    first_year_actions: Mapping[str, Mapping[str, float]]
    sensitivity: tuple[Sensitivity, ...]
    points: tuple[SweepDraw, ...]

    @property
    def paths(self) -> list[str]:
        return [i.path for i in self.inputs]

    def draw_rows(self) -> tuple[list[str], list[list]]:
        """Columns and rows of ``sweep.csv``: point, each input's value, status, present cost."""
        names = self.paths
        return (["point"] + names + ["status", "present_cost"],
                [[p.point] + [p.values[n] for n in names] + [p.status, p.present_cost] for p in self.points])

    def sensitivity_rows(self) -> tuple[list[str], list[list]]:
        """Columns and rows of ``sensitivity.csv``."""
        return (["path", "low", "high", "cost_at_low", "cost_at_high", "swing"],
                [[s.path, s.low, s.high, s.cost_at_low, s.cost_at_high, s.swing] for s in self.sensitivity])

    def draws_frame(self):
        """``sweep.csv`` as a pandas DataFrame (a point not solved has NaN present cost)."""
        import pandas as pd

        cols, rows = self.draw_rows()
        return pd.DataFrame(rows, columns=cols)

    def sensitivity_frame(self):
        """``sensitivity.csv`` as a pandas DataFrame, largest swing first."""
        import pandas as pd

        cols, rows = self.sensitivity_rows()
        return pd.DataFrame(rows, columns=cols)

    def to_dict(self) -> dict:
        return {"case": self.case, "title": self.title, "start_year": self.start_year, "mode": self.mode,
                "seed": self.seed, "points_count": self.points_count, "inputs": [i.to_dict() for i in self.inputs],
                "base": self.base.to_dict(), "present_cost": self.present_cost.to_dict(),
                "first_year_actions": {u: dict(s) for u, s in self.first_year_actions.items()},
                "sensitivity": [s.to_dict() for s in self.sensitivity],
                "points": [p.to_dict() for p in self.points]}


@dataclass(frozen=True)
class Axis:
    """One swept input of a grid: ``steps`` evenly spaced values from ``low`` to ``high``."""

    path: str
    low: float
    high: float
    steps: int

    def values(self) -> list:
        return [coerce(self.path, x) for x in np.linspace(self.low, self.high, self.steps)]


AXIS_SYNTAX = "PATH=LOW:HIGH:STEPS, e.g. asset_type.rt-bev.price_change=-0.07:-0.02:6"


def axis_from_text(text: str) -> Axis:
    """A grid axis from ``"PATH=LOW:HIGH:STEPS"``; ValueError with a one-line message otherwise."""
    path, eq, rng = text.partition("=")
    parts = rng.split(":")
    if not eq or not path.strip() or len(parts) != 3:
        raise ValueError(f"{text!r}: expected {AXIS_SYNTAX}")
    try:
        low, high = float(parts[0]), float(parts[1])
    except ValueError:
        raise ValueError(f"{text!r}: LOW and HIGH must be numbers ({AXIS_SYNTAX})") from None
    try:
        steps = int(parts[2])
    except ValueError:
        raise ValueError(f"{text!r}: STEPS must be a whole number ≥ 2 ({AXIS_SYNTAX})") from None
    if not (math.isfinite(low) and math.isfinite(high)):
        raise ValueError(f"{text!r}: LOW and HIGH must be finite numbers")
    if steps < 2 and low != high:
        raise ValueError(f"{text!r}: STEPS must be a whole number ≥ 2 ({AXIS_SYNTAX})")
    if low > high:
        raise ValueError(f"{text!r}: LOW must not be above HIGH")
    return Axis(path.strip(), low, high, max(steps, 1))


def draw(uncertain: Sequence[Uncertain], samples: int, seed: int) -> np.ndarray:
    """``samples × len(uncertain)`` draws from one ``default_rng(seed)``, input by input.

    uniform on [low, high]; triangular (low, mode, high); normal (mean, sd)
    clipped to [low, high].
    """
    rng = np.random.default_rng(seed)
    cols = []
    for u in uncertain:
        if u.dist == "uniform":
            col = rng.uniform(u.low, u.high, samples)
        elif u.dist == "triangular":
            col = (rng.triangular(u.low, u.mode, u.high, samples) if u.high > u.low
                   else np.full(samples, u.low))
        elif u.dist == "normal":
            col = np.clip(rng.normal(u.mean, u.sd, samples), u.low, u.high)
        else:  # pragma: no cover - validated by tenure.case
            raise ValueError(f"unknown distribution {u.dist!r}")
        cols.append(col)
    return np.column_stack(cols) if cols else np.empty((samples, 0))


def _check_inputs(case: Case, inputs: Sequence[tuple[str, float, float, str]]) -> None:
    """Both ends of every input must give a valid case (paths and values)."""
    problems = []
    for path, low, high, where in inputs:
        for x in (low, high):
            try:
                case_with(case, {path: coerce(path, x)}, where=where)
            except CaseError as exc:
                problems += [p for p in exc.problems if p not in problems]
    if problems:
        raise CaseError(problems)


def sweep(case: Case, *, axes: Sequence[Axis] = (), samples: int | None = None, seed: int = 0,
          uncertain: Sequence[Uncertain] | None = None, options: Mapping[str, Any] | None = None,
          workers: int = 1, cluster: str | None = None, progress: bool = False, max_points: int = 100_000) -> Sweep:
    """Solve the case over a grid (``axes``) or Monte Carlo draws.

    Exactly one of ``axes`` (grid: every combination, first axis slowest)
    and ``samples`` (Monte Carlo over ``uncertain``, default
    ``case.uncertain``) is given.  Besides the points, the base case and each
    input at its low and at its high end (the others as in the case) are
    solved for the one-at-a-time sensitivity table (sorted by swing).
    ``workers``, ``cluster``: see :func:`tenure.parallel.run_tasks`.
    """
    if bool(axes) == (samples is not None):
        raise ValueError("give either grid axes or a number of samples")
    if axes:
        mode, inputs, ends, points = "grid", *_grid(axes, max_points)
    else:
        mode, inputs, ends, points = "monte_carlo", *_draws(case, uncertain, samples, seed)
    _check_inputs(case, ends)
    oat = [(path, coerce(path, lo), coerce(path, hi)) for path, lo, hi, _ in ends]
    tasks = [make_task(case, {}, options, where="base")]
    tasks += [make_task(case, p, options, where=f"point {n}") for n, p in enumerate(points, start=1)]
    for path, lo, hi in oat:
        tasks += [make_task(case, {path: lo}, options, where=f"{path} low"),
                  make_task(case, {path: hi}, options, where=f"{path} high")]
    res = _solve_all(tasks, workers=workers, cluster=cluster, label="sweep", progress=progress)
    base, pts, ends_res = res[0], res[1:1 + len(points)], res[1 + len(points):]
    ok = [r for r in pts if _solved(r["status"])]
    return Sweep(
        case=case.source, title=case.study.title, start_year=case.study.start_year, mode=mode,
        seed=seed if mode == "monte_carlo" else None, points_count=len(points), inputs=tuple(inputs),
        base=SweepBase(base["status"], _r(base["present_cost"]), base.get("first_year", {})),
        present_cost=_summary(ok, len(pts)), first_year_actions=_shares(ok), sensitivity=_sensitivity(oat, ends_res),
        points=tuple(SweepDraw(n, p, r["status"], _r(r["present_cost"]))
                     for n, (p, r) in enumerate(zip(points, pts), start=1)))


def _grid(axes: Sequence[Axis], max_points: int):
    n_points = math.prod(a.steps for a in axes)
    if n_points > max_points:
        raise ValueError(f"the grid has {n_points} points; at most {max_points} are allowed")
    names = [a.path for a in axes]
    inputs = [SweepInput(a.path, a.low, a.high, steps=a.steps) for a in axes]
    ends = [(a.path, a.low, a.high, f"grid axis {a.path}") for a in axes]
    points = [dict(zip(names, combo)) for combo in itertools.product(*(a.values() for a in axes))]
    return inputs, ends, points


def _draws(case: Case, uncertain: Sequence[Uncertain] | None, samples: int, seed: int):
    unc = list(case.uncertain if uncertain is None else uncertain)
    if not unc:
        raise ValueError("a Monte Carlo sweep needs [[uncertain]] blocks in the case or in a scenario file")
    if samples < 1:
        raise ValueError(f"samples = {samples}: must be a whole number ≥ 1")
    inputs = [SweepInput(u.path, u.low, u.high, dist=u.dist, mode=u.mode, mean=u.mean, sd=u.sd) for u in unc]
    ends = [(u.path, u.low, u.high, f"uncertain[{j}]") for j, u in enumerate(unc, start=1)]
    points = [{u.path: coerce(u.path, val) for u, val in zip(unc, row)} for row in draw(unc, samples, seed)]
    return inputs, ends, points


def _summary(ok: Sequence[Mapping], n_points: int) -> CostSummary:
    costs = np.array([r["present_cost"] for r in ok], dtype=float)
    if not len(costs):
        return CostSummary(len(ok), n_points - len(ok), {str(q): None for q in QUANTILES}, None, None, None)
    qs = np.quantile(costs, [q / 100 for q in QUANTILES])
    return CostSummary(len(ok), n_points - len(ok), {str(q): _r(v) for q, v in zip(QUANTILES, qs)},
                       _r(costs.mean()), _r(costs.min()), _r(costs.max()))


def _shares(ok: Sequence[Mapping]) -> dict[str, dict[str, float]]:
    freq: dict[str, Counter] = {}
    for r in ok:
        for u, act in r["first_year"].items():
            freq.setdefault(u, Counter())[act] += 1
    return {u: {a: round(n / len(ok), 6) for a, n in sorted(c.items(), key=lambda kv: (-kv[1], kv[0]))}
            for u, c in freq.items()}


def _sensitivity(oat, ends_res) -> tuple[Sensitivity, ...]:
    sens = []
    for j, (path, lo, hi) in enumerate(oat):
        r_lo, r_hi = ends_res[2 * j], ends_res[2 * j + 1]
        c_lo, c_hi = r_lo["present_cost"], r_hi["present_cost"]
        good = _solved(r_lo["status"]) and _solved(r_hi["status"])
        sens.append(Sensitivity(path, lo, hi, _r(c_lo), _r(c_hi), r_lo["status"], r_hi["status"],
                                _r(abs(c_hi - c_lo)) if good else None))
    sens.sort(key=lambda s: (s.swing is None, -(s.swing or 0.0)))
    return tuple(sens)
