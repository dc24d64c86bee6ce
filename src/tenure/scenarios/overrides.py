"""Override paths and applying them; scenario files.

A scenario is a set of overrides, ``dotted path = value``, applied to a copy
of the case document; the result is validated by :func:`tenure.case.build_case`
like any case.  Paths:

- ``study.<field>``                       (``discount_rate``, ``horizon``, ``end_value`` …)
- ``asset_type.<id>.<field>``             (any asset-type key but ``id``: ``price``,
  ``price_change``, ``buy_from``, ``buy_until``, ``max_age``, ``om``, ``om_change``,
  ``salvage``, ``class``); a table-valued field also takes ``.<key>`` for one of
  its present keys, e.g. ``asset_type.rt-bev.om.first``
- ``budget.cap``, ``budget.basis``, ``budget.cap_by_year.<year>`` (a missing
  ``[budget]`` is created)
- ``limit.<class>.max_buys_per_year``     (a missing ``[[limit]]`` of that class is created)
- ``unit.<id>.<field>``                   (``age``, ``type``, ``count`` of an inventory row)

Values are set exactly as given.  A path that does not exist is reported
with the nearest valid one.  Values for whole-number fields (years, ages,
counts, limits) swept by :mod:`tenure.scenarios.sweep` are rounded to the
nearest whole number by :func:`coerce` before they are set.
"""

from __future__ import annotations

import copy
import difflib
import re
from pathlib import Path
from typing import Any, Mapping, Sequence

from .. import rule_paths
from ..case import STUDY_KEYS, TYPE_KEYS, UNIT_KEYS, CaseError, Problem, build_case, read_document
from ..model import Case, Scenario, Uncertain

#: fields whose values are whole numbers (sweep values are rounded for them)
INTEGER_FIELDS = frozenset({"buy_from", "buy_until", "max_age", "age", "count", "horizon", "start_year",
                            "max_buys_per_year"})
#: top-level keys of a scenario file
SCENARIO_FILE_KEYS = ("scenario", "uncertain")


class _BadPath(Exception):
    pass


def _blocks(doc: Mapping, key: str) -> list:
    v = doc.get(key, [])
    if isinstance(v, dict):
        v = [v]
    return [b for b in v if isinstance(b, dict)] if isinstance(v, list) else []


def _match_id(rest: str, ids: Sequence[str]) -> tuple[str, str] | None:
    """Split ``rest`` = ``<id>.<field…>`` for an id of ``ids`` (longest id first, ids may hold dots)."""
    for i in sorted(ids, key=len, reverse=True):
        if rest.startswith(i + "."):
            return i, rest[len(i) + 1:]
    return None


def _classes(doc: Mapping) -> list[str]:
    seen: dict[str, None] = {}
    for b in _blocks(doc, "asset_type"):
        if isinstance(b.get("class"), str):
            seen.setdefault(b["class"], None)
    return list(seen)


def _study_years(doc: Mapping) -> list[int]:
    s = doc.get("study")
    if not isinstance(s, dict):
        return []
    try:
        y0, h = int(s["start_year"]), int(s["horizon"])
    except (KeyError, TypeError, ValueError):
        return []
    return list(range(y0, y0 + max(0, min(h, 200))))


def valid_paths(doc: Mapping) -> list[str]:
    """Every override path the document offers (the list the nearest-path hint is drawn from)."""
    out = [f"study.{k}" for k in STUDY_KEYS]
    for b in _blocks(doc, "asset_type"):
        tid = b.get("id")
        if not isinstance(tid, str):
            continue
        for k in TYPE_KEYS:
            if k == "id":
                continue
            out.append(f"asset_type.{tid}.{k}")
            if isinstance(b.get(k), dict):
                out += [f"asset_type.{tid}.{k}.{sub}" for sub in b[k]]
    out += ["budget.cap", "budget.basis"] + [f"budget.cap_by_year.{y}" for y in _study_years(doc)]
    out += [f"limit.{c}.max_buys_per_year" for c in _classes(doc)]
    for u in _blocks(doc, "unit"):
        if isinstance(u.get("id"), str):
            out += [f"unit.{u['id']}.{k}" for k in UNIT_KEYS if k != "id"]
    return out + ["budget.money"] + rule_paths.rule_paths(doc, _classes(doc), _study_years(doc))


def _set_one(doc: dict, path: str, value: Any) -> None:
    head, _, rest = path.partition(".")
    if not rest:
        raise _BadPath("a path has at least two parts, e.g. 'study.discount_rate'")
    if head == "study":
        if rest not in STUDY_KEYS:
            raise _BadPath(f"'{rest}' is not a study field")
        study = doc.get("study")
        if not isinstance(study, dict):
            raise _BadPath("the case has no [study] table")
        study[rest] = copy.deepcopy(value)
        return
    if head == "asset_type":
        blocks = _blocks(doc, "asset_type")
        ids = [b["id"] for b in blocks if isinstance(b.get("id"), str)]
        m = _match_id(rest, ids)
        if m is None:
            raise _BadPath("no such asset type")
        tid, field = m
        block = next(b for b in blocks if b.get("id") == tid)
        key, _, sub = field.partition(".")
        if key not in TYPE_KEYS or key == "id":
            raise _BadPath(f"'{key}' is not an asset-type field that can be set")
        if sub:
            if not isinstance(block.get(key), dict) or sub not in block[key]:
                raise _BadPath(f"asset type '{tid}' has no '{key}.{sub}' (set the whole '{key}' instead)")
            block[key][sub] = copy.deepcopy(value)
        else:
            block[key] = copy.deepcopy(value)
        return
    if head == "budget":
        budget = doc.setdefault("budget", {})
        if not isinstance(budget, dict):
            raise _BadPath("the case's budget is not a table")
        if rest in ("cap", "basis", "cap_by_year", "money"):
            budget[rest] = copy.deepcopy(value)
            return
        key, _, year = rest.partition(".")
        if key == "cap_by_year" and re.fullmatch(r"\d{4}", year):
            by_year = budget.setdefault("cap_by_year", {})
            if not isinstance(by_year, dict):
                raise _BadPath("budget.cap_by_year is not a table")
            by_year[year] = copy.deepcopy(value)
            return
        raise _BadPath("budget paths are budget.cap, budget.basis, budget.money and budget.cap_by_year.<year>")
    if head == "limit":
        m = _match_id(rest, _classes(doc))
        if m is None:
            raise _BadPath("no such class")
        cls, field = m
        if field != "max_buys_per_year":
            raise _BadPath("the only limit field is max_buys_per_year")
        limits = doc.get("limit", [])
        if isinstance(limits, dict):
            limits = doc["limit"] = [limits]
        for b in limits:
            if isinstance(b, dict) and b.get("class") == cls:
                b[field] = copy.deepcopy(value)
                return
        limits.append({"class": cls, field: copy.deepcopy(value)})
        doc["limit"] = limits
        return
    if head == "unit":
        blocks = _blocks(doc, "unit")
        m = _match_id(rest, [b["id"] for b in blocks if isinstance(b.get("id"), str)])
        if m is None:
            raise _BadPath("no such inventory row")
        uid, field = m
        if field not in UNIT_KEYS or field == "id":
            raise _BadPath(f"'{field}' is not a unit field that can be set (age, type, count)")
        next(b for b in blocks if b.get("id") == uid)[field] = copy.deepcopy(value)
        return
    try:
        if rule_paths.set_rule(doc, head, rest, value, _classes(doc)):
            return
    except rule_paths.BadRulePath as exc:
        raise _BadPath(str(exc)) from None
    raise _BadPath(f"'{head}' is not a part of a case that can be overridden")


def apply_overrides(raw_doc: Mapping[str, Any], overrides: Mapping[str, Any], *, source: str = "<memory>",
                    where: str = "set") -> dict[str, Any]:
    """A deep copy of ``raw_doc`` with every ``dotted path = value`` of ``overrides`` set exactly.

    Parameters
    ----------
    raw_doc : mapping
        A case document (e.g. ``Case.raw``, which has the inventory inlined).
    overrides : mapping
        Dotted path → value (see the module docstring for the paths).
    source, where : str
        File and context named in messages (e.g. ``"scenario bev-late"``).

    Raises
    ------
    CaseError
        Naming each path that does not exist and the nearest valid path.
    """
    doc = copy.deepcopy(dict(raw_doc))
    problems = []
    for path, value in overrides.items():
        try:
            _set_one(doc, str(path), value)
        except _BadPath as exc:
            near = difflib.get_close_matches(str(path), valid_paths(raw_doc), n=1, cutoff=0.0)
            hint = f"; nearest valid path: '{near[0]}'" if near else ""
            problems.append(Problem(source, f"{where}: '{path}'", f"no such path ({exc}){hint}"))
    if problems:
        raise CaseError(problems)
    return doc


def case_with(case: Case, overrides: Mapping[str, Any], *, where: str = "set") -> Case:
    """The case with ``overrides`` applied, validated by :func:`build_case` like any case."""
    doc = apply_overrides(case.raw, overrides, source=case.source, where=where)
    try:
        return build_case(doc, source=case.source)
    except CaseError as exc:
        raise CaseError([Problem(p.file, f"{where}: {p.path}", p.message) for p in exc.problems]) from None


def read_scenario_file(path: Path | str, case: Case) -> tuple[list[Scenario], list[Uncertain]]:
    """Scenarios (``[[scenario]]``) and uncertain inputs (``[[uncertain]]``) of a TOML file.

    The blocks are validated exactly as in a case file; a scenario id already
    used by the case is refused.  Their paths are checked when they are used.
    """
    path = Path(path)
    doc = read_document(path)
    problems = []
    for k in doc:
        if k not in SCENARIO_FILE_KEYS:
            near = difflib.get_close_matches(k, SCENARIO_FILE_KEYS, n=1, cutoff=0.5)
            hint = f"; did you mean '{near[0]}'?" if near else ""
            problems.append(Problem(str(path), k, f"unknown key '{k}'{hint} (a scenario file holds "
                                                  "[[scenario]] and [[uncertain]] blocks)"))
    if problems:
        raise CaseError(problems)
    probe = {k: v for k, v in case.raw.items() if k not in SCENARIO_FILE_KEYS}
    probe["scenario"] = doc.get("scenario", [])
    probe["uncertain"] = doc.get("uncertain", [])
    built = build_case(probe, source=str(path))
    own = {s.id for s in case.scenarios}
    for j, s in enumerate(built.scenarios, start=1):
        if s.id in own:
            problems.append(Problem(str(path), f"scenario[{j}].id",
                                    f"= {s.id!r}: already a scenario of {case.source}; ids must be unique"))
    if problems:
        raise CaseError(problems)
    return list(built.scenarios), list(built.uncertain)



def coerce(path: str, x: float):
    """The value to set at ``path``: rounded for whole-number fields, else a float."""
    whole = path.rsplit(".", 1)[-1] in INTEGER_FIELDS or rule_paths.is_integer(path)
    return int(round(float(x))) if whole else float(x)
