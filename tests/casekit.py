"""Shared fixtures for the case-loading and command-line tests.

A tiny, made-up valid case (two types, three units) and a table of bad inputs,
each a small edit of that case together with the field path the error must
name and a fragment of the "what is allowed" text.  ``tests/test_case.py``
feeds them to :func:`tenure.case.build_case`; ``tests/test_cli.py`` writes
them as TOML files and runs ``tenure check`` on them.

The figures are invented test data; no economics is checked with them.
"""

from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

REPO = Path(__file__).resolve().parents[1]
CASES = REPO / "cases"
DEMO = CASES / "quillmere-fleet.toml"
UNCAPPED = CASES / "uncapped-demo.toml"

START = 2030
HORIZON = 5


def base_doc() -> dict[str, Any]:
    """A small valid case document (parsed-TOML shape)."""
    return {
        "study": {"title": "tiny made-up case", "start_year": START, "horizon": HORIZON, "discount_rate": 0.05},
        "asset_type": [
            {"id": "van", "class": "van", "price": 40000, "max_age": 6,
             "om": {"first": 3000, "gradient": 500}, "salvage": {"retain": 0.8}},
            {"id": "cart", "class": "cart", "price": 9000, "max_age": 4,
             "om": [500, 600, 700, 800], "salvage": {"life": 4, "floor": 0.1}},
        ],
        "unit": [
            {"id": "V1", "type": "van", "age": 2},
            {"id": "C1", "type": "cart", "age": 1, "count": 2},
        ],
    }


# ---------------------------------------------------------------------------
# a minimal TOML writer for documents shaped like base_doc()
# ---------------------------------------------------------------------------
def _key(k: str) -> str:
    bare = k and all(ch.isalnum() or ch in "-_" for ch in k) and k.isascii()
    return k if bare else json.dumps(k)


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"cannot write {v!r} as TOML")


def to_toml(doc: dict[str, Any]) -> str:
    """TOML text for ``doc``: top-level tables as ``[name]``, lists of tables as ``[[name]]``."""
    lines: list[str] = []
    for k, v in doc.items():
        if not isinstance(v, (dict, list)) or (isinstance(v, list) and not all(isinstance(b, dict) for b in v)):
            lines.append(f"{_key(k)} = {_value(v)}")
    for k, v in doc.items():
        if isinstance(v, dict):
            lines += ["", f"[{_key(k)}]"] + [f"{_key(a)} = {_value(b)}" for a, b in v.items()]
        elif isinstance(v, list) and v and all(isinstance(b, dict) for b in v):
            for block in v:
                lines += ["", f"[[{_key(k)}]]"] + [f"{_key(a)} = {_value(b)}" for a, b in block.items()]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# bad inputs
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class BadInput:
    """One bad input: how to make it, where the error must point, what the message must allow.

    ``edit`` changes a copy of :func:`base_doc`; ``files`` are extra files
    (name → text) put beside the case; ``raw`` replaces the whole TOML text
    (for syntax errors).  ``path`` is the field path the error must name and
    ``allowed`` a fragment of the text saying what is allowed.  ``in_file``
    names the file the problem is reported against when it is not the case file.
    """

    claim: str
    edit: Callable[[dict], None] | None
    path: str
    allowed: str
    files: dict[str, str] = field(default_factory=dict)
    raw: str | None = None
    in_file: str | None = None

    def doc(self) -> dict[str, Any]:
        d = base_doc()
        if self.edit is not None:
            self.edit(d)
        return d

    def write(self, folder: Path) -> Path:
        """Write the case (and its extra files) into ``folder``; return the case path."""
        for name, text in self.files.items():
            (folder / name).write_text(text, encoding="utf-8")
        path = folder / "case.toml"
        path.write_text(self.raw if self.raw is not None else to_toml(self.doc()), encoding="utf-8")
        return path


def _set(*keys_and_value):
    """An edit that sets doc[k1][k2]… = value (list indices allowed)."""
    *keys, value = keys_and_value

    def edit(d):
        node = d
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = copy.deepcopy(value)

    return edit


def _rename(section, index, old, new):
    def edit(d):
        block = d[section][index] if index is not None else d[section] if section else d
        block[new] = block.pop(old)

    return edit


def _fleet_csv(d):
    d.pop("unit")
    d["fleet"] = {"file": "fleet.csv"}


def _add_unit(**kw):
    def edit(d):
        d["unit"].append(dict(kw))

    return edit


def _add(section, value):
    def edit(d):
        d[section] = copy.deepcopy(value)

    return edit


def _type2_id_van(d):
    d["asset_type"][1]["id"] = "van"


def _continuing_zero(d):
    d["study"]["end_value"] = "continuing"
    d["study"]["discount_rate"] = 0.0


BAD_INPUTS: list[BadInput] = [
    # money
    BadInput("negative price is refused", _set("asset_type", 0, "price", -40000),
             "asset_type[1].price", "money > 0"),
    BadInput("non-numeric price is refused", _set("asset_type", 0, "price", "forty thousand"),
             "asset_type[1].price", "money > 0"),
    BadInput("negative first-year O&M is refused", _set("asset_type", 0, "om", {"first": -3000, "gradient": 500}),
             "asset_type[1].om.first", "money ≥ 0"),
    BadInput("negative figure in an O&M list is refused", _set("asset_type", 1, "om", [500, -600, 700, 800]),
             "asset_type[2].om[2]", "money ≥ 0"),
    BadInput("non-numeric figure in a market-value list is refused",
             _set("asset_type", 1, "salvage", [7000, "n/a", 4000]),
             "asset_type[2].salvage[2]", "money ≥ 0"),
    # market-value forms
    BadInput("retain of 0 is outside (0, 1]", _set("asset_type", 0, "salvage", {"retain": 0.0}),
             "asset_type[1].salvage.retain", "(0, 1]"),
    BadInput("retain above 1 is outside (0, 1]", _set("asset_type", 0, "salvage", {"retain": 1.25}),
             "asset_type[1].salvage.retain", "(0, 1]"),
    BadInput("floor of 1 is outside [0, 1)", _set("asset_type", 1, "salvage", {"life": 4, "floor": 1.0}),
             "asset_type[2].salvage.floor", "[0, 1)"),
    BadInput("negative floor is outside [0, 1)", _set("asset_type", 1, "salvage", {"life": 4, "floor": -0.1}),
             "asset_type[2].salvage.floor", "[0, 1)"),
    # O&M list length
    BadInput("O&M list shorter than max_age is refused", _set("asset_type", 1, "om", [500, 600, 700]),
             "asset_type[2].om", "max_age = 4"),
    # unknown keys, with the nearest valid name
    BadInput("misspelt type key suggests the valid name", _rename("asset_type", 0, "price", "pirce"),
             "asset_type[1].pirce", "did you mean 'price'"),
    BadInput("misspelt study key suggests the valid name", _rename("study", None, "horizon", "horizn"),
             "study.horizn", "did you mean 'horizon'"),
    BadInput("misspelt top-level table suggests the valid name", _add("budgte", {"cap": 100000}),
             "budgte", "did you mean 'budget'"),
    BadInput("misspelt end_value suggests the valid choice", _set("study", "end_value", "salvge"),
             "study.end_value", "did you mean 'salvage'"),
    # ids
    BadInput("duplicate asset-type id is refused", _type2_id_van, "asset_type[2].id", "ids must be unique"),
    BadInput("duplicate unit id is refused", _add_unit(id="V1", type="van", age=3),
             "unit[3].id", "duplicate unit id"),
    BadInput("unit of an unknown type is refused with the nearest type", _set("unit", 0, "type", "vna"),
             "unit[1].type", "did you mean 'van'"),
    BadInput("limit on an unknown class is refused", _add("limit", [{"class": "vans", "max_buys_per_year": 2}]),
             "limit[1].class", "(classes: cart, van)"),
    # ages and the study frame
    BadInput("negative unit age is refused", _set("unit", 0, "age", -1), "unit[1].age", "in [0, 200]"),
    # an age past max_age is an overdue unit (accepted, replaced in the first year; tests/test_inventory.py)
    BadInput("unit age beyond 200 years is refused", _set("unit", 0, "age", 250), "unit[1].age", "in [0, 200]"),
    BadInput("horizon of 0 is refused", _set("study", "horizon", 0), "study.horizon", "[1, 200]"),
    BadInput("discount rate of -1 is refused", _set("study", "discount_rate", -1.0),
             "study.discount_rate", "> -1"),
    BadInput("non-numeric discount rate is refused", _set("study", "discount_rate", "5%"),
             "study.discount_rate", "a rate per year"),
    BadInput("continuing end value with a zero rate is refused", _continuing_zero,
             "study.discount_rate", "discount rate > 0"),
    # budget
    BadInput("negative cap is refused", _add("budget", {"cap": -1.0}), "budget.cap", "money ≥ 0"),
    BadInput("negative cap_by_year entry is refused", _add("budget", {"cap_by_year": {str(START + 1): -5.0}}),
             f"budget.cap_by_year.{START + 1}", "money ≥ 0"),
    BadInput("cap_by_year year outside the horizon is refused", _add("budget", {"cap_by_year": {"2040": 1e5}}),
             "budget.cap_by_year.2040", f"{START} … {START + HORIZON - 1}"),
    # CSV inventory
    BadInput("missing inventory CSV is refused", _fleet_csv, "fleet.file", "no such file"),
    BadInput("inventory CSV without the type column is refused", _fleet_csv, "header",
             "columns are id,type,age[,count]", files={"fleet.csv": "id,kind,age\nV1,van,2\n"},
             in_file="fleet.csv"),
    BadInput("bad inventory CSV row names its row number", _fleet_csv, "row 3.age", "in [0, 200]",
             files={"fleet.csv": "id,type,age,count\nV1,van,2,1\nV2,van,old,1\nC1,cart,1,0\n"},
             in_file="fleet.csv"),
    # TOML syntax
    BadInput("TOML syntax error is reported with its line", None, "syntax", "line 2",
             raw='title = "x"\n[study\nhorizon = 5\n'),
]

BY_CLAIM = {b.claim: b for b in BAD_INPUTS}
