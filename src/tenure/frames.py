"""Cases as pandas DataFrames and back: the same document a TOML case file gives.

:func:`case_from_frames` turns a study dict, a types frame, an inventory frame
and the optional budget, limits, scenarios and uncertain inputs into the
parsed-document dict that ``tomllib`` would produce for the equivalent case
file, then validates it with :func:`tenure.case.build_case` — the same checker,
so bad frames raise the same :class:`~tenure.case.CaseError` listing every
problem.  :func:`types_frame`, :func:`inventory_frame` and :func:`case_frames`
go the other way.

Layout (docs/api.md):

* **types**: one row per asset type, the ``[[asset_type]]`` field names as
  columns (``id``, ``class``, ``price``, ``price_change``, ``buy_from``,
  ``buy_until``, ``max_age``, ``om``, ``om_change``, ``salvage``).  Curves are
  cells holding what the TOML holds — a dict (``{"first": …, "gradient": …}``,
  ``{"retain": …}``) or a list by age; flattened columns ``om.first``,
  ``om.gradient``, ``om.growth``, ``salvage.retain``, ``salvage.life``,
  ``salvage.floor`` are accepted as well (when the curve cell is empty).
* **inventory**: one row per inventory line, columns ``id``, ``type``, ``age``
  and optionally ``count``.

An empty cell (None, NaN, NA) means "not given", as a missing key does in a
file.  Problems name row *j* (1-based, in frame order) as ``asset_type[j]`` or
``unit[j]``, the paths a case file's blocks get.
"""

from __future__ import annotations

import math
from typing import Any, Mapping, Sequence

import numpy as np

from .case import TYPE_KEYS, CaseError, Problem, build_case
from .case.keys import UNIT_KEYS, UNIT_MORE_KEYS
from .model import Case

#: source name used in problems about frames
FRAMES_SOURCE = "<frames>"
#: curve columns that may be given flattened as ``curve.key``
CURVE_KEYS = {"om": ("first", "gradient", "growth"), "salvage": ("retain", "life", "floor")}
UNIT_FRAME_COLUMNS = ("id", "type", "age", "count")


def _missing(v: Any) -> bool:
    if v is None:
        return True
    if isinstance(v, (float, np.floating)) and math.isnan(v):
        return True
    try:
        import pandas as pd

        return v is pd.NA or v is pd.NaT
    except ImportError:  # pragma: no cover - pandas is a dependency
        return False


def plain(v: Any) -> Any:
    """A cell as the plain Python value TOML would give (numpy scalars and arrays converted)."""
    if isinstance(v, np.generic):
        return v.item()
    if isinstance(v, (np.ndarray, tuple)):
        return [plain(x) for x in list(v)]
    if isinstance(v, list):
        return [plain(x) for x in v]
    if isinstance(v, Mapping):
        return {str(k): plain(x) for k, x in v.items() if not _missing(x)}
    return v


def _records(rows: Any, what: str) -> list[dict]:
    """Rows of a DataFrame, or a sequence of mappings, as a list of dicts with empty cells dropped."""
    if rows is None:
        return []
    if hasattr(rows, "to_dict") and hasattr(rows, "columns"):
        rows = rows.to_dict(orient="records")
    elif isinstance(rows, Mapping):
        rows = [rows]
    if not isinstance(rows, Sequence) or not all(isinstance(r, Mapping) for r in rows):
        raise CaseError([Problem(FRAMES_SOURCE, what, f"= {type(rows).__name__}: must be a DataFrame or a list "
                                                      "of dicts, one per row")])
    return [{str(k): plain(v) for k, v in r.items() if not _missing(v)} for r in rows]


def _unflatten(rec: dict, path: str, problems: list[Problem]) -> dict:
    """Fold ``om.first``-style columns of one types row into its curve dicts."""
    out = {k: v for k, v in rec.items() if "." not in k}
    for k, v in rec.items():
        if "." not in k:
            continue
        head, sub = k.split(".", 1)
        if head not in CURVE_KEYS:
            out[k] = v  # the checker reports it as an unknown key, with a hint
            continue
        if head in rec:
            problems.append(Problem(FRAMES_SOURCE, f"{path}.{k}", f"= {v!r}: give {head} either as one cell or as "
                                                                 f"{head}.* columns, not both"))
            continue
        out.setdefault(head, {})[sub] = v
    return out


def _unit_block(rec: dict) -> dict:
    """An inventory row as a ``[[unit]]`` block: columns other than the unit keys are kept attributes."""
    known = set(UNIT_KEYS) | set(UNIT_MORE_KEYS)
    out = {k: v for k, v in rec.items() if k in known}
    extra = {k: v for k, v in rec.items() if k not in known}
    if extra:
        out["attributes"] = {**extra, **out.get("attributes", {})}
    return out


def case_document(study: Mapping, types: Any, inventory: Any, budget: Mapping | None = None, limits: Any = None,
                  scenarios: Any = None, uncertain: Any = None) -> tuple[dict, list[Problem]]:
    """The case document (as ``tomllib`` would parse it) and the problems only frames can have."""
    problems: list[Problem] = []
    doc: dict[str, Any] = {"format": 1}
    doc["study"] = plain(dict(study)) if isinstance(study, Mapping) else study
    doc["asset_type"] = [_unflatten(r, f"asset_type[{j}]", problems)
                         for j, r in enumerate(_records(types, "types"), start=1)]
    doc["unit"] = [_unit_block(r) for r in _records(inventory, "inventory")]
    if budget is not None:
        doc["budget"] = plain(dict(budget)) if isinstance(budget, Mapping) else budget
    for key, rows in (("limit", limits), ("scenario", scenarios), ("uncertain", uncertain)):
        recs = _records(rows, key)
        if recs:
            doc[key] = recs
    return doc, problems


def case_from_frames(study: Mapping, types: Any, inventory: Any, budget: Mapping | None = None, limits: Any = None,
                     scenarios: Any = None, uncertain: Any = None, *, source: str = FRAMES_SOURCE) -> Case:
    """Validate frames with the case-file checker and build the :class:`~tenure.model.Case`.

    Parameters
    ----------
    study : dict
        The ``[study]`` table: ``start_year``, ``horizon`` [years], ``discount_rate`` [1/year], …
    types : DataFrame or list of dicts
        One row per asset type (layout in the module docstring).
    inventory : DataFrame or list of dicts
        One row per inventory line: ``id``, ``type``, ``age`` [years], ``count``.
    budget : dict, optional
        The ``[budget]`` table: ``cap`` [money/year], ``cap_by_year`` {year: money}, ``basis``.
    limits, scenarios, uncertain : DataFrame or list of dicts, optional
        The ``[[limit]]``, ``[[scenario]]`` and ``[[uncertain]]`` blocks.

    Raises
    ------
    CaseError
        With every problem, as for a case file (rows are ``asset_type[j]``, ``unit[j]``, 1-based).
    """
    doc, problems = case_document(study, types, inventory, budget, limits, scenarios, uncertain)
    try:
        case = build_case(doc, source=source)
    except CaseError as exc:
        raise CaseError([_renamed(p, source) for p in problems] + exc.problems) from None
    if problems:
        raise CaseError([_renamed(p, source) for p in problems])
    return case


def _renamed(p: Problem, source: str) -> Problem:
    return Problem(source, p.path, p.message) if p.file == FRAMES_SOURCE else p


# ---------------------------------------------------------------------------
# case -> frames
# ---------------------------------------------------------------------------
def types_frame(case: Case):
    """The case's asset types as a DataFrame indexed by type id (columns: the TOML field names).

    Curves are dict or list cells exactly as in the case document; fields a
    type leaves out are empty (None or NA).
    """
    import pandas as pd

    blocks = case.raw.get("asset_type") or []
    if isinstance(blocks, Mapping):
        blocks = [blocks]
    rows = [{k: b.get(k) for k in TYPE_KEYS} for b in blocks]
    df = pd.DataFrame(rows, columns=list(TYPE_KEYS))
    for col in ("price", "price_change", "om_change"):
        df[col] = pd.to_numeric(df[col]).astype(float)
    for col in ("buy_from", "buy_until", "max_age"):
        df[col] = pd.array([None if _missing(v) else int(v) for v in df[col]], dtype="Int64")
    for col in ("om", "salvage"):
        df[col] = pd.Series([plain(v) for v in (b.get(col) for b in blocks)], dtype=object)
    df.index = pd.Index(df["id"].tolist())
    return df


def inventory_frame(case: Case):
    """The inventory as a DataFrame: one row per inventory line, columns id, type, age [years], count, then the
    inventory's kept columns (department, …; None where a unit has none); ``usage`` [per year] after count
    when some unit has one."""
    import pandas as pd

    kept = list(case.attribute_names)
    # a usage column only when some unit has one (None: the type's usage_reference)
    used = ["usage"] if any(u.usage is not None for u in case.units) else []
    rows = [(u.id, u.type, u.age, u.count) + ((u.usage,) if used else ()) + tuple(dict(u.attributes).get(k) for k in kept)
            for u in case.units]
    return pd.DataFrame(rows, columns=list(UNIT_FRAME_COLUMNS) + used + kept)


def case_frames(case: Case) -> dict[str, Any]:
    """Every argument of :func:`case_from_frames` for this case.

    ``case_from_frames(**case_frames(c))`` rebuilds ``c`` (the same model objects).
    """
    import copy

    raw = case.raw

    def blocks(key):
        v = raw.get(key) or []
        return copy.deepcopy([v] if isinstance(v, Mapping) else list(v))

    return {"study": copy.deepcopy(dict(raw.get("study", {}))), "types": types_frame(case),
            "inventory": inventory_frame(case),
            "budget": copy.deepcopy(dict(raw["budget"])) if "budget" in raw else None,
            "limits": blocks("limit"), "scenarios": blocks("scenario"), "uncertain": blocks("uncertain")}
