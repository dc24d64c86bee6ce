"""Text and CSV views of a sweep (``sweep.json``)."""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Mapping

from . import files
from .compare import _cell, _group_units, _money


def sweep_csv(doc: Mapping) -> str:
    """One row per point: its input values, status and present cost."""
    names = [i["path"] for i in doc["inputs"]]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["point"] + names + ["status", "present_cost"])
    for p in doc["points"]:
        w.writerow([p["point"]] + [p["values"][n] for n in names] + [p["status"], _cell(p["present_cost"])])
    return buf.getvalue()


def sensitivity_csv(doc: Mapping) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["path", "low", "high", "cost_at_low", "cost_at_high", "swing"])
    for s in doc["sensitivity"]:
        w.writerow([s["path"], s["low"], s["high"], _cell(s["cost_at_low"]), _cell(s["cost_at_high"]),
                    _cell(s["swing"])])
    return buf.getvalue()


def write_sweep(doc: Mapping, out_dir: Path | str) -> list[Path]:
    """sweep.json, sweep.csv (points) and sensitivity.csv, written atomically."""
    out = Path(out_dir)
    return [files.write_json(out / "sweep.json", doc), files.write_text(out / "sweep.csv", sweep_csv(doc)),
            files.write_text(out / "sensitivity.csv", sensitivity_csv(doc))]


def sweep_text(doc: Mapping) -> str:
    """The terminal view of ``sweep.json``."""
    pc = doc["present_cost"]
    y0 = doc["start_year"]
    n = doc["points_count"]
    how = (f"Monte Carlo, {n} draws, seed {doc['seed']}" if doc["mode"] == "monte_carlo"
           else f"grid of {n} points")
    out = [f"{doc.get('title') or 'sweep'} — {how}", "─" * 72]
    for i in doc["inputs"]:
        if doc["mode"] == "grid":
            out.append(f"  {i['path']}: {i['low']:g} … {i['high']:g} in {i['steps']} steps")
        else:
            extra = "".join(f", {k} {i[k]:g}" for k in ("mode", "mean", "sd") if k in i)
            out.append(f"  {i['path']}: {i['dist']} on [{i['low']:g}, {i['high']:g}]{extra}")
    out.append("")
    out.append(f"base case present cost: {_money(doc['base']['present_cost'])} ({doc['base']['status']})")
    out.append(f"present cost ({y0} money) over {pc['solved']} solved point(s)"
               + (f"; {pc['not_solved']} not solved" if pc["not_solved"] else ""))
    out.append("  " + "".join(f"{'P' + q:>14}" for q in pc["quantiles"]) + f"{'mean':>14}")
    out.append("  " + "".join(f"{_money(v):>14}" for v in pc["quantiles"].values()) + f"{_money(pc['mean']):>14}")
    out.append("")
    shares = doc["first_year_actions"]
    varying = [(u, tuple(s.items())) for u, s in shares.items() if len(s) > 1]
    fixed = [(u, next(iter(s))) for u, s in shares.items() if len(s) == 1]
    out.append(f"{y0} decisions: {len(fixed)} unit(s) take the same action at every point")
    fixed_buys = [(u, a) for u, a in fixed if a != "keep"]
    for name, act in _group_units(fixed_buys):
        out.append(f"  always: replace {name} with {act.split(':', 1)[1]}")
    if varying:
        out.append("  depends on the inputs (share of points where each action is optimal):")
        for name, acts in _group_units(varying):
            out.append(f"    {name:<16} " + ", ".join(f"{a} {s:.0%}" for a, s in acts))
    out.append("")
    out.append("One at a time (each input at its low and high end, the others as in the case)")
    out.append(f"{'input':<40}{'low':>10}{'high':>10}{'cost at low':>16}{'cost at high':>16}{'swing':>14}")
    top = max([s["swing"] or 0.0 for s in doc["sensitivity"]] + [1e-9])
    for s in doc["sensitivity"]:
        bar = "█" * int(round(12 * (s["swing"] or 0.0) / top))
        out.append(f"{s['path']:<40}{s['low']:>10g}{s['high']:>10g}{_money(s['cost_at_low']):>16}"
                   f"{_money(s['cost_at_high']):>16}{_money(s['swing']):>14} {bar}")
    return "\n".join(out)