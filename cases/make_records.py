"""Invented work-order, fuel and sale records for the Quillmere Hollow demo fleet (a fictional town).

Run:  python cases/make_records.py        (seeded: the same files every time)

Writes, beside this script:

- ``quillmere-workorders.csv``: unit,date,kind,amount — one maintenance and one fuel record per unit and
  month, January 2019 … December 2026, in then-current currency;
- ``quillmere-retired.csv``: id,type,in_service,out_of_service — units that left the fleet before 2027
  (their records are in the work orders; ``tenure fit --units`` gives their type and dates);
- ``quillmere-sales.csv``: unit,type,date,age,price — the retired units' sales and other auction results;
- ``quillmere-price-index.csv``: year,index — an invented price index (2027 = 100).

Every figure is drawn from the curves of ``quillmere-fleet.toml`` with lognormal noise, so
``tenure fit`` should come back close to them.  None of it describes a real place, fleet or vendor.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from tenure import curves
from tenure.case import load_case

HERE = Path(__file__).resolve().parent
SEED = 20270101
FIRST_YEAR, LAST_YEAR = 2019, 2026
FUEL_SHARE = 0.45          # share of a unit-year's O&M that is fuel
YEAR_NOISE = 0.18          # lognormal sigma of a unit-year's O&M about the curve
SALE_NOISE = 0.12          # lognormal sigma of a sale price about the value curve
INFLATION = (0.021, 0.018, 0.047, 0.071, 0.038, 0.029, 0.026, 0.024, 0.022, 0.020, 0.021, 0.020)


def price_index(start: int) -> dict[int, float]:
    """Invented index, 2027 = 100, from yearly inflation (2016 … 2027)."""
    years = list(range(start - len(INFLATION), start + 1))
    level = np.cumprod([1.0] + [1 + r for r in INFLATION])
    return {y: round(100 * lv / level[-1], 2) for y, lv in zip(years, level)}


def unit_year_om(t, s: int, vintage: int, start: int, rng) -> float:
    mean = curves.om(t, s, vintage, start)
    return mean * rng.lognormal(-YEAR_NOISE ** 2 / 2, YEAR_NOISE)


def monthly_rows(name, t, ins: tuple[int, int], out, start, index, rng):
    """One maintenance and one fuel record per month in service inside the record window."""
    rows = []
    y0, m0 = ins
    for year in range(FIRST_YEAR, LAST_YEAR + 1):
        for month in range(1, 13):
            if (year, month) < (y0, m0) or (out is not None and (year, month) > out):
                continue
            s = ((year - y0) * 12 + (month - m0)) // 12 + 1
            if s > t.max_age:
                continue
            if month == m0 or (year, month) == (FIRST_YEAR, 1):
                annual = unit_year_om(t, s, y0, start, rng)  # one draw per service year
                shares = rng.dirichlet(np.full(12, 4.0))
            k = (month - m0) % 12
            nominal = index[year] / index[start]
            fuel = annual * FUEL_SHARE / 12 * rng.lognormal(-0.005, 0.1)
            maint = annual * (1 - FUEL_SHARE) * shares[k]
            date = f"{year}-{month:02d}-{rng.integers(1, 29):02d}"
            rows.append((name, date, "maintenance", round(maint * nominal, 2)))
            rows.append((name, date, "fuel", round(fuel * nominal, 2)))
    return rows


def sale_price(t, age: float, year: int, start: int, index, rng) -> float:
    real = curves.market_value(t, age, year, start) * rng.lognormal(-SALE_NOISE ** 2 / 2, SALE_NOISE)
    return round(real * index[year] / index[start], -1)


def main() -> None:
    rng = np.random.default_rng(SEED)
    case = load_case(HERE / "quillmere-fleet.toml")
    start = case.study.start_year
    index = price_index(start)
    work, retired, sales = [], [], []
    for u in case.units:
        t = case.type(u.type)
        for name in u.names():
            work += monthly_rows(name, t, (start - u.age, 1), None, start, index, rng)
    held = sorted({u.type for u in case.units})
    for tid in held:
        t = case.type(tid)
        for j in range(1, 7):
            out_year = int(rng.integers(FIRST_YEAR + 1, LAST_YEAR + 1))
            age = int(rng.integers(max(2, t.max_age - 5), t.max_age + 1))
            ins = (out_year - age, int(rng.integers(1, 13)))
            out = (out_year, int(rng.integers(1, 13)))
            name = f"X-{tid}-{j}"
            retired.append((name, tid, f"{ins[0]}-{ins[1]:02d}-01", f"{out[0]}-{out[1]:02d}-28"))
            work += monthly_rows(name, t, ins, out, start, index, rng)
            held_years = (out[0] - ins[0]) + (out[1] - ins[1]) / 12
            sales.append((name, "", f"{out[0]}-{out[1]:02d}-28", "",
                          sale_price(t, held_years, out[0], start, index, rng)))
        for _ in range(14):
            year = int(rng.integers(FIRST_YEAR, LAST_YEAR + 1))
            age = int(rng.integers(1, t.max_age + 1))
            sales.append(("", tid, f"{year}-{int(rng.integers(1, 13)):02d}-15", age,
                          sale_price(t, age, year, start, index, rng)))
    work.sort(key=lambda r: (r[1], r[0], r[2]))
    _write("quillmere-workorders.csv", ("unit", "date", "kind", "amount"), work)
    _write("quillmere-retired.csv", ("id", "type", "in_service", "out_of_service"), retired)
    _write("quillmere-sales.csv", ("unit", "type", "date", "age", "price"), sorted(sales, key=lambda r: r[2]))
    _write("quillmere-price-index.csv", ("year", "index"), sorted(index.items()))


def _write(name: str, header, rows) -> None:
    with (HERE / name).open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)
    print(f"wrote {name}: {len(rows)} rows")


if __name__ == "__main__":
    main()
