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

#: quantiles of present cost reported by a sweep [%]
QUANTILES = (5, 25, 50, 75, 95)


@dataclass(frozen=True)
class Axis:
    """One swept input of a grid: ``steps`` evenly spaced values from ``low`` to ``high``."""

    path: str
    low: float
    high: float
    steps: int

    def values(self) -> list:
        return [coerce(self.path, x) for x in np.linspace(self.low, self.high, self.steps)]


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
          workers: int = 1, cluster: str | None = None, progress: bool = False, max_points: int = 100_000) -> dict:
    """Solve the case over a grid (``axes``) or Monte Carlo draws; the ``sweep.json`` document.

    Exactly one of ``axes`` (grid: every combination, first axis slowest)
    and ``samples`` (Monte Carlo over ``uncertain``, default
    ``case.uncertain``) is given.  Besides the points, the base case and each
    input at its low and at its high end (the others as in the case) are
    solved for the one-at-a-time sensitivity table.

    Returns
    -------
    dict
        ``mode``, ``inputs``, ``base``, ``present_cost`` (quantiles 5/25/50/75/95 %
        by linear interpolation between order statistics, mean, min, max),
        ``first_year_actions`` (unit → action → share of solved points),
        ``sensitivity`` (sorted by swing) and ``points``.
    """
    if bool(axes) == (samples is not None):
        raise ValueError("give either grid axes or a number of samples")
    if axes:
        mode = "grid"
        names = [a.path for a in axes]
        inputs = [{"path": a.path, "low": a.low, "high": a.high, "steps": a.steps} for a in axes]
        ends = [(a.path, a.low, a.high, "--vary") for a in axes]
        n_points = math.prod(a.steps for a in axes)
        if n_points > max_points:
            raise ValueError(f"the grid has {n_points} points; at most {max_points} are allowed")
        points = [dict(zip(names, combo)) for combo in itertools.product(*(a.values() for a in axes))]
    else:
        mode = "monte_carlo"
        unc = list(case.uncertain if uncertain is None else uncertain)
        if not unc:
            raise ValueError("--samples needs [[uncertain]] blocks in the case or in a --scenarios file")
        if samples < 1:
            raise ValueError(f"--samples {samples}: must be a whole number ≥ 1")
        inputs = [{"path": u.path, "dist": u.dist, "low": u.low, "high": u.high,
                   **{k: getattr(u, k) for k in ("mode", "mean", "sd") if getattr(u, k) is not None}} for u in unc]
        ends = [(u.path, u.low, u.high, f"uncertain[{j}]") for j, u in enumerate(unc, start=1)]
        x = draw(unc, samples, seed)
        points = []
        for row in x:
            p: dict[str, Any] = {}
            for u, val in zip(unc, row):
                p[u.path] = coerce(u.path, val)
            points.append(p)
    _check_inputs(case, ends)
    oat = [(path, coerce(path, lo), coerce(path, hi)) for path, lo, hi, _ in ends]
    tasks = [make_task(case, {}, options, where="base")]
    tasks += [make_task(case, p, options, where=f"point {n}") for n, p in enumerate(points, start=1)]
    for path, lo, hi in oat:
        tasks += [make_task(case, {path: lo}, options, where=f"{path} low"),
                  make_task(case, {path: hi}, options, where=f"{path} high")]
    res = _solve_all(tasks, workers=workers, cluster=cluster, label="sweep", progress=progress)
    base, pts, ends_res = res[0], res[1:1 + len(points)], res[1 + len(points):]
    ok = [r for r in pts if r["status"] in ("optimal", "feasible")]
    costs = np.array([r["present_cost"] for r in ok], dtype=float)
    pc = {"solved": len(ok), "not_solved": len(pts) - len(ok)}
    if len(costs):
        qs = np.quantile(costs, [q / 100 for q in QUANTILES])
        pc.update({"quantiles": {str(q): _r(v) for q, v in zip(QUANTILES, qs)}, "mean": _r(costs.mean()),
                   "min": _r(costs.min()), "max": _r(costs.max())})
    else:
        pc.update({"quantiles": {str(q): None for q in QUANTILES}, "mean": None, "min": None, "max": None})
    freq: dict[str, Counter] = {}
    for r in ok:
        for u, act in r["first_year"].items():
            freq.setdefault(u, Counter())[act] += 1
    shares = {u: {a: round(n / len(ok), 6) for a, n in sorted(c.items(), key=lambda kv: (-kv[1], kv[0]))}
              for u, c in freq.items()}
    sens = []
    for j, (path, lo, hi) in enumerate(oat):
        r_lo, r_hi = ends_res[2 * j], ends_res[2 * j + 1]
        c_lo, c_hi = r_lo["present_cost"], r_hi["present_cost"]
        good = r_lo["status"] in ("optimal", "feasible") and r_hi["status"] in ("optimal", "feasible")
        sens.append({"path": path, "low": lo, "high": hi, "cost_at_low": _r(c_lo), "cost_at_high": _r(c_hi),
                     "status_at_low": r_lo["status"], "status_at_high": r_hi["status"],
                     "swing": _r(abs(c_hi - c_lo)) if good else None})
    sens.sort(key=lambda s: (s["swing"] is None, -(s["swing"] or 0.0)))
    return {
        "case": case.source, "title": case.study.title, "start_year": case.study.start_year, "mode": mode,
        "seed": seed if mode == "monte_carlo" else None, "points_count": len(points), "inputs": inputs,
        "base": {"status": base["status"], "present_cost": _r(base["present_cost"]),
                 "first_year_actions": base.get("first_year", {})},
        "present_cost": pc, "first_year_actions": shares, "sensitivity": sens,
        "points": [{"point": n, "values": p, "status": r["status"], "present_cost": _r(r["present_cost"])}
                   for n, (p, r) in enumerate(zip(points, pts), start=1)],
    }

