"""Outputs of ``tenure fit``: fitted.toml, fit.json, fit.html, written as one set.

``fitted.toml`` is the case file's own text with each fitted ``om`` and ``salvage`` value put in
place (a comment above each fitted line gives n, the form and the fit statistics) and every other
line unchanged, except the inventory path of ``[fleet] file``, rewritten relative to the output
folder so that the file loads from there.  The new text is parsed back and compared with the
expected document before anything is written.

:func:`write_set` renders every file in memory, writes them into a fresh temporary folder beside
DIR and renames that folder into place, so DIR never holds a half-written set.
"""

from __future__ import annotations

import copy
import json
import os
import shutil
import tempfile
import tomllib
from pathlib import Path
from typing import Mapping

from ..model import Case, OMCurve, ValueCurve
from .result import FitResult, FormFit, TypeFit

FILES = ("fitted.toml", "fit.json", "fit.html")
#: allowed ranges of the parameters (docs/case-format.md), used to clip [[uncertain]] bounds
BOUNDS = {"first": (0.0, None), "growth": (-0.999, None), "retain": (1e-9, 1.0), "life": (1e-9, None),
          "floor": (0.0, 0.999), "gradient": (None, None)}


def _g(x: float) -> str:
    return f"{float(x):.10g}"


def inline(curve: OMCurve | ValueCurve) -> str:
    """The curve as a TOML inline value, in the case format."""
    if curve.kind == "table":
        return "[" + ", ".join(_g(v) for v in curve.table) + "]"
    if isinstance(curve, OMCurve):
        second = ("gradient", curve.gradient) if curve.kind == "gradient" else ("growth", curve.growth)
        return f"{{ first = {_g(curve.first)}, {second[0]} = {_g(second[1])} }}"
    if curve.kind == "retain":
        return f"{{ retain = {_g(curve.retain)} }}"
    return f"{{ life = {_g(curve.life)}, floor = {_g(curve.floor)} }}"


def comment(tf: TypeFit, f: FormFit, what: str, others: tuple[FormFit, ...]) -> str:
    """One comment line: n, the form, parameters with standard errors, R², AIC of the forms tried."""
    n = (f"{tf.n_unit_years} unit-years of {tf.n_units} units" if what == "O&M" else f"{tf.n_sales} sales")
    shown = list(f.params)[:2] if f.form != "list" else []
    pars = ", ".join(f"{k} {_g(f.params[k])[:10]} (se {f.se[k]:.3g})" for k in shown)
    aics = ", ".join(f"{o.form} {o.aic:.1f}" for o in others)
    scale = " (log scale)" if f.form in ("growth", "retain") else ""
    return (f"# fitted by tenure fit: {what} form {f.form} from {n}; {pars + '; ' if pars else ''}"
            f"R²{scale} {f.r2:.3f}; AIC {aics}")


def _scan(lines: list[str]) -> list[tuple[int, int, str]]:
    """Top-level ``key = value`` spans (first line, last line, key) and table headers (line, line, '[…]')."""
    out, depth, j = [], 0, 0
    while j < len(lines):
        text = _code(lines[j])
        if depth == 0 and text.lstrip().startswith("["):
            out.append((j, j, text.strip()))
            j += 1
            continue
        if depth == 0 and "=" in text:
            key = text.split("=", 1)[0].strip()
            start = j
            depth += _depth(text.split("=", 1)[1])
            while depth > 0 and j + 1 < len(lines):
                j += 1
                depth += _depth(_code(lines[j]))
            out.append((start, j, key))
        j += 1
    return out


def _code(line: str) -> str:
    """The line without its comment (quotes respected)."""
    quote = None
    for i, ch in enumerate(line):
        if quote:
            if ch == quote and line[i - 1] != "\\":
                quote = None
        elif ch in "\"'":
            quote = ch
        elif ch == "#":
            return line[:i]
    return line


def _depth(text: str) -> int:
    d, quote = 0, None
    for i, ch in enumerate(text):
        if quote:
            if ch == quote and text[i - 1] != "\\":
                quote = None
        elif ch in "\"'":
            quote = ch
        elif ch in "[{":
            d += 1
        elif ch in "]}":
            d -= 1
    return d


class PlacementError(RuntimeError):
    """The case text could not be edited in place (e.g. asset types written as inline tables)."""


def fitted_toml(case_text: str, doc: Mapping, result: FitResult, case: Case, out_dir: Path,
                uncertain: bool = False) -> str:
    """The case text with fitted curves in place (see the module notes)."""
    lines = case_text.splitlines()
    spans = _scan(lines)
    expected = copy.deepcopy(dict(doc))
    blocks = [k for k, (a, _, key) in enumerate(spans) if key == "[[asset_type]]"]
    if len(blocks) != len(expected.get("asset_type", [])):
        raise PlacementError("asset types must be written as [[asset_type]] blocks to be edited in place")
    edits: dict[int, tuple[int, list[str]]] = {}  # first line → (last line, new lines)
    for b, k in enumerate(blocks):
        raw = expected["asset_type"][b]
        tf = result.type(raw["id"])
        end = next((m for m in range(k + 1, len(spans)) if spans[m][2].startswith("[")), len(spans))
        keys = {spans[m][2]: spans[m] for m in range(k + 1, end)}
        for what, chosen, curve, forms in (("om", tf.chosen_om, tf.om, tf.om_forms),
                                           ("salvage", tf.chosen_value, tf.salvage, tf.value_forms)):
            if chosen is None:
                continue
            if what not in keys:
                raise PlacementError(f"asset type {raw['id']!r}: no top-level '{what} = …' line to replace")
            a, z, _ = keys[what]
            indent = lines[a][: len(lines[a]) - len(lines[a].lstrip())]
            new = [indent + comment(tf, chosen, "O&M" if what == "om" else "market value", forms),
                   f"{indent}{what} = {inline(curve)}"]
            if what == "om" and "max_age" not in keys and curve.kind != "table":
                case_type = case.type(raw["id"])
                new.insert(1, f"{indent}max_age = {case_type.max_age}   # was the length of the O&M list")
                raw["max_age"] = case_type.max_age
            edits[a] = (z, new)
            raw[what] = tomllib.loads(f"v = {inline(curve)}")["v"]
    _fleet_path(lines, spans, expected, case, out_dir, edits)
    text = []
    j = 0
    while j < len(lines):
        if j in edits:
            z, new = edits[j]
            text += new
            j = z + 1
        else:
            text.append(lines[j])
            j += 1
    if uncertain:
        blocks_text, added = uncertain_blocks(result, case)
        text += blocks_text
        expected["uncertain"] = list(expected.get("uncertain", [])) + added
    out = "\n".join(text) + "\n"
    if tomllib.loads(out) != expected:
        raise PlacementError("the edited case text does not parse back to the expected document")
    return out


def _fleet_path(lines, spans, expected, case: Case, out_dir: Path, edits) -> None:
    fleet = next((k for k, s in enumerate(spans) if s[2] == "[fleet]"), None)
    if fleet is None or "fleet" not in expected:
        return
    key = next((spans[m] for m in range(fleet + 1, len(spans)) if spans[m][2].startswith("[") or
                spans[m][2] == "file"), None)
    if key is None or key[2] != "file":
        return
    src = Path(expected["fleet"]["file"])
    where = src if src.is_absolute() else Path(case.source).resolve().parent / src
    rel = os.path.relpath(where, Path(out_dir).resolve())
    edits[key[0]] = (key[1], [f"file = {json.dumps(rel)}   # relative to this file (written by tenure fit)"])
    expected["fleet"]["file"] = rel


def uncertain_blocks(result: FitResult, case: Case) -> tuple[list[str], list[dict]]:
    """``[[uncertain]]`` blocks: normal(mean = estimate, sd = standard error) clipped to the 90 % interval."""
    have = {u.path for u in case.uncertain}
    lines = ["", "# ---------------------------------------------------------------------------",
             "# Fitted by tenure fit: each parameter normal(estimate, standard error), clipped to its 90 %",
             "# interval (so 5 % of draws sit at each end). Parameters are drawn independently.",
             "# ---------------------------------------------------------------------------"]
    added = []
    for tf in result.types:
        for key, f in (("om", tf.chosen_om), ("salvage", tf.chosen_value)):
            if f is None or f.form == "list":
                continue
            for p, v in f.params.items():
                path = f"asset_type.{tf.type}.{key}.{p}"
                lo_b, hi_b = BOUNDS.get(p, (None, None))
                low, high = f.low[p], f.high[p]
                low = max(low, lo_b) if lo_b is not None else low
                high = min(high, hi_b) if hi_b is not None else high
                if path in have or not (low <= v <= high) or not f.se[p] > 0:
                    continue
                block = {"path": path, "dist": "normal", "mean": float(_g(v)), "sd": float(_g(f.se[p])),
                         "low": float(_g(low)), "high": float(_g(high))}
                lines += ["", "[[uncertain]]", f'path = "{path}"', 'dist = "normal"'] + \
                    [f"{k} = {_g(block[k])}" for k in ("mean", "sd", "low", "high")]
                added.append(block)
    return lines, added


def fit_json(result: FitResult) -> str:
    return json.dumps(result.to_dict(), indent=2, ensure_ascii=False) + "\n"


def write_set(out: Path | str, files: Mapping[str, bytes]) -> list[Path]:
    """Write ``files`` (name → content) as folder ``out``, all at once.

    The files go into a new temporary folder beside ``out``, which is then renamed to ``out``; an
    existing ``out`` (holding only files of an earlier fit) is first renamed aside and removed after.
    """
    out = Path(out)
    if out.exists():
        if not out.is_dir():
            raise FileExistsError(f"{out} exists and is not a folder")
        foreign = sorted(p.name for p in out.iterdir() if p.name not in FILES)
        if foreign:
            raise FileExistsError(f"{out} holds other files ({', '.join(foreign[:5])}); give a new folder or "
                                  "one that holds only an earlier fit")
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent))
    try:
        os.chmod(tmp, 0o777 & ~_umask())
        for name, data in files.items():
            (tmp / name).write_bytes(data)
        old = None
        if out.exists():
            old = out.parent / f"{tmp.name}.old"
            os.replace(out, old)
        os.replace(tmp, out)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return [out / name for name in files]


def _umask() -> int:
    old = os.umask(0)
    os.umask(old)
    return old


# ---------------------------------------------------------------------------
# fit.html and the printed summary
# ---------------------------------------------------------------------------
def _fmt(v) -> str:
    if v is None or v != v:
        return "—"
    v = float(v)
    return f"{v:,.0f}" if abs(v) >= 1000 else f"{v:.4g}"


def _form_rows(tf: TypeFit) -> list[dict]:
    out = []
    for f in tf.om_forms + tf.value_forms:
        rows = [{"name": k, "value": _fmt(v), "se": _fmt(f.se[k]),
                 "interval": f"{_fmt(f.low[k])} … {_fmt(f.high[k])}"} for k, v in f.params.items()]
        out.append({"form": f.form, "rows": rows, "n": f.n, "r2": f"{f.r2:.3f}", "aic": f"{f.aic:.1f}",
                    "note": f.note, "chosen": f.form in (tf.om_chosen, tf.value_chosen)})
    return out


def fit_html(result: FitResult, case: Case, written: str) -> str:
    """The self-contained report page (inline style and SVG; no scripts, no external files)."""
    import jinja2

    from .. import __version__, curves
    from ..report.text import CAUTION
    from . import charts

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(Path(__file__).parent / "templates"), autoescape=True)
    uy, sales = result.unit_years, result.sales
    types = []
    for tf in result.types:
        t = case.type(tf.type)
        chart = None
        u, s = uy.loc[uy["type"] == tf.type], sales.loc[sales["type"] == tf.type]
        if len(u) or len(s):
            chart = charts.type_chart(tf, u, s, lambda a, t=t: curves.om_base(t.om, a),
                                      lambda a, t=t: curves.value_fraction(t.salvage, a, t.price), t.max_age)
        types.append({"type": tf.type, "class_": tf.class_, "om_chosen": tf.om_chosen, "value_chosen": tf.value_chosen,
                      "n_units": tf.n_units, "n_unit_years": tf.n_unit_years, "n_sales": tf.n_sales,
                      "life_case": tf.life_case, "life_fitted": tf.life_fitted, "chart": chart,
                      "forms": _form_rows(tf), "flags": tf.flags})
    return env.get_template("fit.html.j2").render(
        title=case.study.title or Path(case.source).stem, source=case.source, start_year=case.study.start_year,
        written=written, version=__version__, price_level=result.price_level["method"], method=result.method,
        inputs=result.inputs, types=types, max_points=charts.MAX_POINTS, caution=CAUTION)


def summary(result: FitResult, out: str, written: list[str]) -> str:
    """The printed summary: chosen forms and economic lives per type, flags, files written."""
    from ..report.text import CAUTION

    n_cost = sum(c["records"] for c in result.inputs["costs"])
    n_sale = result.inputs["sales"]["records"] if result.inputs["sales"] else 0
    lines = [f"Fitted from {n_cost:,} cost records and {n_sale:,} sales ({result.inputs['unit_years_kept']:,} "
             f"unit-years kept, {result.inputs['unit_years_dropped_partial']:,} partial dropped).",
             f"Price level: {result.price_level['method']}.", "",
             f"{'type':<18} {'O&M form':<10} {'value form':<10} {'units':>5} {'unit-yrs':>8} {'sales':>5} "
             f"{'life: case':>10} {'fitted':>6}"]
    for tf in result.types:
        lines.append(f"{tf.type:<18} {tf.om_chosen or '(case)':<10} {tf.value_chosen or '(case)':<10} "
                     f"{tf.n_units:>5} {tf.n_unit_years:>8} {tf.n_sales:>5} {tf.life_case:>10} {tf.life_fitted:>6}")
    if result.warnings:
        lines += ["", "flags:"] + [f"  {w}" for w in result.warnings]
    lines += ["", f"written to {out}/: " + ", ".join(written), CAUTION]
    return "\n".join(lines)
