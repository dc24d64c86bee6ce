"""Tests of the after-tax analysis: depreciation schedules, book value, recapture, after-tax arcs.

What each check is measured against is named beside it:

- **IRS Publication 946**, Appendix A, Table A-1 (MACRS GDS, half-year convention), and the
  method the table is built from (200 %/150 % declining balance switching to straight line);
- **published worked examples** (Sullivan, Wicks & Koelling: the forklift's before- and after-tax
  economic life and a defender's after-tax investment value; Newnan et al.; Ross, Westerfield &
  Jordan), each saying what was read in a copy and what is from memory;
- **numpy-financial** (npv, pmt, irr) on after-tax cash flows tabulated year by year, the
  after-tax cash-flow table method of the engineering-economy texts (Sullivan, Wicks & Koelling);
- **hand computation** of book value and recapture on units sold mid-schedule;
- **brute force**: every keep/replace schedule priced from ``tenure.curves`` and the
  depreciation fractions of ``tenure.tax.schedule`` with its own running book value, never from
  the graph's tables, must agree with the recursion.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pytest
from hypothesis import given
from hypothesis import strategies as st
from test_chain import PROPERTY, Y0, all_starts, case_doc, close

from casekit import base_doc
from tenure import chain, curves, life, tax
from tenure.case import CaseError, build_case
from tenure.model import AssetType, Depreciation, OMCurve, ValueCurve
from tenure.solve import solve


def one_type(price=10000.0, dep=None, max_age=6, om=(0.0,), salvage=None, price_change=0.0):
    om_curve = OMCurve(kind="table", table=tuple(om) * (max_age if len(om) == 1 else 1))
    return AssetType(id="x", class_="x", price=price, max_age=max_age, om=om_curve,
                     salvage=salvage or ValueCurve(kind="retain", retain=0.8), price_change=price_change,
                     depreciation=dep)


# ---------------------------------------------------------------------------
# 1. MACRS tables: IRS Publication 946, Table A-1
# ---------------------------------------------------------------------------
#: IRS Publication 946, "How to Depreciate Property", Appendix A, Table A-1, "3-, 5-, 7-, 10-, 15-,
#: and 20-Year Property, Half-Year Convention", percentages by recovery year (from memory; the 5-,
#: 7- and 15-year columns were also compared with a public copy of the table).
PUB946_TABLE_A1 = {
    3: [33.33, 44.45, 14.81, 7.41],
    5: [20.00, 32.00, 19.20, 11.52, 11.52, 5.76],
    7: [14.29, 24.49, 17.49, 12.49, 8.93, 8.92, 8.93, 4.46],
    10: [10.00, 18.00, 14.40, 11.52, 9.22, 7.37, 6.55, 6.55, 6.56, 6.55, 3.28],
    15: [5.00, 9.50, 8.55, 7.70, 6.93, 6.23, 5.90, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 2.95],
    20: [3.750, 7.219, 6.677, 6.177, 5.713, 5.285, 4.888, 4.522, 4.462, 4.461, 4.462, 4.461, 4.462, 4.461,
         4.462, 4.461, 4.462, 4.461, 4.462, 4.461, 2.231],
}


@pytest.mark.parametrize("years", [3, 5, 7, 10, 15, 20])
def test_macrs_equals_irs_pub_946_table_a1(years):
    """The shipped table equals IRS Pub 946 Table A-1, and tax.schedule gives it as fractions."""
    assert list(tax.MACRS_HALF_YEAR[years]) == PUB946_TABLE_A1[years]
    d = tax.schedule(Depreciation(method="macrs", recovery_years=years))
    assert d == pytest.approx(np.array(PUB946_TABLE_A1[years]) / 100, abs=1e-12)
    assert len(d) == years + 1  # half a year at each end (IRS Pub 946: half-year convention)
    assert d.sum() == pytest.approx(1.0, abs=1e-9)  # the whole basis is recovered


def _macrs_by_method(n: int) -> list[float]:
    """Table A-1 rebuilt from its method (IRS Pub 946, "Figuring depreciation under MACRS"):
    200 % declining balance (150 % for 15- and 20-year property) from a half year, switching to
    straight line over the remaining recovery period when that is larger, the last half year
    taking what is left."""
    r = (1.5 if n >= 15 else 2.0) / n
    book, out = 1.0, []
    for j in range(1, n + 2):
        if j == 1:
            d = book * r / 2
        elif j == n + 1:
            d = book
        else:
            d = max(book * r, book / (n - j + 1.5))
        out.append(d)
        book -= d
    return out


@pytest.mark.parametrize("years", [3, 5, 7, 10, 15, 20])
def test_macrs_table_follows_its_declining_balance_method(years):
    """Each shipped percentage is the method's value to within one unit of the printed last digit;
    the IRS moves a last-digit unit between years so that a column sums to exactly 100."""
    digits = 3 if years == 20 else 2
    unit = 10.0 ** -digits
    rebuilt = np.array(_macrs_by_method(years)) * 100
    shipped = np.array(tax.MACRS_HALF_YEAR[years])
    assert np.all(np.abs(rebuilt - shipped) <= unit + 1e-9)
    # the adjustments alternate, so the running total (the book value) stays within one unit as well
    assert np.all(np.abs(np.cumsum(rebuilt) - np.cumsum(shipped)) <= unit + 1e-9)


# ---------------------------------------------------------------------------
# 2. the other schedules, by hand
# ---------------------------------------------------------------------------
def test_straight_line_with_salvage_by_hand():
    # basis less 10 % salvage over 7 years: 0.9/7 per year; book value 0.1 after 7 years (common practice)
    dep = Depreciation(method="straight-line", life=7, salvage=0.1)
    assert tax.schedule(dep) == pytest.approx([0.9 / 7] * 7)
    assert tax.book_fraction(dep, [0, 3, 7, 9]) == pytest.approx([1.0, 1 - 2.7 / 7, 0.1, 0.1])
    assert tax.fraction(dep, [0, 1, 7, 8]) == pytest.approx([0.0, 0.9 / 7, 0.9 / 7, 0.0])


def test_double_declining_balance_with_switch_by_hand():
    # 20 % of book for 10 years, switching to straight line over the remaining life when larger:
    # 0.2, 0.16, 0.128, 0.1024, 0.08192, 0.065536; book 0.262144 then over 4 years 0.065536 each
    # (hand computation; the switch year is 6, where 0.262144·0.2 = 0.0524 < 0.262144/5 = 0.0524288)
    dep = Depreciation(method="declining-balance", rate=0.2, life=10, switch=True)
    want = [0.2, 0.16, 0.128, 0.1024, 0.08192] + [0.32768 / 5] * 5
    assert tax.schedule(dep) == pytest.approx(want, rel=1e-12)
    assert tax.book_fraction(dep, 10) == pytest.approx(0.0, abs=1e-12)


def test_declining_balance_without_switch_leaves_the_remainder_on_the_books():
    # 40 % for 5 years: book 0.6^5 = 0.07776 stays until the unit is sold (hand computation)
    dep = Depreciation(method="declining-balance", rate=0.4, life=5)
    assert tax.schedule(dep) == pytest.approx([0.4, 0.24, 0.144, 0.0864, 0.05184])
    assert tax.book_fraction(dep, [5, 8]) == pytest.approx([0.07776, 0.07776])


# ---------------------------------------------------------------------------
# 3. published worked examples
# ---------------------------------------------------------------------------
def test_newnan_used_truck_after_tax_cash_flows_and_irr():
    """Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*, Income Taxes chapter, the used
    truck under MACRS: first cost $3,000, benefit $800 a year, sold after 5 years for $750, tax rate
    34 %, 5-year MACRS with half a year's depreciation in the year of disposal (the text's rule,
    given here as a 'table' schedule). Printed: ATCF 732.0, 854.4, 723.8, 645.5, 1199.3 and an
    after-tax IRR of 11.24 % (figures as printed in the example, read in a copy of the text)."""
    rates = [0.20, 0.32, 0.192, 0.1152, 0.1152 / 2]
    truck = one_type(price=3000.0, dep=Depreciation(method="table", rates=tuple(rates)), max_age=5)
    tau, y0 = 0.34, Y0
    years = np.arange(1, 6)
    # a benefit is a negative O&M: the year's after-tax cost is keep_cash, its negative the ATCF
    atcf = -np.asarray(tax.keep_cash(truck, tau, -800.0, years, y0, y0))
    atcf[-1] += tax.sale_cash(truck, tau, 750.0, 5, y0, y0)
    assert np.round(atcf, 1).tolist() == [732.0, 854.4, 723.8, 645.5, 1199.3]
    irr = npf.irr(np.concatenate([[-3000.0], atcf]))
    assert round(100 * irr, 2) == 11.24


def test_ross_westerfield_jordan_car_recapture_to_the_cent():
    """Ross, Westerfield & Jordan, *Fundamentals of Corporate Finance*, project cash flows chapter,
    "book value versus market value" (from memory): a $12,000 car, 5-year MACRS, sold after five
    years for $3,000; book value $691.20, tax at 34 % on the $2,308.80 recaptured: $784.99."""
    car = one_type(price=12000.0, dep=Depreciation(method="macrs", recovery_years=5))
    bv = tax.book_value(car, 5, Y0, Y0)
    assert round(bv, 2) == 691.20
    assert round(tax.tax_on_sale(3000.0, bv, 0.34), 2) == 784.99


def _after_tax_eac_by_atcf_table(P, mv, om, rates, tau, i):
    """After-tax EUAC of keeping a new unit N = 1 … n years, by the after-tax cash-flow table of
    Sullivan, Wicks & Koelling, *Engineering Economy* (replacement chapter, after-tax economic
    life): BTCF_j = −c_j, d_j = P·r_j, taxable income BTCF_j − d_j, tax −τ·(that), and in year N
    the sale MV_N with tax τ·(MV_N − BV_N). PW and EUAC by numpy-financial (npv, pmt)."""
    out = []
    for N in range(1, len(mv) + 1):
        d = P * np.array([rates[j] if j < len(rates) else 0.0 for j in range(N)])
        btcf = -np.array(om[:N], dtype=float)
        tax_j = tau * (btcf - d)
        atcf = btcf - tax_j
        bv = P - d.sum()
        atcf[-1] += mv[N - 1] - tau * (mv[N - 1] - bv)
        pw_cost = -npf.npv(i, np.concatenate([[-P], atcf]))
        out.append(float(npf.pmt(i, N, -pw_cost)))
    return np.array(out)


def test_after_tax_economic_life_equals_the_atcf_table_method():
    """An invented loader (MACRS 5-year, 25 % tax, 10 % after-tax rate): the after-tax EAC of every
    holding period equals the ATCF-table method priced by numpy-financial, to the cent (the texts'
    method with numpy-financial as the reference; the printed after-tax economic life of Sullivan,
    Wicks & Koelling's Example 9-9 is checked below)."""
    P, tau, i = 120000.0, 0.25, 0.10
    mv = [90000.0, 70000.0, 54000.0, 42000.0, 33000.0, 26000.0, 21000.0, 17000.0]
    om = [9000.0, 10500.0, 13000.0, 16500.0, 21000.0, 26500.0, 33000.0, 40500.0]
    dep = Depreciation(method="macrs", recovery_years=5)
    t = AssetType(id="loader", class_="loader", price=P, max_age=8, om=OMCurve(kind="table", table=tuple(om)),
                  salvage=ValueCurve(kind="table", table=tuple(mv)), depreciation=dep)
    lt = life.life_table(t, i, Y0, tax_rate=tau)
    ref = _after_tax_eac_by_atcf_table(P, mv, om, np.array(PUB946_TABLE_A1[5]) / 100, tau, i)
    assert np.round(lt.eac_total, 2).tolist() == np.round(ref, 2).tolist()
    assert lt.economic_life == int(np.argmin(ref)) + 1 == 7
    # the parts add up; the shield is a saving
    assert lt.eac_capital + lt.eac_om + lt.eac_shield == pytest.approx(lt.eac_total)
    assert np.all(lt.eac_shield < 0)
    # before tax the same loader's economic life is a year shorter: the tax changes the answer (issue 17)
    assert life.life_table(t, i, Y0).economic_life == 6
    # marginal cost after tax: S'_{N-1}(1+i) − S'_N + (1−τ)c_N − τ·d_N·P, by hand for N = 2
    bv1, bv2 = P * 0.8, P * 0.48
    s1 = mv[0] - tau * (mv[0] - bv1)
    s2 = mv[1] - tau * (mv[1] - bv2)
    assert lt.marginal[1] == pytest.approx(s1 * (1 + i) - s2 + (1 - tau) * om[1] - tau * 0.32 * P)


#: Sullivan, Wicks & Koelling, *Engineering Economy* (Pearson; example numbers of the 15th-17th
#: editions), Example 9-4 / Table 9-2: a new forklift truck, first cost $30,000, market value and
#: expenses at the end of years 1 ... 5 (figures as printed, read in a public copy of the table).
SWK_FORKLIFT_MV = [22500.0, 16875.0, 12750.0, 9750.0, 7125.0]
SWK_FORKLIFT_E = [3000.0, 4500.0, 7000.0, 10000.0, 13000.0]


def _swk_forklift(dep=None):
    return AssetType(id="forklift", class_="forklift", price=30000.0, max_age=5,
                     om=OMCurve(kind="table", table=tuple(SWK_FORKLIFT_E)),
                     salvage=ValueCurve(kind="table", table=tuple(SWK_FORKLIFT_MV)), depreciation=dep)


def test_sullivan_forklift_economic_life_before_tax_table_9_2():
    """Sullivan, Wicks & Koelling, *Engineering Economy*, Example 9-4, Table 9-2 (before-tax MARR
    10 %): total marginal cost TC_k 13,500 / 12,375 / 12,813 / 14,275 / 16,600 and EUAC_k 13,500 /
    12,964 / 12,918 / 13,211 / 13,766, N* = 3 (printed to the dollar, read in a public copy).
    The base of the after-tax example below: the same data through tenure.life.life_table."""
    lt = life.life_table(_swk_forklift(), 0.10, Y0)

    def half_up(x):  # the text rounds 12,812.50 up
        return np.floor(np.asarray(x) + 0.5).tolist()

    assert half_up(lt.marginal) == [13500, 12375, 12813, 14275, 16600]
    assert half_up(lt.eac_total) == [13500, 12964, 12918, 13211, 13766]
    assert lt.economic_life == 3


def _swk_eq_9_4(P, mv, E, bv, t, i):
    """The text's Eq. (9-4), the after-tax total marginal cost of year k:
    TC_k = (1 − t)(MV_{k−1} − MV_k + i·MV_{k−1} + E_k) + i·t·BV_{k−1}, MV_0 = BV_0 = P, and
    EUAC_k = [Σ_{j≤k} TC_j (P/F,i,j)](A/P,i,k), the factors from numpy-financial (pv, pmt).
    Returns (approximate TC = the first term, TC, EUAC)."""
    mv0, bv0 = np.concatenate([[P], mv[:-1]]), np.concatenate([[P], bv[:-1]])
    approx = (1 - t) * (mv0 - np.asarray(mv) + i * mv0 + np.asarray(E))
    tc = approx + i * t * bv0
    k = np.arange(1, len(mv) + 1)
    pw = np.cumsum(tc * npf.pv(i, k, 0, -1))  # (P/F, i, k) = pv of 1 received at k
    euac = np.array([npf.pmt(i, n, -x) for n, x in zip(k, pw)])
    return approx, tc, euac


def test_sullivan_forklift_after_tax_economic_life_example_9_9():
    """Sullivan, Wicks & Koelling, *Engineering Economy*, Example 9-9, Table 9-5 ("After-Tax
    Economic Life of an Asset"): the forklift of Example 9-4 as a MACRS (GDS) 3-year property
    asset, effective income tax rate 40 %, after-tax MARR 6 %. Printed (read in a public copy of
    the example): in year 1 the cost of capital $1,800 and the approximate after-tax marginal cost
    (1 − t)(7,500 + 1,800 + 3,000) = $7,380; the after-tax economic life N*_AT = 3 years, the same as
    before tax. The copy read did not show the table's later rows, so the EUAC of every holding
    period is checked against the text's own Eq. (9-4) (a marginal-cost route, not tenure's
    present-worth route), computed here with numpy-financial, to the cent.

    Conventions match without set-up: the text's book value BV_k after k full MACRS years (no half
    year in the year of disposal) is tenure's (docs/conventions.md, "Income tax"), and its
    after-tax MARR is tenure's discount rate when tax_rate is set. Eq. (9-4) equals tenure's
    after-tax marginal cost S'_{k−1}(1+i) − S'_k + (1−t)E_k − t·d_k·P with S'_k = MV_k − t(MV_k − BV_k),
    since BV_k = BV_{k−1} − d_k·P (algebra, common practice)."""
    t, i, P = 0.40, 0.06, 30000.0
    f = _swk_forklift(Depreciation(method="macrs", recovery_years=3))
    lt = life.life_table(f, i, Y0, tax_rate=t)
    bv = np.asarray(tax.book_value(f, np.arange(1, 6), Y0, Y0))
    assert np.round(bv).tolist() == [20001, 6666, 2223, 0, 0]  # 30,000 × IRS Pub 946 Table A-1, 3-year
    approx, tc, euac = _swk_eq_9_4(P, SWK_FORKLIFT_MV, SWK_FORKLIFT_E, bv, t, i)
    assert round(i * P) == 1800 and round(approx[0]) == 7380  # printed, year 1
    assert lt.economic_life == 3  # printed: N*_AT = 3 years, the before-tax N* of Example 9-4
    assert np.round(lt.marginal, 2).tolist() == np.round(tc, 2).tolist()
    assert np.round(lt.eac_total, 2).tolist() == np.round(euac, 2).tolist()
    # year 1 by hand: 7,380 plus the tax adjustment i·t·BV_0 = 0.06 × 0.4 × 30,000 = 720
    assert lt.eac_total[0] == pytest.approx(8100.0, abs=0.005)


def test_sullivan_defender_after_tax_investment_value_example_9_11_through_the_graph():
    """Sullivan, Wicks & Koelling, *Engineering Economy*, Example 9-11 ("After-Tax Investment Cost
    of a Defender: BV < MV"): a CAD workstation bought four years ago for $20,000, MACRS (GDS)
    5-year property, can be sold now for $4,000, tax rate 40 %. Printed (read in a public copy):
    BV_0 = 20,000 (1 − 0.2 − 0.32 − 0.192 − 0.1152) = $3,456, taxes on the $544 gain $218, and an
    after-tax investment value of keeping it of $3,782 (the after-tax proceeds given up).

    Set-up to match the text: a unit of age 4 held at the start of a small case, its type's price
    $20,000 with no price change (so the basis, the price in its purchase year, is $20,000) and a
    market-value list giving $4,000 at age 4; the sale at time 0 ends depreciation after four
    completed service years, as in the text. The figure comes out of the state graph's sale arc."""
    doc = {"study": {"title": "swk 9-11", "start_year": Y0, "horizon": 2, "discount_rate": 0.1, "tax_rate": 0.4},
           "asset_type": [{"id": "cad", "class": "cad", "price": 20000.0, "max_age": 6, "om": [1000.0] * 6,
                           "salvage": [12000.0, 8000.0, 6000.0, 4000.0, 3000.0, 2000.0],
                           "depreciation": {"method": "macrs", "recovery_years": 5}}],
           "unit": [{"id": "W1", "type": "cad", "age": 4}]}
    g = chain.build_class_graph(build_case(doc), "cad")
    assert round(g.book[0, 0, 4], 2) == 3456.00
    assert round(0.4 * (g.value[0, 0, 4] - g.book[0, 0, 4])) == 218
    assert round(g.sale_pw[0, 0, 4]) == 3782  # time 0: no discounting
    assert g.sale_pw[0, 0, 4] == pytest.approx(4000.0 - 0.4 * 544.0)


# ---------------------------------------------------------------------------
# 4. book value and recapture by hand on units sold mid-schedule, through the graph
# ---------------------------------------------------------------------------
def _taxed_doc(tau=0.3, dep=None, price_change=0.0, age=3):
    doc = {"study": {"title": "hand", "start_year": Y0, "horizon": 4, "discount_rate": 0.1, "tax_rate": tau},
           "asset_type": [{"id": "dozer", "class": "dozer", "price": 100000.0, "max_age": 10,
                           "price_change": price_change, "om": {"first": 5000.0, "gradient": 1000.0},
                           "salvage": {"retain": 0.7},
                           "depreciation": dep or {"method": "macrs", "recovery_years": 7}}],
           "unit": [{"id": "D1", "type": "dozer", "age": age}]}
    return doc


def test_recapture_by_hand_on_a_unit_sold_mid_schedule():
    """7-year MACRS unit bought for 100,000 and sold after 3 years: book value
    100,000·(1 − 0.1429 − 0.2449 − 0.1749) = 43,730; market value 100,000·0.7³ = 34,300 is below
    book, so the sale gives a credit 0.3·(34,300 − 43,730) = −2,829 and the after-tax proceeds are
    37,129 (hand computation, IRS Pub 946 Table A-1 rates)."""
    g = chain.build_class_graph(build_case(_taxed_doc()), "dozer")
    assert g.book[0, 0, 3] == pytest.approx(43730.0)
    assert g.value[0, 0, 3] == pytest.approx(34300.0)
    assert g.sale_pw[0, 0, 3] == pytest.approx(37129.0)
    # sold at time 2 from age 5 (bought 2027): book 100,000·(1 − 0.6876 − 0.0893) = 22,310, market
    # 100,000·0.7⁵ = 16,807, credit 0.3·(16,807 − 22,310) = −1,650.90, discounted two years at 10 %
    assert g.book[2, 0, 5] == pytest.approx(22310.0)
    assert g.sale_pw[2, 0, 5] == pytest.approx((16807.0 + 1650.9) / 1.1 ** 2)
    # a gain: straight line 5 years to zero, sold at age 4 for 0.7⁴ = 24,010 against book 20,000:
    # tax 0.3·4,010 = 1,203 paid
    g2 = chain.build_class_graph(build_case(_taxed_doc(dep={"method": "straight-line", "life": 5})), "dozer")
    assert g2.sale_pw[0, 0, 4] == pytest.approx(24010.0 - 1203.0)


def test_units_held_at_the_start_are_depreciated_from_their_purchase_year_price():
    """A unit of age 3 at the start was bought in start_year − 3 at the price of that year:
    100,000·1.05⁻³ = 86,383.76; its keep arc in year 0 (service year 4) is
    (1−τ)·(5,000 + 3·1,000) − τ·0.1249·86,383.76 paid at time 1 (hand computation)."""
    g = chain.build_class_graph(build_case(_taxed_doc(price_change=0.05)), "dozer")
    basis = 100000.0 * 1.05 ** -3
    assert g.book[0, 0, 3] == pytest.approx(basis * (1 - 0.1429 - 0.2449 - 0.1749))
    assert g.keep_pw[0, 0, 3] == pytest.approx((0.7 * 8000.0 - 0.3 * 0.1249 * basis) / 1.1)
    # a new unit bought in year 1 pays its price and its first service year, shield on its own price
    p1 = 100000.0 * 1.05
    assert g.buy_pw[1, 0] == pytest.approx(p1 / 1.1 + (0.7 * 5000.0 - 0.3 * 0.1429 * p1) / 1.1 ** 2)


def test_capital_caps_stay_on_purchase_prices():
    """The fleet program's cap rows use the purchase price, not the after-tax cost (issue 17): a unit
    at its max age must be replaced in the first year, so a cap one below the price cannot be met
    even though the after-tax cost of the purchase is far lower, and a cap equal to the price can."""
    doc = _taxed_doc(age=10)
    doc["budget"] = {"cap_by_year": {str(Y0): 100000.0 - 1.0}}
    plan = solve(build_case(doc), time_limit=20)
    assert plan.status == "infeasible"
    assert dict(plan.shortfall)[Y0] == pytest.approx(1.0, abs=1e-6)
    doc["budget"] = {"cap_by_year": {str(Y0): 100000.0}}
    plan = solve(build_case(doc), time_limit=20)
    assert plan.status == "optimal"
    assert plan.years[0].capital == pytest.approx(100000.0)


def test_before_tax_case_is_unchanged_by_a_depreciation_it_does_not_use():
    """Depreciation without a tax rate changes nothing (the before-tax analysis, as before)."""
    doc = base_doc()
    plain = solve(build_case(doc))
    for t in doc["asset_type"]:
        t["depreciation"] = {"method": "macrs", "recovery_years": 5}
    same = solve(build_case(doc))
    drop = lambda d: {k: v for k, v in d.items() if k != "stats"}  # noqa: E731 - stats hold timings
    assert drop(same.to_dict()) == drop(plain.to_dict())
    assert "tax_rate" not in plain.to_dict()


def test_zero_tax_rate_equals_the_before_tax_plan():
    """τ = 0: every tax term vanishes, so the present cost is the before-tax one (common practice)."""
    doc = base_doc()
    plain = solve(build_case(doc)).present_cost
    doc["study"]["tax_rate"] = 0.0
    for t in doc["asset_type"]:
        t["depreciation"] = {"method": "straight-line", "life": 3}
    assert solve(build_case(doc)).present_cost == pytest.approx(plain, rel=1e-12)


# ---------------------------------------------------------------------------
# 5. brute force over every schedule with tax agrees with the recursion
# ---------------------------------------------------------------------------
class TaxOracle:
    """Prices a unit's schedule from ``tenure.curves`` and ``tax.schedule`` fractions, with its own
    running book value (docs/conventions.md, "Income tax"); never reads the graph tables.

    Time-0 present worth: a purchase at time k pays the price; the unit's vintage and basis are
    its purchase year's price (for a unit held at the start, start_year − age). Service year j of
    a unit ends at k+1 with (1−τ)·O&M − τ·d_j·basis. A sale at time k receives MV and pays
    τ·(MV − book), book = basis − the depreciation taken so far.
    """

    def __init__(self, case, cls):
        s = case.study
        self.y0, self.H, self.i, self.tau, self.rule = (s.start_year, s.horizon, s.discount_rate, s.tax_rate,
                                                        s.end_value)
        self.types = case.types_of(cls)

    def v(self, t):
        return (1.0 + self.i) ** (-t)

    def d(self, j, service_year):
        sch = tax.schedule(self.types[j].depreciation)
        return float(sch[service_year - 1]) if 1 <= service_year <= len(sch) else 0.0

    def book(self, j, age, vintage):
        basis = float(curves.price(self.types[j], vintage, self.y0))
        return basis - basis * sum(self.d(j, n) for n in range(1, age + 1))

    def year_cash(self, j, service_year, vintage):
        t = self.types[j]
        om = float(curves.om(t, service_year, vintage, self.y0))
        return (1 - self.tau) * om - self.tau * self.d(j, service_year) * float(curves.price(t, vintage, self.y0))

    def sale(self, j, age, vintage, year, frozen_year=None):
        mv = float(curves.market_value(self.types[j], age, frozen_year or year, self.y0))
        return mv - self.tau * (mv - self.book(j, age, vintage))

    def chain_cost(self):
        """After-tax capitalised cost of the best endless chain at time H, prices frozen at year y0+H."""
        y_end, best = self.y0 + self.H, math.inf
        for j, t in enumerate(self.types):
            if not t.buyable(y_end - 1):
                continue
            pw = float(curves.price(t, y_end, self.y0))
            for n in range(1, t.max_age + 1):
                pw += self.year_cash(j, n, y_end) * self.v(n)
                best = min(best, (pw - self.sale(j, n, y_end, y_end) * self.v(n)) / (1 - self.v(n)))
        return best

    def end(self, j, a, vintage):
        y_end = self.y0 + self.H
        if self.rule == "salvage":
            return -self.sale(j, a, vintage, y_end) * self.v(self.H)
        c, acc, best = self.chain_cost(), 0.0, math.inf
        for n in range(0, self.types[j].max_age - a + 1):
            if n:
                acc += self.year_cash(j, a + n, vintage) * self.v(n)
            best = min(best, acc + self.v(n) * (c - self.sale(j, a + n, vintage, y_end, y_end)))
        return best * self.v(self.H)

    def best(self, j, a):
        """Least present cost over every schedule from (0, j, a), by exhaustive enumeration."""
        out = []

        def rec(k, j, a, vint, cost):
            if k == self.H:
                out.append(cost + self.end(j, a, vint))
                return
            y = self.y0 + k
            if a < self.types[j].max_age:
                rec(k + 1, j, a + 1, vint, cost + self.year_cash(j, a + 1, vint) * self.v(k + 1))
            for j2, t2 in enumerate(self.types):
                if t2.buyable(y):
                    c = (float(curves.price(t2, y, self.y0)) - self.sale(j, a, vint, y)) * self.v(k) \
                        + self.year_cash(j2, 1, y) * self.v(k + 1)
                    rec(k + 1, j2, 1, y, cost + c)

        rec(0, j, a, self.y0 - a, 0.0)
        return min(out)


@st.composite
def depreciation(draw):
    method = draw(st.sampled_from(["straight-line", "declining-balance", "table", "macrs"]))
    if method == "straight-line":
        return {"method": method, "life": draw(st.integers(1, 8)), "salvage": draw(st.floats(0.0, 0.5))}
    if method == "declining-balance":
        return {"method": method, "rate": draw(st.floats(0.05, 1.0)), "life": draw(st.integers(1, 8)),
                "switch": draw(st.booleans())}
    if method == "table":
        raw = draw(st.lists(st.integers(0, 100), min_size=1, max_size=7))
        return {"method": method, "rates": [x / max(100, sum(raw)) for x in raw]}
    return {"method": method, "recovery_years": draw(st.sampled_from([3, 5, 7]))}


@st.composite
def taxed_doc(draw):
    doc = draw(case_doc(horizons=(1, 5), max_ages=(2, 5), classes=(1, 1)))
    doc["study"]["tax_rate"] = draw(st.sampled_from([0.21, 0.35]) | st.floats(0.0, 0.6))
    for t in doc["asset_type"]:
        t["depreciation"] = draw(depreciation())
    return doc


@PROPERTY
@given(taxed_doc())
def test_after_tax_recursion_equals_brute_force(doc):
    """The recursion's value of every starting state equals the least after-tax cost over all
    keep/replace schedules, each priced by TaxOracle (reference: brute force from tenure.curves and
    the depreciation fractions, not the graph tables), for both end values."""
    case = build_case(doc)
    cls = case.classes[0]
    g = chain.build_class_graph(case, cls)
    sol = chain.backward(g)
    orc = TaxOracle(case, cls)
    scale = max(float(np.max(g.price)), 1.0)
    for t, a in all_starts(g):
        ref = orc.best(t, a)
        assert close(sol.value[0, t, a], ref, scale), (t, a, sol.value[0, t, a], ref)
        assert close(chain.path_cost(g, chain.follow(sol, t, a)), ref, scale)


# ---------------------------------------------------------------------------
# 6. case validation
# ---------------------------------------------------------------------------
def _with(dep=None, tax_rate=0.25, j=0):
    doc = base_doc()
    doc["study"]["tax_rate"] = tax_rate
    for t in doc["asset_type"]:
        t["depreciation"] = {"method": "macrs", "recovery_years": 5}
    if dep is not None:
        doc["asset_type"][j]["depreciation"] = dep
    return doc


@pytest.mark.parametrize("doc, where, fragment", [
    (_with(tax_rate=1.0), "study.tax_rate", "in [0, 1)"),
    (_with(tax_rate="25%"), "study.tax_rate", "a combined marginal tax rate"),
    (_with({"method": "sum-of-years"}), "asset_type[1].depreciation.method",
     "'straight-line', 'declining-balance', 'table', 'macrs'"),
    (_with({"life": 5}), "asset_type[1].depreciation.method", "missing"),
    (_with("macrs"), "asset_type[1].depreciation", "must be a table"),
    (_with({"method": "macrs", "recovery_years": 6}), "asset_type[1].depreciation.recovery_years",
     "3, 5, 7, 10, 15, 20"),
    (_with({"method": "macrs"}), "asset_type[1].depreciation.recovery_years", "missing"),
    (_with({"method": "straight-line", "life": 0}), "asset_type[1].depreciation.life", "in [1, 100]"),
    (_with({"method": "straight-line", "life": 5, "salvage": 1.0}), "asset_type[1].depreciation.salvage",
     "in [0, 1)"),
    (_with({"method": "straight-line", "life": 5, "rate": 0.2}), "asset_type[1].depreciation.rate",
     "allowed: method, life, salvage"),
    (_with({"method": "declining-balance", "rate": 0.0, "life": 5}), "asset_type[1].depreciation.rate",
     "in (0, 1]"),
    (_with({"method": "declining-balance", "rate": 0.2, "life": 5, "switch": "yes"}),
     "asset_type[1].depreciation.switch", "true or false"),
    (_with({"method": "table", "rates": []}), "asset_type[1].depreciation.rates", "list of fractions"),
    (_with({"method": "table", "rates": [0.5, 0.6]}), "asset_type[1].depreciation.rates", "must not exceed 1"),
    (_with({"method": "table", "rates": [0.5, -0.1]}), "asset_type[1].depreciation.rates[2]", "in [0, 1]"),
], ids=lambda x: x if isinstance(x, str) else "")
def test_bad_tax_fields_are_named_with_what_is_allowed(doc, where, fragment):
    with pytest.raises(CaseError) as exc:
        build_case(doc, source="c.toml")
    hits = [p for p in exc.value.problems if p.path == where]
    assert hits, [str(p) for p in exc.value.problems]
    assert fragment in hits[0].message
    assert hits[0].file == "c.toml"


def test_a_taxed_case_needs_depreciation_for_every_type():
    doc = _with()
    del doc["asset_type"][1]["depreciation"]
    with pytest.raises(CaseError) as exc:
        build_case(doc, source="c.toml")
    (p,) = exc.value.problems
    assert p.path == "asset_type[2].depreciation"
    assert "macrs" in p.message and "tax_rate = 0.25" in p.message


def test_valid_tax_fields_build_the_model():
    doc = _with({"method": "declining-balance", "rate": 0.2, "life": 10, "switch": True})
    doc["asset_type"][1]["depreciation"] = {"method": "table", "rates": [0.5, 0.3, 0.2]}
    case = build_case(doc)
    assert case.study.tax_rate == 0.25
    assert case.types[0].depreciation == Depreciation(method="declining-balance", rate=0.2, life=10, switch=True)
    assert case.types[1].depreciation == Depreciation(method="table", rates=(0.5, 0.3, 0.2))
    assert case.types[0].depreciation.describe() == "declining balance 20% over 10 years, switch to straight line"
    assert copy.deepcopy(case.types[1].depreciation).describe() == "table of 3 years"


# ---------------------------------------------------------------------------
# 7. what the commands and reports say
# ---------------------------------------------------------------------------
RIDGEBACK = Path(__file__).resolve().parents[1] / "cases" / "ridgeback-contractor.toml"


def _cli(capsys, *argv):
    from tenure import cli

    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_life_prints_the_after_tax_table_of_the_demo(capsys):
    """The printed after-tax least EAC is life_table's, whose pieces the ATCF-table test checks."""
    from tenure.case import load_case

    case = load_case(RIDGEBACK)
    s = case.study
    lt = life.life_table(case.type("pickup"), s.discount_rate, s.start_year, tax_rate=s.tax_rate)
    code, out, _ = _cli(capsys, "life", RIDGEBACK, "--type", "pickup")
    assert code == 0
    assert "After-tax economic life of pickup" in out and "straight line 6 years, salvage 10%" in out
    assert f"economic life {lt.economic_life} years, least EAC {lt.min_eac:,.2f}" in out
    assert "EAC shield" in out


def test_life_usage_prints_the_after_tax_rebuild_comparison(capsys, tmp_path):
    """`life --usage` on an after-tax case with an overhaul prints rebuild_life's after-tax figures
    (checked by hand in tests/test_usage_overhaul.py) and says they are after tax."""
    from casekit import to_toml
    from tenure.case import build_case
    from tenure.rebuild import rebuild_life

    doc = {"study": {"title": "rebuild", "start_year": Y0, "horizon": 2, "discount_rate": 0.10, "tax_rate": 0.3},
           "asset_type": [{"id": "m", "class": "m", "price": 100, "max_age": 4, "om": {"first": 10, "gradient": 10},
                           "salvage": [50, 40, 32, 25, 20, 16], "usage_reference": 1000,
                           "depreciation": {"method": "straight-line", "life": 4},
                           "overhaul": {"cost": 20, "ages": [3, 3], "om_age_after": 1, "adds_years": 2}}],
           "unit": [{"id": "M", "type": "m", "age": 3}]}
    path = tmp_path / "rebuild.toml"
    path.write_text(to_toml(doc))
    rl = rebuild_life(build_case(doc).type("m"), 0.10, Y0, Y0, 1000.0, tax_rate=0.3)
    code, out, _ = _cli(capsys, "life", path, "--usage", 1000)
    assert code == 0
    assert "after tax at 30.0% (the overhaul capitalised and depreciated)" in out
    assert f"least EAC {rl.min_with:,.2f} per year" in out and f"least EAC {rl.min_without:,.2f}" in out


def test_life_compare_tax_shows_both_lives(capsys):
    from tenure.case import load_case

    case = load_case(RIDGEBACK)
    s = case.study
    t = case.type("ex-30t")
    before = life.life_table(t, s.discount_rate, s.start_year)
    after = life.life_table(t, s.discount_rate, s.start_year, tax_rate=s.tax_rate)
    assert before.economic_life != after.economic_life  # the demo shows the tax moving the economic life
    code, out, _ = _cli(capsys, "life", RIDGEBACK, "--type", "ex-30t", "--compare-tax")
    assert code == 0
    assert f"{before.eac_total[0]:,.2f}" in out and f"{after.eac_total[0]:,.2f}" in out
    assert (f"economic life before tax {before.economic_life} years (B), after tax at 26.0% "
            f"{after.economic_life} years (A)") in out


def test_life_compare_tax_on_a_before_tax_case_is_a_usage_error(capsys, tmp_path):
    from casekit import UNCAPPED

    code, _, err = _cli(capsys, "life", UNCAPPED, "--compare-tax")
    assert code == 2
    assert "no [study] tax_rate" in err and "Traceback" not in err


def test_plan_and_report_say_after_tax_with_rate_and_methods(tmp_path):
    from tenure.case import load_case
    from tenure.report import html, taxnote, text

    case = load_case(RIDGEBACK)
    plan = solve(build_case(dict(case.raw) | {"budget": {}}, source=case.source))
    assert plan.to_dict()["tax_rate"] == 0.26
    summary = text.plan_summary(plan, case)
    assert "after-tax at rate 26.0%" in summary and "caps are on purchase prices" in summary
    page = html.assumptions_html(case) + html.summary_html(plan, case)
    assert "after-tax at rate 26.0%" in page
    assert "MACRS 7-year" in page and "MACRS 5-year" in page and "straight line 6 years" in page
    assert taxnote.depreciation_html(build_case(base_doc())) == ""
