"""Text and CSV views of a sweep (:class:`tenure.scenarios.Sweep`)."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..scenarios import Sweep
from . import files
from .compare import csv_cell, group_units, text_money


def _csv(cols, rows, money_from: int) -> str:
    """Input values as they are (full precision); money columns from ``money_from`` on in cents."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(cols)
    for r in rows:
        w.writerow(r[:money_from] + [csv_cell(x) for x in r[money_from:]])
    return buf.getvalue()


def sweep_csv(sw: Sweep) -> str:
    """One row per point: its input values, status and present cost."""
    cols, rows = sw.draw_rows()
    return _csv(cols, rows, len(cols) - 2)


def sensitivity_csv(sw: Sweep) -> str:
    """One row per input: its low and high end, the present cost at each, and the swing."""
    return _csv(*sw.sensitivity_rows(), 3)


def write_sweep(sw: Sweep, out_dir: Path | str, run_id: str | None = None) -> list[Path]:
    """sweep.json (with the output set's ``run_id`` first when given), sweep.csv (points) and sensitivity.csv."""
    out = Path(out_dir)
    body = sw.to_dict()
    return [files.write_json(out / "sweep.json", {"run_id": run_id, **body} if run_id is not None else body),
            files.write_text(out / "sweep.csv", sweep_csv(sw)),
            files.write_text(out / "sensitivity.csv", sensitivity_csv(sw))]


def _decisions(sw: Sweep, out: list[str]) -> None:
    y0 = sw.start_year
    shares = sw.first_year_actions
    varying = [(u, tuple(s.items())) for u, s in shares.items() if len(s) > 1]
    fixed = [(u, next(iter(s))) for u, s in shares.items() if len(s) == 1]
    out.append(f"{y0} decisions: {len(fixed)} unit(s) take the same action at every point")
    for name, act in group_units([(u, a) for u, a in fixed if a != "keep"]):
        out.append(f"  always: replace {name} with {act.split(':', 1)[1]}")
    if varying:
        out.append("  depends on the inputs (share of points where each action is optimal):")
        for name, acts in group_units(varying):
            out.append(f"    {name:<16} " + ", ".join(f"{a} {s:.0%}" for a, s in acts))


def sweep_text(sw: Sweep) -> str:
    """The terminal view of a sweep."""
    pc = sw.present_cost
    n = sw.points_count
    how = f"Monte Carlo, {n} draws, seed {sw.seed}" if sw.mode == "monte_carlo" else f"grid of {n} points"
    out = [f"{sw.title or 'sweep'} — {how}", "─" * 72]
    for i in sw.inputs:
        if i.dist is None:
            out.append(f"  {i.path}: {i.low:g} … {i.high:g} in {i.steps} steps")
        else:
            extra = "".join(f", {k} {getattr(i, k):g}" for k in ("mode", "mean", "sd") if getattr(i, k) is not None)
            out.append(f"  {i.path}: {i.dist} on [{i.low:g}, {i.high:g}]{extra}")
    out.append("")
    out.append(f"base case present cost: {text_money(sw.base.present_cost)} ({sw.base.status})")
    out.append(f"present cost ({sw.start_year} money) over {pc.solved} solved point(s)"
               + (f"; {pc.not_solved} not solved" if pc.not_solved else ""))
    out.append("  " + "".join(f"{'P' + q:>14}" for q in pc.quantiles) + f"{'mean':>14}")
    out.append("  " + "".join(f"{text_money(v):>14}" for v in pc.quantiles.values()) + f"{text_money(pc.mean):>14}")
    out.append("")
    _decisions(sw, out)
    out.append("")
    out.append("One at a time (each input at its low and high end, the others as in the case)")
    out.append(f"{'input':<40}{'low':>10}{'high':>10}{'cost at low':>16}{'cost at high':>16}{'swing':>14}")
    top = max([s.swing or 0.0 for s in sw.sensitivity] + [1e-9])
    for s in sw.sensitivity:
        bar = "█" * int(round(12 * (s.swing or 0.0) / top))
        out.append(f"{s.path:<40}{s.low:>10g}{s.high:>10g}{text_money(s.cost_at_low):>16}"
                   f"{text_money(s.cost_at_high):>16}{text_money(s.swing):>14} {bar}")
    return "\n".join(out)
