"""Case files, format version 1: read TOML (+ optional CSV inventory), validate, build the model.

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
from .inventory import _units
from .keys import (BUDGET_KEYS, CSV_COLUMNS, CSV_OPTIONAL, DISTRIBUTIONS, FLEET_KEYS, FORMAT_VERSION, LIMIT_KEYS,
                   SCENARIO_KEYS, STUDY_KEYS, TOP_KEYS, TYPE_KEYS, UNCERTAIN_KEYS, UNIT_KEYS)
from .problems import CaseError, Checker, Problem, blocks
from .rules import _budget, _coverage, _limits
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
    units = _units(chk, doc, by_id, all_ids, base_dir)
    budget = _budget(chk, doc, study)
    classes = {t.class_ for t in types} | {b.get("class") for b in blocks(Checker(source), doc, "asset_type")
                                           if isinstance(b.get("class"), str)}
    limits = _limits(chk, doc, classes)
    scenarios = _scenarios(chk, doc)
    uncertain = _uncertain(chk, doc)
    if study is not None and not chk.problems:
        _coverage(chk, study, types, units)
    if chk.problems:
        raise CaseError(chk.problems)
    raw = copy.deepcopy(dict(doc))
    # inline the inventory so that overrides and copies do not depend on the CSV's location
    raw.pop("fleet", None)
    raw["unit"] = [{"id": u.id, "type": u.type, "age": u.age, "count": u.count,
                    **({} if u.usage is None else {"usage": u.usage})} for u in units]
    return Case(study=study, types=tuple(types), units=tuple(units), budget=budget, limits=tuple(limits),
                scenarios=tuple(scenarios), uncertain=tuple(uncertain), source=source, raw=raw)


def read_document(path: Path | str) -> dict[str, Any]:
    """Parse a TOML case file; a syntax error becomes a :class:`CaseError`."""
    path = Path(path)
    if not path.is_file():
        raise CaseError([Problem(str(path), "file", "no such case file")])
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError([Problem(str(path), "syntax", f"not valid TOML: {exc}")]) from None
    except UnicodeDecodeError as exc:
        raise CaseError([Problem(str(path), "file", f"not UTF-8 text: {exc}")]) from None


def load_case(path: Path | str) -> Case:
    """Read, validate and build a case from a TOML file (and its CSV inventory)."""
    path = Path(path)
    doc = read_document(path)
    return build_case(doc, source=str(path), base_dir=path.parent)
