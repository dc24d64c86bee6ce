"""Text and CSV views of a comparison of scenarios (:class:`tenure.scenarios.Comparison`)."""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any, Sequence

from ..model import Case
from ..scenarios import Comparison
from . import files


def csv_cell(x):
    """A CSV cell: empty for None, floats with two decimals (cents), anything else as it is."""
    if x is None:
        return ""
    return f"{x:.2f}" if isinstance(x, float) else x


def text_money(x, signed=False) -> str:
    """Whole currency units with comma grouping for the terminal; '—' for None."""
    if x is None:
        return "—"
    if signed and round(x) == 0:
        return "0"
    return f"{x:+,.0f}" if signed else f"{x:,.0f}"


def group_units(items: Sequence[tuple[str, Any]]) -> list[tuple[str, Any]]:
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


def compare_csv(cmp: Comparison) -> str:
    """One row per scenario: cost, difference, max regret, capital by year, units bought by type."""
    cols, rows = cmp.scenario_rows()
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(cols)
    for r in rows:
        w.writerow([csv_cell(x) for x in r])
    return buf.getvalue()


def _figures(cmp: Comparison, out: list[str], line, lab: int) -> None:
    """Status, cost, difference, capital by five-year block and units bought, one column per scenario."""
    rows = cmp.scenarios
    y0, H = cmp.start_year, cmp.horizon
    line("status", [r.status for r in rows])
    line(f"present cost ({y0} money)", [text_money(r.present_cost) for r in rows])
    line("difference from base", [text_money(r.difference, signed=True) for r in rows])
    out.append("capital spent (undiscounted)")
    for k0 in range(0, H, 5):
        ys = [str(y) for y in range(y0 + k0, min(y0 + k0 + 5, y0 + H))]
        line(f"  {ys[0]}–{ys[-1]}", [text_money(sum(r.capital_by_year.get(y, 0.0) for y in ys))
                                     if r.capital_by_year else "—" for r in rows])
    out.append("units bought over the horizon")
    for t in cmp.bought_types():
        line(f"  {t}", [r.buys_by_type.get(t, 0) for r in rows])


def _in_brief(cmp: Comparison, out: list[str]) -> None:
    base = cmp.base
    reg = cmp.regret
    if len(cmp.scenarios) > 1:
        out.append("")
        out.append("In brief")
    for r in cmp.scenarios[1:]:
        if r.difference is None:
            out.append(f"  {r.id}: {r.status} — {r.message or 'no comparable plan'}")
            continue
        rel = r.difference / abs(base.present_cost) if base.present_cost else 0.0
        b_under = reg.breaks["base"][r.id]
        reg_b = reg.regret["base"][r.id]
        if b_under:
            fate = ("the base plan cannot be carried out under it (" + b_under[0]
                    + (" …" if len(b_under) > 1 else "") + ")")
        elif reg_b is not None and round(reg_b) == 0:
            fate = "kept as is, the base plan is the cheapest plan known there too"
        else:
            fate = f"kept as is, the base plan would cost {text_money(reg_b)} more there than the best plan"
        out.append(f"  {r.id}: re-planned, {text_money(r.difference, signed=True)} ({rel:+.1%}) against the base; "
                   + fate)


def _early(cmp: Comparison, out: list[str], w: int) -> None:
    y0 = cmp.start_year
    out.append("")
    if not cmp.differ_early:
        out.append(f"Every scenario's plan takes the same decisions in {y0}–{y0 + 1}.")
        return
    solved = cmp.safe_now_from
    out.append(f"Decisions in {y0}–{y0 + 1} that differ between scenarios")
    out.append(f"{'unit':<18}{'year':>6}" + "".join(s.rjust(max(w, 20)) for s in solved))
    for year in (y0, y0 + 1):
        items = [(d.unit, tuple(d.actions[s] for s in solved)) for d in cmp.differ_early if d.year == year]
        for name, acts in group_units(items):
            out.append(f"{name:<18}{year:>6}" + "".join(a.rjust(max(w, 20)) for a in acts))


def _own_plan_note(cmp: Comparison, i: str) -> str | None:
    """When scenario ``i``'s plan is another scenario's schedule (cheaper under ``i`` than ``i``'s own
    solve, which stopped within its proven gap): say so, from the scenario's message."""
    r = cmp.scenario(i)
    if not r.plan_from or r.plan_from == i:
        return None
    return f"  note: {i}: {r.message}"


def _tolerance_money(cmp: Comparison) -> dict:
    """Per scenario, its proven gap in money: gap × the least known cost under it [money]."""
    out = {}
    for j in cmp.ids:
        g, best = cmp.scenario(j).gap, cmp.regret.best_under.get(j)
        if g is not None and best is not None:
            out[j] = float(g) * abs(float(best))
    return out


def _gap_cell(cmp: Comparison, j: str, tol: dict) -> str:
    g = cmp.scenario(j).gap
    return "—" if g is None else f"{g:.3%}"


def _regret(cmp: Comparison, out: list[str], line, lab: int, w: int) -> None:
    reg = cmp.regret
    ids = cmp.ids
    out.append("")
    out.append("Regret: each row's plan, schedule fixed, costed under each column's assumptions,")
    out.append("less the least cost of any plan that can be carried out there ('breaks': it cannot)")
    out.append(f"{'plan of':<{lab}}" + "".join(i.rjust(w) for i in ids) + "max regret".rjust(w))
    tol = _tolerance_money(cmp)
    line("  proven gap", [_gap_cell(cmp, j, tol) for j in ids] + [""])
    marked = False
    for i in ids:
        cells = []
        for j in ids:
            if reg.breaks[i][j]:
                cells.append("breaks" if reg.cost[i][j] is not None else "n/a")
            else:
                r = reg.regret[i][j]
                within = r is not None and 0 < r <= tol.get(j, 0.0)
                marked |= within
                cells.append(text_money(r) + ("*" if within else ""))
        cells.append(text_money(reg.max_regret.get(i)))
        line(f"  {i}", cells)
    if marked:
        out.append("  * smaller than that scenario's proven gap (gap × least known cost): within solver "
                   "tolerance, not a difference the assumptions make")
    for i in ids:
        for j in ids:
            msgs = reg.breaks[i][j]
            if msgs:
                more = f" (+{len(msgs) - 3} more)" if len(msgs) > 3 else ""
                out.append(f"  {i} plan under {j}: " + "; ".join(msgs[:3]) + more)
    out += [n for n in (_own_plan_note(cmp, i) for i in ids) if n]
    ch = reg.least_max_regret
    if ch is not None:
        mr = reg.max_regret.get(ch)
        out.append(f"least maximum regret: the {ch} plan"
                   + (f" (at most {text_money(mr)} above the best plan of any scenario)" if mr is not None else "")
                   + f" — {reg.rule}")


def _commit_regret(cmp: Comparison, out: list[str], line, lab: int, w: int) -> None:
    reg, n = cmp.commit_regret, cmp.commit_years
    if reg is None:
        return
    ids = cmp.ids
    out.append("")
    out.append(f"Regret of committing each row's plan for its first {n} year(s), then re-planning under each")
    out.append("column's assumptions, less the best plan known there ('n/a': those years cannot be carried out)")
    out.append(f"{'plan of':<{lab}}" + "".join(i.rjust(w) for i in ids) + "max regret".rjust(w))
    for i in ids:
        cells = [("n/a" if reg.breaks[i][j] else text_money(reg.regret[i][j])) for j in ids]
        line(f"  {i}", cells + [text_money(reg.max_regret.get(i))])
    out += [f"  note: {x}" for x in cmp.commit_notes]
    if reg.least_max_regret is not None:
        out.append(f"least maximum regret when re-planning after {n} year(s): the {reg.least_max_regret} plan")


def _safe_now(cmp: Comparison, out: list[str]) -> None:
    safe = cmp.safe_now
    buys = [(s.unit, s.action) for s in safe if s.action != "keep"]
    keeps = [s for s in safe if s.action == "keep"]
    n_units = len(cmp.base.first_year_actions) or len(safe)
    out.append("")
    out.append(f"Safe to commit now ({cmp.start_year}: the same action in the plans of "
               f"{', '.join(cmp.safe_now_from)}):")
    if buys:
        for name, act in group_units(buys):
            kind, _, t = act.partition(":")
            out.append({"replace": f"  replace {name} with {t}", "buy": f"  buy {t} for {name} (a unit added)",
                        "sell": f"  sell {name}, not replaced"}.get(kind, f"  {kind} {name}"))
    else:
        out.append("  no purchase, overhaul or sale is common to every scenario's plan")
    out.append(f"  keep {len(keeps)} unit(s); {n_units - len(safe)} unit(s) have first-year decisions "
               "that depend on the scenario")


def compare_text(cmp: Comparison) -> str:
    """The terminal view of a comparison."""
    ids = cmp.ids
    w = max(13, *(len(i) + 2 for i in ids))
    lab = 26
    out = [f"{cmp.title or 'compare'} — {len(ids) - 1} scenario(s) against the base case",
           "─" * (lab + w * len(ids))]
    for r in cmp.scenarios:
        out.append(f"  {r.id:<{max(len(i) for i in ids)}}  {r.note or ''}")
    out.append("")
    out.append(f"{'':<{lab}}" + "".join(i.rjust(w) for i in ids))

    def line(label, cells):
        out.append(f"{label:<{lab}}" + "".join(str(c).rjust(w) for c in cells))

    _figures(cmp, out, line, lab)
    _in_brief(cmp, out)
    _early(cmp, out, w)
    _regret(cmp, out, line, lab, w)
    _commit_regret(cmp, out, line, lab, w)
    _safe_now(cmp, out)
    return "\n".join(out)


def write_compare(cmp: Comparison, case: Case, out_dir: Path | str, run_id: str | None = None) -> list[Path]:
    """compare.json (with the output set's ``run_id`` first when given), compare.csv and report.html."""
    from . import documents

    out = Path(out_dir)
    body = cmp.to_dict()
    return [files.write_json(out / "compare.json", {"run_id": run_id, **body} if run_id is not None else body),
            files.write_text(out / "compare.csv", compare_csv(cmp)),
            documents.write_compare_report(cmp, case, out, run_id)]
