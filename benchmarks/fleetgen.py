"""Invented fleets for benchmarks: seeded, any size, with technology change and a cap.

``invented_fleet(units, classes, seed)`` returns a case document (a dict in
the case-file format, version 1).  Each class has an incumbent type, and in
half the classes a newer type that arrives in a later year with a falling
price and lower O&M; ages are spread over each type's life.  The cap is set
from the uncapped plan's average yearly spend (``capped_case``).
"""

from __future__ import annotations

import numpy as np


def invented_fleet(units: int, classes: int, seed: int = 7, horizon: int = 30, max_age_hi: int = 18) -> dict:
    rng = np.random.default_rng(seed)
    start = 2027
    types, inv = [], []
    per = np.full(classes, units // classes)
    per[: units - per.sum()] += 1
    for c in range(classes):
        cls = f"class-{c:03d}"
        price = float(rng.uniform(40_000, 800_000))
        life = int(rng.integers(8, max_age_hi + 1))
        om1 = price * rng.uniform(0.04, 0.10)
        types.append({"id": f"{cls}-a", "class": cls, "price": round(price, -2), "price_change": 0.01,
                      "max_age": life, "om": {"first": round(om1, -1), "gradient": round(om1 * rng.uniform(0.08, 0.2), -1)},
                      "salvage": {"retain": round(float(rng.uniform(0.78, 0.88)), 3)}})
        if c % 2 == 0:
            types.append({"id": f"{cls}-b", "class": cls, "price": round(price * rng.uniform(1.3, 1.7), -2),
                          "price_change": -round(float(rng.uniform(0.02, 0.05)), 3),
                          "buy_from": int(start + rng.integers(2, 9)), "max_age": life,
                          "om": {"first": round(om1 * 0.55, -1), "growth": 0.05}, "om_change": -0.01,
                          "salvage": {"life": life, "floor": 0.08}})
        ages = rng.integers(0, life + 1, size=int(per[c]))
        for j, a in enumerate(ages):
            inv.append({"id": f"U{c:03d}-{j:04d}", "type": f"{cls}-a", "age": int(a)})
    return {"study": {"title": f"invented fleet {units} units / {classes} classes (seed {seed})", "start_year": start,
                      "horizon": horizon, "discount_rate": 0.05, "end_value": "salvage"},
            "asset_type": types, "unit": inv}


def capped_case(doc: dict, factor: float = 1.0) -> dict:
    """The same fleet with a cap at ``factor`` × the uncapped plan's average yearly capital."""
    from tenure.case import build_case
    from tenure.solve import solve_uncapped

    plan = solve_uncapped(build_case(doc))
    avg = sum(y.capital for y in plan.years) / len(plan.years)
    out = dict(doc)
    out["budget"] = {"cap": round(avg * factor, -3), "basis": "gross"}
    return out
