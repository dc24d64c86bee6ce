"""Text and CSV views of a comparison of scenarios (``compare.json``)."""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any, Mapping, Sequence

from ..model import Case
from . import files


def compare_csv(doc: Mapping) -> str:
    """One row per scenario: cost, difference, max regret, capital by year, units bought by type."""
    rows = doc["scenarios"]
    years = sorted({y for r in rows for y in r["capital_by_year"]})
    types = []
    for r in rows:
        types += [t for t in r["buys_by_type"] if t not in types]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["id", "note", "status", "present_cost", "difference", "max_regret"]
               + [f"capital_{y}" for y in years] + [f"buys_{t}" for t in types])
    mr = doc["regret"]["max_regret"]
    for r in rows:
        w.writerow([r["id"], r["note"], r["status"], _cell(r["present_cost"]), _cell(r["difference"]),
                    _cell(mr.get(r["id"]))]
                   + [_cell(r["capital_by_year"].get(y)) for y in years]
                   + [r["buys_by_type"].get(t, 0) for t in types])
    return buf.getvalue()


def _cell(x):
    if x is None:
        return ""
    return f"{x:.2f}" if isinstance(x, float) else x


def _money(x, signed=False) -> str:
    if x is None:
        return "—"
    if signed and round(x) == 0:
        return "0"
    return f"{x:+,.0f}" if signed else f"{x:,.0f}"


def _group_units(items: Sequence[tuple[str, Any]]) -> list[tuple[str, Any]]:
    """Collapse consecutive units of one inventory row with the same value: ``RT-L12#1–2``."""
    out: list[tuple[str, Any]] = []
    run: list[str] = []
    prev_row = prev_val = None

    def flush():
        if run:
            if len(run) == 1:
                out.append((run[0], prev_val))
            else:
                out.append((f"{run[0]}–{run[-1].rsplit('#', 1)[1]}", prev_val))

    for name, val in items:
        row = name.rsplit("#", 1)[0]
        if run and row == prev_row and val == prev_val:
            run.append(name)
            continue
        flush()
        run = [name]
        prev_row, prev_val = row, val
    flush()
    return out


def compare_text(doc: Mapping) -> str:
    """The terminal view of ``compare.json``."""
    rows = doc["scenarios"]
    ids = [r["id"] for r in rows]
    w = max(13, *(len(i) + 2 for i in ids))
    lab = 26
    y0, H = doc["start_year"], doc["horizon"]
    out = [f"{doc.get('title') or 'compare'} — {len(rows) - 1} scenario(s) against the base case",
           "─" * (lab + w * len(ids))]
    for r in rows:
        out.append(f"  {r['id']:<{max(len(i) for i in ids)}}  {r['note'] or ''}")
    out.append("")
    out.append(f"{'':<{lab}}" + "".join(i.rjust(w) for i in ids))

    def line(label, cells):
        out.append(f"{label:<{lab}}" + "".join(str(c).rjust(w) for c in cells))

    line("status", [r["status"] for r in rows])
    line(f"present cost ({y0} money)", [_money(r["present_cost"]) for r in rows])
    line("difference from base", [_money(r["difference"], signed=True) for r in rows])
    out.append("capital spent (undiscounted)")
    for k0 in range(0, H, 5):
        ys = [str(y) for y in range(y0 + k0, min(y0 + k0 + 5, y0 + H))]
        line(f"  {ys[0]}–{ys[-1]}", [_money(sum(r["capital_by_year"].get(y, 0.0) for y in ys))
                                     if r["capital_by_year"] else "—" for r in rows])
    types = []
    for r in rows:
        types += [t for t in r["buys_by_type"] if t not in types]
    out.append("units bought over the horizon")
    for t in types:
        line(f"  {t}", [r["buys_by_type"].get(t, 0) for r in rows])

    base = rows[0]
    if len(rows) > 1:
        out.append("")
        out.append("In brief")
    for r in rows[1:]:
        if r["difference"] is None:
            out.append(f"  {r['id']}: {r['status']} — {r['message'] or 'no comparable plan'}")
            continue
        rel = r["difference"] / abs(base["present_cost"]) if base["present_cost"] else 0.0
        b_under = doc["regret"]["breaks"]["base"][r["id"]]
        reg_b = doc["regret"]["regret"]["base"][r["id"]]
        if b_under:
            fate = ("the base plan cannot be carried out under it (" + b_under[0]
                    + (" …" if len(b_under) > 1 else "") + ")")
        elif reg_b is not None and round(reg_b) == 0:
            fate = "kept as is, the base plan is the cheapest plan known there too"
        else:
            fate = f"kept as is, the base plan would cost {_money(reg_b)} more there than the best plan"
        out.append(f"  {r['id']}: re-planned, {_money(r['difference'], signed=True)} ({rel:+.1%}) against the base; "
                   + fate)

    differ = doc["differ_early"]
    out.append("")
    if differ:
        solved = doc["safe_now_from"]
        out.append(f"Decisions in {y0}–{y0 + 1} that differ between scenarios")
        out.append(f"{'unit':<18}{'year':>6}" + "".join(s.rjust(max(w, 20)) for s in solved))
        for year in (y0, y0 + 1):
            items = [(d["unit"], tuple(d["actions"][s] for s in solved)) for d in differ if d["year"] == year]
            for name, acts in _group_units(items):
                out.append(f"{name:<18}{year:>6}" + "".join(a.rjust(max(w, 20)) for a in acts))
    else:
        out.append(f"Every scenario's plan takes the same decisions in {y0}–{y0 + 1}.")

    reg = doc["regret"]
    out.append("")
    out.append("Regret: each row's plan, schedule fixed, costed under each column's assumptions,")
    out.append("less the least cost of any plan that can be carried out there ('breaks': it cannot)")
    out.append(f"{'plan of':<{lab}}" + "".join(i.rjust(w) for i in ids) + "max regret".rjust(w))
    for i in ids:
        cells = []
        for j in ids:
            if reg["breaks"][i][j]:
                cells.append("breaks" if reg["cost"][i][j] is not None else "n/a")
            else:
                cells.append(_money(reg["regret"][i][j]))
        cells.append(_money(reg["max_regret"].get(i)))
        line(f"  {i}", cells)
    notes = [(i, j, reg["breaks"][i][j]) for i in ids for j in ids if reg["breaks"][i][j]]
    for i, j, msgs in notes:
        more = f" (+{len(msgs) - 3} more)" if len(msgs) > 3 else ""
        out.append(f"  {i} plan under {j}: " + "; ".join(msgs[:3]) + more)
    for i in ids:
        own = reg["regret"][i][i]
        if own is not None and own > 0.005 * max(abs(reg["best_under"][i] or 0.0), 1.0) * 1e-3:
            cheaper = [k for k in ids if reg["regret"][k][i] == 0.0]
            out.append(f"  note: under {i} the {', '.join(cheaper) or 'another'} plan is {_money(own)} cheaper than "
                       f"{i}'s own plan (the capped solve stops within its optimality gap)")
    ch = reg["least_max_regret"]
    if ch is not None:
        mr = reg["max_regret"].get(ch)
        out.append(f"least maximum regret: the {ch} plan"
                   + (f" (at most {_money(mr)} above the best plan of any scenario)" if mr is not None else "")
                   + f" — {reg['rule']}")

    out.append("")
    safe = doc["safe_now"]
    solved = doc["safe_now_from"]
    buys = [(s["unit"], s["action"]) for s in safe if s["action"] != "keep"]
    keeps = [s for s in safe if s["action"] == "keep"]
    n_units = len(rows[0]["first_year_actions"]) or len(safe)
    out.append(f"Safe to commit now ({y0}: the same action in the plans of {', '.join(solved)}):")
    if buys:
        for name, act in _group_units(buys):
            out.append(f"  replace {name} with {act.split(':', 1)[1]}")
    else:
        out.append("  no purchase is common to every scenario's plan")
    out.append(f"  keep {len(keeps)} unit(s); {n_units - len(safe)} unit(s) have first-year decisions "
               "that depend on the scenario")
    return "\n".join(out)


def write_compare(doc: Mapping, case: Case, out_dir: Path | str) -> list[Path]:
    """compare.json and compare.csv (atomic writes), and the report when its writer is installed."""
    out = Path(out_dir)
    paths = [files.write_json(out / "compare.json", doc), files.write_text(out / "compare.csv", compare_csv(doc))]
    from . import documents

    paths.append(documents.write_compare_report(doc, case, out))
    return paths

