"""Shared text helpers (tenure.textutil): money figures and "did you mean" hints.

Expected strings are written out by hand (comma grouping of whole currency
units is common practice for money tables).
"""

import doctest

import pytest

from tenure import textutil
from tenure.textutil import csv_cell, did_you_mean, money


def test_docstring_examples_run():
    result = doctest.testmod(textutil)
    assert result.attempted > 0 and result.failed == 0


@pytest.mark.parametrize("x, kw, shown", [
    (1850000.0, {}, "1,850,000"), (-372000.4, {}, "-372,000"), (-372000.4, {"minus": "−"}, "−372,000"),
    (12.5, {"signed": True}, "+12"), (-0.4, {"signed": True}, "0"), (float("nan"), {}, "—"), ("n/a", {}, "—"),
    (950, {"width": 6}, "   950"),
])
def test_money(x, kw, shown):
    assert money(x, **kw) == shown


def test_did_you_mean_names_only_a_close_match():
    assert did_you_mean("transit-bsu", ["transit-bus", "refuse-truck"]) == "; did you mean 'transit-bus'?"
    assert did_you_mean("ferry", ["transit-bus", "refuse-truck"]) == ""


def test_csv_cell_rounds_floats_to_the_cent_and_leaves_the_rest():
    assert [csv_cell(x) for x in (None, 1.005e3, 7, "keep")] == ["", "1005.00", 7, "keep"]
