"""Tests for tenure.money against outside references.

Sources used below (each check names its own):

* [C13] "Table C-13 Discrete compounding; i = 10%", an engineering-economy
  textbook appendix table reproduced in a bartleby.com question page (stored
  copy read 2025; the page does not name the book). The text extraction
  lists the columns out of order; the factor of each value was assigned from
  the table's row/column pattern. Printed to 4 decimals (P/G to 3).
* [BT] "TABLE 8 Discrete Cash Flow: Compound Interest Factors, 3%" and
  "TABLE 1 ... 0.25%", reproduced on fdocuments.us / scribd.com (stored
  copies read). That these are the interest tables of Blank & Tarquin,
  *Engineering Economy* (McGraw-Hill) is from memory, supported by a
  companion upload of the same appendix that cites www.mhhe.com/blank.
  Values were read, not recalled.
* [WILD] Wild et al., *Fundamental Accounting Principles*, 25th ed.,
  McGraw-Hill, Table B.4 "Future Value of an Annuity of 1" (stored copy of
  the publisher's page ezto.mheducation.com read). 4 decimals.
* [RC] *Retirement Countdown* (Prentice Hall, 2004), Appendix C, Table C-1
  "Compound Interest Table" (stored copy of the O'Reilly page read); its
  text states the 6 %, 20-year factor 3.20714. 5 decimals.
* [MEM] Standard 10 % compound interest table of an engineering-economy
  text (e.g. Newnan, Eschenbach & Lavelle, *Engineering Economic
  Analysis*, compound interest tables appendix) -- FROM MEMORY, not read.
* numpy-financial 1.0 (``pmt``, ``pv``, ``fv``, ``npv``), an independent
  implementation with the opposite (cash-flow) sign convention.
* Exact rational arithmetic (Python ``fractions``) of the defining sums.
"""

from __future__ import annotations

import doctest
import math
from fractions import Fraction

import numpy as np
import numpy_financial as npf
import pytest
from hypothesis import given
from hypothesis import strategies as st

import tenure.money as money
from tenure.money import (
    af,
    ag,
    ap,
    discount_factors,
    fa,
    fp,
    nominal_rate,
    pa,
    pa_geometric,
    pf,
    pg,
    present_worth,
    real_rate,
)

FACTORS = {"P/F": pf, "F/P": fp, "P/A": pa, "A/P": ap, "F/A": fa, "A/F": af, "A/G": ag, "P/G": pg}


def _agrees_with_print(value: float, printed: float, decimals: int) -> bool:
    """True when ``value`` rounds to the printed table entry (half a unit in
    the last printed place, plus a hair for binary representation)."""
    return abs(value - printed) <= 0.5 * 10.0**-decimals + 1e-12


# --------------------------------------------------------------------------
# published interest tables
# --------------------------------------------------------------------------

# (factor, i, n, printed value, decimals printed, source)
PUBLISHED = [
    # [C13] Table C-13, i = 10 %, read.
    ("F/P", 0.10, 5, 1.6105, 4, "C13"),
    ("P/F", 0.10, 5, 0.6209, 4, "C13"),
    ("F/A", 0.10, 5, 6.1051, 4, "C13"),
    ("P/A", 0.10, 5, 3.7908, 4, "C13"),
    ("A/F", 0.10, 5, 0.1638, 4, "C13"),
    ("A/P", 0.10, 5, 0.2638, 4, "C13"),
    ("P/G", 0.10, 5, 6.862, 3, "C13"),
    ("A/G", 0.10, 5, 1.8101, 4, "C13"),
    ("F/P", 0.10, 10, 2.5937, 4, "C13"),
    ("P/F", 0.10, 10, 0.3855, 4, "C13"),
    ("F/A", 0.10, 10, 15.9374, 4, "C13"),
    ("P/A", 0.10, 10, 6.1446, 4, "C13"),
    ("A/F", 0.10, 10, 0.0627, 4, "C13"),
    ("A/P", 0.10, 10, 0.1627, 4, "C13"),
    ("P/G", 0.10, 10, 22.891, 3, "C13"),
    ("A/G", 0.10, 10, 3.7255, 4, "C13"),
    # [MEM] 10 % table, FROM MEMORY (n = 20 row; 5-decimal A/P, A/F;
    # 4-decimal P/G at n = 5, 10).
    ("A/P", 0.10, 5, 0.26380, 5, "MEM"),
    ("A/F", 0.10, 5, 0.16380, 5, "MEM"),
    ("P/G", 0.10, 5, 6.8618, 4, "MEM"),
    ("A/P", 0.10, 10, 0.16275, 5, "MEM"),
    ("A/F", 0.10, 10, 0.06275, 5, "MEM"),
    ("P/G", 0.10, 10, 22.8913, 4, "MEM"),
    ("F/P", 0.10, 20, 6.7275, 4, "MEM"),
    ("P/F", 0.10, 20, 0.1486, 4, "MEM"),
    ("F/A", 0.10, 20, 57.2750, 4, "MEM"),
    ("P/A", 0.10, 20, 8.5136, 4, "MEM"),
    ("A/F", 0.10, 20, 0.01746, 5, "MEM"),
    ("A/P", 0.10, 20, 0.11746, 5, "MEM"),
    ("P/G", 0.10, 20, 55.4069, 4, "MEM"),
    ("A/G", 0.10, 20, 6.5081, 4, "MEM"),
    # [BT] Table 8, i = 3 %, read.
    ("F/P", 0.03, 10, 1.3439, 4, "BT"),
    ("P/F", 0.03, 10, 0.7441, 4, "BT"),
    ("A/F", 0.03, 10, 0.08723, 5, "BT"),
    ("F/A", 0.03, 10, 11.4639, 4, "BT"),
    ("A/P", 0.03, 10, 0.11723, 5, "BT"),
    ("P/A", 0.03, 10, 8.5302, 4, "BT"),
    ("P/G", 0.03, 10, 36.3088, 4, "BT"),
    ("A/G", 0.03, 10, 4.2565, 4, "BT"),
    ("F/P", 0.03, 20, 1.8061, 4, "BT"),
    ("P/F", 0.03, 20, 0.5537, 4, "BT"),
    ("A/F", 0.03, 20, 0.03722, 5, "BT"),
    ("F/A", 0.03, 20, 26.8704, 4, "BT"),
    ("A/P", 0.03, 20, 0.06722, 5, "BT"),
    ("P/A", 0.03, 20, 14.8775, 4, "BT"),
    ("P/G", 0.03, 20, 126.7987, 4, "BT"),
    ("A/G", 0.03, 20, 8.5229, 4, "BT"),
    # [BT] Table 1, i = 0.25 %, read (a small rate, where cancellation bites).
    ("F/P", 0.0025, 10, 1.0253, 4, "BT"),
    ("P/F", 0.0025, 10, 0.9753, 4, "BT"),
    ("A/F", 0.0025, 10, 0.09888, 5, "BT"),
    ("F/A", 0.0025, 10, 10.1133, 4, "BT"),
    ("A/P", 0.0025, 10, 0.10138, 5, "BT"),
    ("P/A", 0.0025, 10, 9.8639, 4, "BT"),
    ("P/G", 0.0025, 10, 44.1842, 4, "BT"),
    ("A/G", 0.0025, 10, 4.4794, 4, "BT"),
    # [WILD] Table B.4, F/A at 6 % and 12 %, read.
    ("F/A", 0.06, 5, 5.6371, 4, "WILD"),
    ("F/A", 0.06, 10, 13.1808, 4, "WILD"),
    ("F/A", 0.12, 5, 6.3528, 4, "WILD"),
    ("F/A", 0.12, 10, 17.5487, 4, "WILD"),
    # [RC] Table C-1, F/P to 5 decimals, read.
    ("F/P", 0.06, 20, 3.20714, 5, "RC"),
    ("F/P", 0.06, 10, 1.79085, 5, "RC"),
    ("F/P", 0.10, 10, 2.59374, 5, "RC"),
    ("F/P", 0.12, 10, 3.10585, 5, "RC"),
]


@pytest.mark.parametrize(
    "factor, i, n, printed, decimals, source",
    PUBLISHED,
    ids=[f"{f}-{i:g}-{n}-{src}" for f, i, n, _, _, src in PUBLISHED],
)
def test_factor_matches_published_table_entry(factor, i, n, printed, decimals, source):
    # Sources: see the module docstring key given in ``source``.
    value = FACTORS[factor](i, n)
    assert _agrees_with_print(value, printed, decimals), (factor, i, n, value, printed, source)


# --------------------------------------------------------------------------
# numpy-financial as an independent implementation
# --------------------------------------------------------------------------

_RNG = np.random.default_rng(20240611)
# Rates below about 1e-4 in magnitude are left out on purpose: there
# numpy-financial's (1+r)^n - 1 loses digits (about 1e-10 relative at
# r = 1e-6); the small-rate accuracy is checked against exact arithmetic
# in test_uniform_series_factors_at_tiny_rates_match_exact_rational_sums.
_I = np.concatenate([_RNG.uniform(-0.05, 0.5, 400), [0.0, 0.0, 0.01, -0.01]])
_N = np.concatenate([_RNG.integers(1, 101, 400), [1, 30, 7, 12]]).astype(float)

# numpy-financial evaluates both branches of its own np.where at rate 0 and
# warns; those warnings are the reference's, not ours.
def _npf(func, *args):
    with np.errstate(divide="ignore", invalid="ignore"):
        return func(*args)


def test_pa_equals_minus_npf_pv_of_unit_payment():
    # numpy-financial 1.0: pv(rate, nper, pmt) with pmt = 1 is -(P/A).
    np.testing.assert_allclose(pa(_I, _N), -_npf(npf.pv, _I, _N, 1.0), rtol=1e-11)


def test_ap_equals_minus_npf_pmt_of_unit_present_value():
    # numpy-financial 1.0: pmt(rate, nper, pv) with pv = 1 is -(A/P).
    np.testing.assert_allclose(ap(_I, _N), -_npf(npf.pmt, _I, _N, 1.0), rtol=1e-11)


def test_fa_equals_minus_npf_fv_of_unit_payment():
    # numpy-financial 1.0: fv(rate, nper, pmt, pv=0) with pmt = 1 is -(F/A).
    np.testing.assert_allclose(fa(_I, _N), -_npf(npf.fv, _I, _N, 1.0, 0.0), rtol=1e-11)


def test_af_equals_minus_npf_pmt_of_unit_future_value():
    # numpy-financial 1.0: pmt(rate, nper, pv=0, fv=1) is -(A/F).
    np.testing.assert_allclose(af(_I, _N), -_npf(npf.pmt, _I, _N, 0.0, 1.0), rtol=1e-11)


def test_pf_and_fp_equal_minus_npf_pv_and_fv_of_unit_single_sum():
    # numpy-financial 1.0: pv(rate, nper, 0, fv=1) is -(P/F); fv(rate, nper, 0, pv=1) is -(F/P).
    np.testing.assert_allclose(pf(_I, _N), -_npf(npf.pv, _I, _N, 0.0, 1.0), rtol=1e-12)
    np.testing.assert_allclose(fp(_I, _N), -_npf(npf.fv, _I, _N, 0.0, 1.0), rtol=1e-12)


def test_pg_and_ag_equal_npf_npv_of_gradient_series():
    # numpy-financial 1.0 npv: values[t] at time t; the gradient series is
    # 0 at t = 0 and t - 1 at t = 1..n.
    for i, n in zip(_I[:60], _N[:60].astype(int)):
        series = np.concatenate([[0.0], np.arange(n, dtype=float)])
        ref = npf.npv(i, series)
        assert math.isclose(pg(i, n), ref, rel_tol=1e-10, abs_tol=1e-12)
        assert math.isclose(ag(i, n), ref / pa(i, n), rel_tol=1e-10, abs_tol=1e-12)


def test_pa_geometric_equals_npf_npv_of_growing_series():
    # numpy-financial 1.0 npv of 0, 1, (1+g), (1+g)^2, ..., (1+g)^(n-1).
    rng = np.random.default_rng(7)
    for _ in range(60):
        i, g, n = rng.uniform(-0.05, 0.3), rng.uniform(-0.2, 0.3), int(rng.integers(1, 60))
        series = np.concatenate([[0.0], (1.0 + g) ** np.arange(n)])
        assert math.isclose(pa_geometric(i, g, n), npf.npv(i, series), rel_tol=1e-10)


def test_present_worth_equals_npf_npv():
    # numpy-financial 1.0 npv uses the same timing: values[0] undiscounted.
    rng = np.random.default_rng(11)
    for _ in range(50):
        cf = rng.normal(0.0, 1000.0, int(rng.integers(1, 40)))
        i = rng.uniform(-0.05, 0.4)
        assert math.isclose(present_worth(cf, i), npf.npv(i, cf), rel_tol=1e-11, abs_tol=1e-8)


def test_present_worth_first_element_is_undiscounted():
    # Same convention as numpy-financial 1.0 npv.
    assert present_worth([123.0], 0.37) == 123.0
    assert present_worth([5.0, 0.0, 0.0], 0.2) == 5.0


def test_present_worth_along_axis_0_matches_npf_npv_per_column():
    rng = np.random.default_rng(3)
    cf = rng.normal(size=(12, 4))
    got = present_worth(cf, 0.07, axis=0)
    ref = [npf.npv(0.07, cf[:, k]) for k in range(4)]
    np.testing.assert_allclose(got, ref, rtol=1e-12)


# --------------------------------------------------------------------------
# identities between factors (hypothesis)
# --------------------------------------------------------------------------

rates = st.floats(min_value=-0.5, max_value=1.0, allow_nan=False).filter(lambda x: x != -0.5)
counts = st.integers(min_value=1, max_value=300)
real_counts = st.floats(min_value=0.25, max_value=300.0, allow_nan=False)


def _close(a, b, rel=1e-9, abs_=1e-12):
    return math.isclose(a, b, rel_tol=rel, abs_tol=abs_)


@given(rates, real_counts)
def test_ap_is_reciprocal_of_pa(i, n):
    assert _close(ap(i, n), 1.0 / pa(i, n))


@given(rates, real_counts)
def test_af_is_reciprocal_of_fa(i, n):
    assert _close(af(i, n), 1.0 / fa(i, n))


@given(rates, real_counts)
def test_ap_equals_af_plus_i(i, n):
    # abs tolerance: for negative i and long n, A/P -> 0 while A/F -> -i.
    assert _close(ap(i, n), af(i, n) + i)


@given(rates, real_counts)
def test_fp_is_reciprocal_of_pf(i, n):
    assert _close(fp(i, n), 1.0 / pf(i, n))


@given(rates, real_counts)
def test_pa_equals_pf_times_fa(i, n):
    assert _close(pa(i, n), pf(i, n) * fa(i, n))


@given(rates, counts)
def test_pg_equals_pa_times_ag(i, n):
    assert _close(pg(i, n), pa(i, n) * ag(i, n))


@given(st.floats(min_value=0.01, max_value=1.0), st.integers(1, 200))
def test_pg_matches_its_closed_form(i, n):
    # ((1+i)^n - i n - 1) / (i^2 (1+i)^n), as printed in the texts [1]-[3] of
    # the module; evaluated directly away from i = 0.
    q = (1.0 + i) ** n
    assert _close(pg(i, n), (q - i * n - 1.0) / (i * i * q), rel=1e-8)


@given(rates, real_counts)
def test_pa_geometric_with_zero_growth_equals_pa(i, n):
    assert _close(pa_geometric(i, 0.0, n), pa(i, n))


@given(st.floats(-0.5, 1.0), st.floats(-0.5, 1.0), st.integers(1, 100))
def test_pa_geometric_matches_textbook_formula_away_from_i_equals_g(i, g, n):
    # (1 - ((1+g)/(1+i))^n) / (i - g), as given in the texts [1], [3] of the module.
    if abs(i - g) < 1e-3 or i <= -0.5 or g <= -0.5:
        return
    ref = (1.0 - ((1.0 + g) / (1.0 + i)) ** n) / (i - g)
    assert _close(pa_geometric(i, g, n), ref, rel=1e-8)


def test_pa_geometric_with_equal_rates_is_n_over_one_plus_i():
    assert pa_geometric(0.08, 0.08, 5) == 5 / 1.08
    assert pa_geometric(0.0, 0.0, 7) == 7.0


def test_pa_geometric_is_continuous_across_i_equals_g():
    for eps in (1e-6, 1e-9, 1e-12):
        assert math.isclose(pa_geometric(0.08, 0.08 + eps, 20), 20 / 1.08, rel_tol=1e-5)


def test_pa_geometric_matches_exact_rational_sum_near_i_equals_g():
    # Exact rational arithmetic of sum_{t=1..n} (1+g)^(t-1) (1+i)^-t.
    i, g, n = 0.07, 0.07 + 1e-10, 25
    fi, fg = Fraction(i), Fraction(g)
    exact = sum((1 + fg) ** (t - 1) / (1 + fi) ** t for t in range(1, n + 1))
    assert math.isclose(pa_geometric(i, g, n), float(exact), rel_tol=1e-13)


# --------------------------------------------------------------------------
# rate zero: exact limits and continuity
# --------------------------------------------------------------------------

ZERO_LIMITS = {
    "P/F": lambda n: 1.0,
    "F/P": lambda n: 1.0,
    "P/A": lambda n: n,
    "A/P": lambda n: 1.0 / n,
    "F/A": lambda n: n,
    "A/F": lambda n: 1.0 / n,
    "A/G": lambda n: (n - 1.0) / 2.0,
    "P/G": lambda n: n * (n - 1.0) / 2.0,
}


@pytest.mark.parametrize("factor", list(ZERO_LIMITS))
@pytest.mark.parametrize("n", [1, 2, 5, 10, 37])
def test_zero_rate_gives_exact_limit(factor, n):
    assert FACTORS[factor](0.0, n) == ZERO_LIMITS[factor](float(n))


@pytest.mark.parametrize("factor", list(ZERO_LIMITS))
def test_zero_rate_exact_inside_an_array_without_warnings(factor):
    with np.errstate(all="raise", under="ignore"):
        out = FACTORS[factor](np.array([0.0, 0.1, 0.0]), 10)
    assert out[0] == out[2] == ZERO_LIMITS[factor](10.0)


@pytest.mark.parametrize("factor", list(ZERO_LIMITS))
@pytest.mark.parametrize("i", [1e-9, -1e-9])
def test_tiny_rate_is_close_to_zero_rate_limit(factor, i):
    for n in (1, 10, 30):
        assert math.isclose(FACTORS[factor](i, n), ZERO_LIMITS[factor](float(n)), rel_tol=1e-7, abs_tol=1e-15)


@pytest.mark.parametrize("i", [1e-9, 1e-6, -1e-6, 1e-4])
@pytest.mark.parametrize("n", [1, 7, 12, 40])
def test_uniform_series_factors_at_tiny_rates_match_exact_rational_sums(i, n):
    # Exact rational arithmetic of P/A = sum_{t=1..n} (1+i)^-t and
    # F/A = sum_{t=0..n-1} (1+i)^t at the binary value of i.
    fi = Fraction(i)
    exact_pa = sum((1 + fi) ** -t for t in range(1, n + 1))
    exact_fa = sum((1 + fi) ** t for t in range(n))
    assert math.isclose(pa(i, n), float(exact_pa), rel_tol=1e-14)
    assert math.isclose(fa(i, n), float(exact_fa), rel_tol=1e-14)
    assert math.isclose(ap(i, n), float(1 / exact_pa), rel_tol=1e-14)
    assert math.isclose(af(i, n), float(1 / exact_fa), rel_tol=1e-14)


@pytest.mark.parametrize("i", [1e-12, 1e-9, -1e-7, 3e-5, 9.99e-4, 1.001e-3, -2e-3, 0.02])
@pytest.mark.parametrize("n", [1, 2, 10, 60])
def test_ag_small_rate_matches_exact_rational_arithmetic(i, n):
    # Exact rational arithmetic of A/G = 1/i - n/((1+i)^n - 1) at the binary
    # value of i: the closed form cancels badly here, so this checks the
    # series branch and the switch-over at |i|, |n ln(1+i)| ~ 1e-3.
    fi = Fraction(i)
    exact = 1 / fi - n / ((1 + fi) ** n - 1)
    assert math.isclose(ag(i, n), float(exact), rel_tol=1e-12, abs_tol=1e-15)


def test_subnormal_rate_behaves_like_zero_rate_without_warnings():
    # Regression: hypothesis found i = 5e-324, n = 0.5, where n*ln(1+i)
    # underflows to 0 and a naive (e^L - 1)/i gave 0 and then 1/0.
    with np.errstate(all="raise", under="ignore"):
        assert af(5e-324, 0.5) == 2.0
        assert pa(5e-324, 3) == 3.0
        assert ag(5e-324, 3) == 1.0


def test_long_horizons_approach_perpetuity_limits_without_overflow():
    # n -> infinity limits as listed beside the compound interest tables of
    # the engineering-economy texts (relation, not a figure):
    # (A/P) -> i, (P/A) -> 1/i, (A/G) -> 1/i, (P/G) -> 1/i^2.
    with np.errstate(all="raise", under="ignore"):
        assert math.isclose(ap(0.10, 2000), 0.10, rel_tol=1e-15)
        assert math.isclose(pa(0.10, 2000), 10.0, rel_tol=1e-15)
        assert math.isclose(ag(0.10, 1e6), 10.0, rel_tol=1e-15)
        assert math.isclose(pg(0.10, 2000), 100.0, rel_tol=1e-15)
        assert math.isclose(ag(-0.5, 1e4), 1e4 - 2.0, rel_tol=1e-15)


# --------------------------------------------------------------------------
# broadcasting and return types
# --------------------------------------------------------------------------


@pytest.mark.parametrize("factor", list(FACTORS))
def test_column_of_rates_by_row_of_periods_broadcasts_to_grid(factor):
    i = np.array([[0.0], [0.05], [0.10]])
    n = np.array([[1, 5, 10, 20]])
    grid = FACTORS[factor](i, n)
    assert grid.shape == (3, 4)
    assert grid[2, 2] == FACTORS[factor](0.10, 10)


def test_pa_geometric_broadcasts_over_i_g_and_n():
    out = pa_geometric(np.array([[0.05], [0.10]]), np.array([0.0, 0.03, 0.10])[:, None, None], [5, 10])
    assert out.shape == (3, 2, 2)
    assert out[2, 1, 1] == 10 / 1.10


def test_scalar_inputs_return_python_float():
    for f in FACTORS.values():
        assert type(f(0.07, 12)) is float
    assert type(pa_geometric(0.07, 0.02, 12)) is float
    assert type(discount_factors(0.07, 3)) is float
    assert type(present_worth([1.0, 2.0], 0.07)) is float
    assert type(real_rate(0.07, 0.02)) is float


def test_array_inputs_return_ndarray():
    assert isinstance(pa([0.05], 10), np.ndarray)
    assert isinstance(pa(0.05, np.array(10)[None]), np.ndarray)


def test_discount_factors_broadcast_rate_column_against_times():
    out = discount_factors(np.array([[0.0], [0.25]]), np.arange(3))
    np.testing.assert_array_equal(out, [[1.0, 1.0, 1.0], [1.0, 0.8, 0.64]])


def test_present_worth_broadcasts_one_rate_per_series():
    cf = np.array([[-100.0, 60.0, 60.0], [-100.0, 0.0, 121.0]])
    out = present_worth(cf, np.array([0.10, 0.10]))
    np.testing.assert_allclose(out, [npf.npv(0.10, cf[0]), npf.npv(0.10, cf[1])], rtol=1e-13, atol=1e-10)
    grid = present_worth(cf, np.array([[0.0], [0.10]]))  # rates x series
    assert grid.shape == (2, 2)
    assert grid[0, 1] == 21.0


# --------------------------------------------------------------------------
# inflation
# --------------------------------------------------------------------------


def test_real_rate_is_exact_fisher_relation_not_subtraction():
    # (1 + i) = (1 + i')(1 + f): Fisher, The Theory of Interest (1930); the
    # combined-rate formula i = i' + f + i'f of Newnan et al. (relation, not
    # a recalled figure). 10.25 % nominal with 5 % inflation is 5 % real.
    assert math.isclose(real_rate(0.1025, 0.05), 0.05, rel_tol=1e-14)
    assert math.isclose(nominal_rate(0.05, 0.03), 0.0815, rel_tol=1e-14)
    assert real_rate(0.10, 0.04) < 0.10 - 0.04


def test_real_rate_is_zero_when_nominal_equals_inflation():
    assert real_rate(0.037, 0.037) == 0.0


@given(st.floats(-0.5, 1.0), st.floats(-0.5, 1.0))
def test_nominal_rate_inverts_real_rate(r, f):
    assert math.isclose(real_rate(nominal_rate(r, f), f), r, rel_tol=1e-9, abs_tol=1e-12)


# --------------------------------------------------------------------------
# bad inputs
# --------------------------------------------------------------------------


@pytest.mark.parametrize("factor", list(FACTORS))
def test_rate_at_or_below_minus_one_raises_naming_i(factor):
    with pytest.raises(ValueError, match=r"i must be greater than -1.*i=-1\.0"):
        FACTORS[factor](-1.0, 5)
    with pytest.raises(ValueError, match=r"i=-1\.5"):
        FACTORS[factor](np.array([0.1, -1.5]), 5)


@pytest.mark.parametrize("factor", list(FACTORS))
def test_negative_periods_raise_naming_n(factor):
    with pytest.raises(ValueError, match=r"n must be .*n=-2\.0"):
        FACTORS[factor](0.1, -2)


@pytest.mark.parametrize("factor", ["A/P", "A/F", "A/G"])
def test_zero_periods_raise_for_factors_that_spread_over_n(factor):
    with pytest.raises(ValueError, match=r"n must be greater than 0.*n=0\.0"):
        FACTORS[factor](0.1, 0)


@pytest.mark.parametrize("factor, value", [("P/F", 1.0), ("F/P", 1.0), ("P/A", 0.0), ("F/A", 0.0), ("P/G", 0.0)])
def test_zero_periods_allowed_where_the_factor_is_defined(factor, value):
    assert FACTORS[factor](0.1, 0) == value


def test_non_finite_inputs_raise():
    with pytest.raises(ValueError, match="i must be finite"):
        pa(float("nan"), 5)
    with pytest.raises(ValueError, match="n must be finite"):
        pa(0.1, float("inf"))


def test_other_rate_parameters_are_named_in_errors():
    with pytest.raises(ValueError, match=r"g must be greater than -1.*g=-1\.0"):
        pa_geometric(0.1, -1.0, 5)
    with pytest.raises(ValueError, match=r"rate must be greater than -1"):
        discount_factors(-2.0, [0, 1])
    with pytest.raises(ValueError, match=r"inflation must be greater than -1"):
        real_rate(0.1, -1.0)
    with pytest.raises(ValueError, match=r"nominal must be greater than -1"):
        real_rate(-1.0, 0.02)
    with pytest.raises(ValueError, match=r"real must be greater than -1"):
        nominal_rate(-3.0, 0.02)
    with pytest.raises(ValueError, match=r"i must be greater than -1"):
        present_worth([1.0, 2.0], -1.0)


# --------------------------------------------------------------------------
# documentation
# --------------------------------------------------------------------------


def test_docstring_examples_run():
    result = doctest.testmod(money, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0
