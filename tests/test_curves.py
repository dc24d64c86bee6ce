"""Cost curves (tenure.curves) against the forms of docs/conventions.md, worked by hand.

Each expected figure is an independent hand calculation from the formula in
docs/conventions.md ("Money"), written out beside the check.  The types are
small made-up fixtures.
"""

from __future__ import annotations

import numpy as np
import pytest

from tenure import curves
from tenure.model import AssetType, OMCurve, ValueCurve

Y0 = 2030  # start year of the fixtures


def _type(om: OMCurve, salvage: ValueCurve, price=50_000.0, price_change=-0.04, om_change=0.02, max_age=8):
    return AssetType(id="t", class_="c", price=price, price_change=price_change, om_change=om_change,
                     max_age=max_age, om=om, salvage=salvage)


GRADIENT = OMCurve(kind="gradient", first=1000.0, gradient=150.0)
GROWTH = OMCurve(kind="growth", first=800.0, growth=0.10)
OM_LIST = OMCurve(kind="table", table=(100.0, 200.0, 350.0))
RETAIN = ValueCurve(kind="retain", retain=0.8)
LINE = ValueCurve(kind="line", life=10.0, floor=0.1)
VALUE_LIST = ValueCurve(kind="table", table=(40_000.0, 30_000.0))


# ---------------------------------------------------------------------------
# price
# ---------------------------------------------------------------------------
def test_price_in_the_start_year_is_the_listed_price():
    assert curves.price(_type(GRADIENT, RETAIN), Y0, Y0) == 50_000.0


def test_price_changes_geometrically_by_purchase_year():
    # 50 000 · 0.96² = 50 000 · 0.9216 = 46 080
    assert curves.price(_type(GRADIENT, RETAIN), Y0 + 2, Y0) == pytest.approx(46_080.0, abs=1e-9)


def test_price_before_the_start_year_discounts_the_change_backwards():
    # 50 000 / 0.96 = 52 083.333…
    assert curves.price(_type(GRADIENT, RETAIN), Y0 - 1, Y0) == pytest.approx(52_083.333333, abs=1e-6)


# ---------------------------------------------------------------------------
# O&M
# ---------------------------------------------------------------------------
def test_gradient_om_adds_the_gradient_each_service_year():
    # first + gradient·(a−1): a = 1 → 1000; a = 4 → 1000 + 3·150 = 1450
    assert curves.om_base(GRADIENT, 1) == 1000.0
    assert curves.om_base(GRADIENT, 4) == 1450.0


def test_growth_om_compounds_each_service_year():
    # first·(1+growth)^(a−1): a = 3 → 800 · 1.1² = 968
    assert curves.om_base(GROWTH, 3) == pytest.approx(968.0, abs=1e-9)


def test_om_list_gives_one_figure_per_service_year():
    assert [curves.om_base(OM_LIST, a) for a in (1, 2, 3)] == [100.0, 200.0, 350.0]


def test_om_list_past_its_end_keeps_the_last_figure():
    assert curves.om_base(OM_LIST, 5) == 350.0


def test_om_of_a_later_vintage_scales_by_om_change():
    # vintage Y0+3, service year 4: 1450 · 1.02³ = 1450 · 1.061208 = 1538.7516
    t = _type(GRADIENT, RETAIN)
    assert curves.om(t, 4, Y0 + 3, Y0) == pytest.approx(1538.7516, abs=1e-9)


def test_om_of_an_inventory_vintage_before_the_start_scales_down():
    # vintage Y0−2 (a unit aged 2 at the start), service year 3: 968 / 1.02² = 930.4114…
    t = _type(GROWTH, RETAIN)
    assert curves.om(t, 3, Y0 - 2, Y0) == pytest.approx(968.0 / 1.0404, abs=1e-9)


# ---------------------------------------------------------------------------
# market value
# ---------------------------------------------------------------------------
def test_retain_value_follows_the_sale_years_price():
    # retain^a · price(y): 0.8³ · 46 080 = 0.512 · 46 080 = 23 592.96
    t = _type(GRADIENT, RETAIN)
    assert curves.market_value(t, 3, Y0 + 2, Y0) == pytest.approx(23_592.96, abs=1e-9)


def test_straight_line_value_falls_evenly_to_the_floor():
    # price(y)·(1 − (1−floor)·min(a, life)/life): age 4 → 1 − 0.9·0.4 = 0.64; 0.64 · 50 000 = 32 000
    t = _type(GRADIENT, LINE)
    assert curves.market_value(t, 4, Y0, Y0) == pytest.approx(32_000.0, abs=1e-9)


def test_straight_line_value_stays_at_the_floor_after_its_life():
    # age 10 and age 14: floor 0.1 · price(Y0+1) = 0.1 · 48 000 = 4800
    t = _type(GRADIENT, LINE)
    assert curves.market_value(t, 10, Y0 + 1, Y0) == pytest.approx(4800.0, abs=1e-9)
    assert curves.market_value(t, 14, Y0 + 1, Y0) == pytest.approx(4800.0, abs=1e-9)


def test_value_list_is_the_listed_money_in_the_start_year():
    t = _type(GRADIENT, VALUE_LIST)
    assert curves.market_value(t, 1, Y0, Y0) == 40_000.0
    assert curves.market_value(t, 2, Y0, Y0) == 30_000.0


def test_value_list_scales_with_the_sale_years_price():
    # 30 000 · price(Y0+2)/price = 30 000 · 0.9216 = 27 648
    t = _type(GRADIENT, VALUE_LIST)
    assert curves.market_value(t, 2, Y0 + 2, Y0) == pytest.approx(27_648.0, abs=1e-9)


def test_value_list_past_its_end_keeps_the_last_value():
    t = _type(GRADIENT, VALUE_LIST)
    assert curves.market_value(t, 5, Y0, Y0) == 30_000.0
    assert curves.value_fraction(VALUE_LIST, 7, 50_000.0) == pytest.approx(0.6)


@pytest.mark.parametrize("form", [RETAIN, LINE, VALUE_LIST], ids=["retain", "line", "list"])
def test_age_zero_is_worth_the_price(form):
    t = _type(GRADIENT, form)
    for year in (Y0, Y0 + 3):
        assert curves.market_value(t, 0, year, Y0) == pytest.approx(curves.price(t, year, Y0), rel=1e-12)


# ---------------------------------------------------------------------------
# shapes
# ---------------------------------------------------------------------------
def test_scalar_inputs_give_python_floats():
    t = _type(OM_LIST, VALUE_LIST)
    for x in (curves.price(t, Y0, Y0), curves.om(t, 2, Y0, Y0), curves.market_value(t, 1, Y0, Y0),
              curves.om_base(GRADIENT, 2), curves.value_fraction(RETAIN, 2, 1.0)):
        assert type(x) is float


@pytest.mark.parametrize("om_form", [GRADIENT, GROWTH, OM_LIST], ids=["gradient", "growth", "list"])
def test_om_broadcasts_ages_against_vintages(om_form):
    t = _type(om_form, RETAIN)
    ages = np.arange(1, 5)[:, None]
    vintages = np.array([Y0 - 3, Y0, Y0 + 2])[None, :]
    grid = curves.om(t, ages, vintages, Y0)
    assert grid.shape == (4, 3)
    for i, a in enumerate(range(1, 5)):
        for j, v in enumerate((Y0 - 3, Y0, Y0 + 2)):
            assert grid[i, j] == pytest.approx(curves.om(t, a, v, Y0), rel=1e-12)


@pytest.mark.parametrize("form", [RETAIN, LINE, VALUE_LIST], ids=["retain", "line", "list"])
def test_market_value_broadcasts_ages_against_sale_years(form):
    t = _type(GRADIENT, form)
    ages = np.arange(0, 5)[:, None]
    years = np.array([Y0, Y0 + 1, Y0 + 4])[None, :]
    grid = curves.market_value(t, ages, years, Y0)
    assert grid.shape == (5, 3)
    for i in range(5):
        for j, y in enumerate((Y0, Y0 + 1, Y0 + 4)):
            assert grid[i, j] == pytest.approx(curves.market_value(t, i, y, Y0), rel=1e-12)


def test_price_broadcasts_over_years():
    t = _type(GRADIENT, RETAIN)
    got = curves.price(t, np.array([Y0, Y0 + 1, Y0 + 2]), Y0)
    # 50 000, 48 000, 46 080
    np.testing.assert_allclose(got, [50_000.0, 48_000.0, 46_080.0], rtol=1e-12)


def test_value_fraction_vector_matches_the_forms():
    ages = np.array([0, 1, 2, 5, 12])
    np.testing.assert_allclose(curves.value_fraction(RETAIN, ages, 1.0), [1.0, 0.8, 0.64, 0.32768, 0.8 ** 12])
    # 1 − 0.09·min(a, 10)
    np.testing.assert_allclose(curves.value_fraction(LINE, ages, 1.0), [1.0, 0.91, 0.82, 0.55, 0.1])
    np.testing.assert_allclose(curves.value_fraction(VALUE_LIST, ages, 50_000.0), [1.0, 0.8, 0.6, 0.6, 0.6])
