"""Override paths of the rules that couple units, for scenarios and sweeps (docs/case-format.md).

- ``demand.<class>.count_by_year.<year>``  (a missing ``[[demand]]`` or entry is created)
- ``order.<n>.<key>``, ``target.<n>.<key>``, ``emission_cap.<n>.<key>``  (the n-th block, from 0)

``study.inflation``, ``study.rate_basis``, ``study.carbon_price``, ``budget.money`` and the asset-type
keys ``min_age`` and ``emissions`` go through the ordinary ``study.``, ``budget.`` and ``asset_type.``
paths.
"""

from __future__ import annotations

import copy
import re
from typing import Any, Mapping

from .case.keys import DEMAND_KEYS, EMISSION_CAP_KEYS, ORDER_KEYS, TARGET_KEYS

#: keys of each indexed block that can be set
BLOCK_KEYS = {"order": ORDER_KEYS, "target": TARGET_KEYS, "emission_cap": EMISSION_CAP_KEYS}
#: whole-number fields of these paths (sweep values are rounded for them)
INTEGER_FIELDS = frozenset({"min_age", "from", "until", "year", "count"})
HEADS = ("demand",) + tuple(BLOCK_KEYS)


class BadRulePath(Exception):
    """A rule path that does not exist; the message says which part."""


def _blocks(doc: Mapping, key: str) -> list:
    v = doc.get(key, [])
    if isinstance(v, dict):
        v = [v]
    return [b for b in v if isinstance(b, dict)] if isinstance(v, list) else []


def is_integer(path: str) -> bool:
    """True when the value at ``path`` is a whole number (a class size, a year, a count)."""
    return path.startswith("demand.") or path.rsplit(".", 1)[-1] in INTEGER_FIELDS


def rule_paths(doc: Mapping, classes: list[str], years: list[int]) -> list[str]:
    """Every rule path the document offers (for the nearest-path hint)."""
    out = [f"demand.{c}.count_by_year.{y}" for c in classes for y in years]
    for head, keys in BLOCK_KEYS.items():
        for j, _ in enumerate(_blocks(doc, head)):
            out += [f"{head}.{j}.{k}" for k in keys]
    return out


def set_rule(doc: dict, head: str, rest: str, value: Any, classes: list[str]) -> bool:
    """Set one rule path in ``doc``; False when ``head`` is not a rule, BadRulePath when the path is wrong."""
    if head not in HEADS:
        return False
    if head == "demand":
        m = re.fullmatch(r"(.+)\.count_by_year\.(\d{4})", rest)
        if m is None or m.group(1) not in classes:
            raise BadRulePath("demand paths are demand.<class>.count_by_year.<year> for a class of the case")
        blocks = doc.get("demand", [])
        if isinstance(blocks, dict):
            blocks = [blocks]
        block = next((b for b in blocks if isinstance(b, dict) and b.get("class") == m.group(1)), None)
        if block is None:
            block = {"class": m.group(1), "count_by_year": {}}
            blocks.append(block)
        by_year = block.setdefault("count_by_year", {})
        if not isinstance(by_year, dict) or set(block) - set(DEMAND_KEYS):
            raise BadRulePath("the case's [[demand]] block is not a table of class and count_by_year")
        by_year[m.group(2)] = copy.deepcopy(value)
        doc["demand"] = blocks
        return True
    idx, _, key = rest.partition(".")
    blocks = _blocks(doc, head)
    if not idx.isdigit() or int(idx) >= len(blocks):
        raise BadRulePath(f"{head} paths are {head}.<n>.<key> with n from 0 to {len(blocks) - 1} "
                          f"(the case has {len(blocks)} [[{head}]] block(s))")
    if key not in BLOCK_KEYS[head]:
        raise BadRulePath(f"'{key}' is not a {head} key (allowed: {', '.join(BLOCK_KEYS[head])})")
    if isinstance(doc.get(head), dict):
        doc[head] = [doc[head]]
    doc[head][int(idx)][key] = copy.deepcopy(value)
    return True
