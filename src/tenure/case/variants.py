"""What-if inputs: ``[[scenario]]`` overrides and ``[[uncertain]]`` inputs for sweeps."""

from __future__ import annotations

from typing import Mapping

from ..model import Scenario, Uncertain
from .keys import DISTRIBUTIONS, SCENARIO_KEYS, UNCERTAIN_KEYS
from .problems import Checker, blocks


def _scenarios(chk: Checker, doc: Mapping) -> list[Scenario]:
    out: list[Scenario] = []
    seen: set[str] = set()
    total, last = 0.0, "scenario"
    for j, b in enumerate(blocks(chk, doc, "scenario"), start=1):
        p = f"scenario[{j}]"
        chk.keys(b, SCENARIO_KEYS, p)
        sid = chk.string(b, "id", p)
        note = chk.string(b, "note", p, required=False, default="") or ""
        if sid is not None:
            if sid in seen or sid == "base":
                chk.bad(f"{p}.id", f"= {sid!r}: scenario ids must be unique and not 'base'")
            seen.add(sid)
        sets = chk.table(b.get("set", None), f"{p}.set") if "set" in b else None
        if "set" not in b:
            chk.bad(f"{p}.set", "missing: a table of overrides, e.g. { \"study.discount_rate\" = 0.07 }")
        prob = chk.number(b, "probability", p, required=False, lo=0, hi=1, what="a probability")
        if prob is not None:
            total, last = total + prob, p
        if sid is not None and sets is not None:
            out.append(Scenario(id=sid, note=note, set=dict(sets), probability=prob))
    if total > 1 + 1e-9:
        chk.bad(f"{last}.probability",
                f"the scenario probabilities sum to {total:g}: they must sum to at most 1 "
                "(the base case takes 1 − their sum)")
    return out


def _uncertain(chk: Checker, doc: Mapping) -> list[Uncertain]:
    out: list[Uncertain] = []
    for j, b in enumerate(blocks(chk, doc, "uncertain"), start=1):
        p = f"uncertain[{j}]"
        chk.keys(b, UNCERTAIN_KEYS, p)
        path = chk.string(b, "path", p)
        dist = chk.choice(b, "dist", p, DISTRIBUTIONS, "uniform")
        low = chk.number(b, "low", p)
        high = chk.number(b, "high", p)
        mode = chk.number(b, "mode", p, required=dist == "triangular")
        mean = chk.number(b, "mean", p, required=dist == "normal")
        sd = chk.number(b, "sd", p, required=dist == "normal", lo=0, lo_open=True, what="a number")
        if low is not None and high is not None and low > high:
            chk.bad(f"{p}.high", f"= {high:g}: must not be below low = {low:g}")
        if mode is not None and low is not None and high is not None and not (low <= mode <= high):
            chk.bad(f"{p}.mode", f"= {mode:g}: must lie in [low, high] = [{low:g}, {high:g}]")
        if None not in (path, low, high):
            out.append(Uncertain(path=path, dist=dist, low=low, high=high, mode=mode, mean=mean, sd=sd))
    return out
