"""Case files, format version 1: read TOML (+ optional CSV or .xlsx inventory), validate, build the model.

Every problem of a case is collected before anything is reported, so a user
fixes a file in one pass.  Each problem names the file, the field path (for
example ``asset_type[2].salvage.retain``; blocks are counted from 1), the
value found and what is allowed.  Unknown keys are rejected with the nearest
valid name.

The meaning of every field is in ``docs/case-format.md``; the timing of cash
flows is in ``docs/conventions.md``.
"""

from __future__ import annotations

import copy
import tomllib
from pathlib import Path
from typing import Any, Mapping

from ..model import Case
from .assets import _asset_types, _study
from .inventory import _units, group_by, inline
from .keys import (BUDGET_KEYS, CSV_COLUMNS, CSV_OPTIONAL, DISTRIBUTIONS, FLEET_KEYS, FORMAT_VERSION, LIMIT_KEYS,
                   SCENARIO_KEYS, STUDY_KEYS, TOP_KEYS, TYPE_KEYS, UNCERTAIN_KEYS, UNIT_KEYS)
from .plan_rules import _demands, _emission_caps, _orders, _targets
from .problems import CaseError, Checker, Problem, blocks
from .rules import _budget, _coverage, _limits, _size
from .taxes import _tax_coverage
from .variants import _scenarios, _uncertain

__all__ = ["CaseError", "Checker", "Problem", "blocks", "build_case", "load_case", "read_document", "FORMAT_VERSION",
           "BUDGET_KEYS", "CSV_COLUMNS", "CSV_OPTIONAL", "DISTRIBUTIONS", "FLEET_KEYS", "LIMIT_KEYS", "SCENARIO_KEYS",
           "STUDY_KEYS", "TOP_KEYS", "TYPE_KEYS", "UNCERTAIN_KEYS", "UNIT_KEYS"]


def build_case(doc: Mapping[str, Any], *, source: str = "<memory>", base_dir: Path | str = ".") -> Case:
    """Validate a parsed case document and build the frozen :class:`~tenure.model.Case`.

    Parameters
    ----------
    doc : mapping
        The parsed TOML document (format version 1).
    source : str
        File name used in messages.
    base_dir : path
        Folder that relative inventory paths are read from.

    Raises
    ------
    CaseError
        With every problem found, each naming file, field path, value and what is allowed.
    """
    chk = Checker(source)
    base_dir = Path(base_dir)
    chk.keys(doc, TOP_KEYS, "")
    if "format" in doc and doc["format"] != FORMAT_VERSION:
        chk.bad("format", f"= {doc['format']!r}: this version of tenure reads format = {FORMAT_VERSION}")
    study = _study(chk, doc)
    types = _asset_types(chk, doc)
    by_id = {t.id: t for t in types}
    all_ids = {b.get("id") for b in blocks(Checker(source), doc, "asset_type") if isinstance(b.get("id"), str)}
    units = _units(chk, doc, by_id, all_ids, base_dir, study.start_year if study is not None else None)
    _size(chk, units)
    budget = _budget(chk, doc, study)
    classes = {t.class_ for t in types} | {b.get("class") for b in blocks(Checker(source), doc, "asset_type")
                                           if isinstance(b.get("class"), str)}
    limits = _limits(chk, doc, classes)
    scenarios = _scenarios(chk, doc)
    uncertain = _uncertain(chk, doc)
    _tax_coverage(chk, doc, study.tax_rate if study is not None else None)
    demands = _demands(chk, doc, study, types, units)
    orders = _orders(chk, doc, study, types, units)
    targets = _targets(chk, doc, types)
    emission_caps = _emission_caps(chk, doc)
    if study is not None:  # reported with the other problems; classes with an invalid type are left out
        half_read = {b.get("class") for b in blocks(Checker(source), doc, "asset_type") if b.get("id") not in by_id}
        _coverage(chk, study, types, units, skip=half_read)
    if chk.problems:
        raise CaseError(chk.problems)
    raw = copy.deepcopy(dict(doc))
    # inline the inventory so that overrides and copies do not depend on the CSV's location
    raw.pop("fleet", None)
    raw["unit"] = inline(units)
    grouping = group_by(doc)
    if grouping is not None:
        raw["fleet"] = {"group_by": grouping}
    return Case(study=study, types=tuple(types), units=tuple(units), budget=budget, limits=tuple(limits),
                scenarios=tuple(scenarios), uncertain=tuple(uncertain), demands=tuple(demands), orders=tuple(orders),
                targets=tuple(targets), emission_caps=tuple(emission_caps), source=source, group_by=grouping,
                raw=raw)


def read_document(path: Path | str) -> dict[str, Any]:
    """Parse a TOML case file (a UTF-8 byte-order mark is accepted); any failure becomes a :class:`CaseError`."""
    path = Path(path)
    problem = file_problem(path, "case file")
    if problem:
        raise CaseError([Problem(str(path), "file", problem)])
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise CaseError([Problem(str(path), "file", f"cannot be read: {_reason(exc)}")]) from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise CaseError([Problem(str(path), "file", f"not UTF-8 text: {exc}")]) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError([Problem(str(path), "syntax", f"not valid TOML: {exc}")]) from None


def file_problem(path: Path, what: str) -> str | None:
    """Why ``path`` cannot be read as a ``what`` (a folder is called a folder), or None."""
    if path.is_dir():
        return f"is a directory, not a {what}"
    if not path.exists():
        return f"no such {what}"
    if not path.is_file():
        return f"is not a regular file (a device, pipe or socket), not a {what}"
    return None


def _reason(exc: OSError) -> str:
    import errno

    return {errno.EACCES: "permission denied", errno.EPERM: "operation not permitted",
            errno.EISDIR: "is a directory"}.get(exc.errno, exc.strerror or str(exc))


def load_case(path: Path | str) -> Case:
    """Read, validate and build a case from a TOML file (and its CSV inventory)."""
    path = Path(path)
    doc = read_document(path)
    return build_case(doc, source=str(path), base_dir=path.parent)
