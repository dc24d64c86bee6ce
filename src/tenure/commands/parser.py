"""The ``tenure`` command's options (argparse)."""

from __future__ import annotations

import argparse

from .. import __version__

#: default guard of an interactive ``plan``: a capped solve stops here with its proven gap stated ("feasible")
#: when the 1e-4 proof takes longer (the demo proves 1e-4 in about a minute on a 2-core machine)
PLAN_SECONDS = 30.0
from .many import cmd_compare, cmd_hedge, cmd_sweep
from .single import cmd_check, cmd_fit, cmd_life, cmd_plan, cmd_policy


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="tenure", description="Fleet and asset renewal planning: economic life, "
                                "replacement chains under changing challengers, capital-capped fleet plans.")
    p.add_argument("--version", action="version", version=f"tenure {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    _single_case_commands(sub)
    _many_solve_commands(sub)
    return p


def _single_case_commands(sub) -> None:
    """check, life, fit, plan, policy."""
    c = sub.add_parser("check", help="validate a case and print a one-screen summary")
    c.add_argument("case", help="case file (TOML)")
    c.set_defaults(func=cmd_check)

    c = sub.add_parser("life", help="EAC by holding period and the economic life of each type")
    c.add_argument("case")
    c.add_argument("--type", help="asset type id (default: every type buyable in YEAR)")
    c.add_argument("--year", type=int, help="purchase year (default: the study's start year)")
    c.add_argument("--tolerance", type=float, default=0.02, help="relative width of the near-optimal band (0.02)")
    c.add_argument("--json", action="store_true", help="print JSON instead of a table")
    c.add_argument("--compare-tax", action="store_true",
                   help="show the after-tax EAC beside the before-tax one (a case with [study] tax_rate)")
    c.add_argument("--usage", type=float, help="yearly usage of the job (km, hours, …): EAC with and without overhaul")
    c.set_defaults(func=cmd_life)

    c = sub.add_parser("fit", help="fit O&M and market-value curves from work-order, fuel and sale records")
    c.add_argument("case")
    c.add_argument("--costs", action="append", required=True, metavar="FILE",
                   help="cost records unit,date|year,amount[,kind] (CSV or .xlsx; repeat for several files)")
    c.add_argument("--sales", metavar="FILE", help="sale records type|unit,date|year,price[,age]")
    c.add_argument("--units", metavar="FILE", help="units id,type,in_service[,out_of_service] (e.g. units sold)")
    c.add_argument("--index", metavar="FILE", help="price index year,index: amounts to constant start-year money")
    c.add_argument("--inflation", type=float, metavar="R", help="constant inflation rate per year instead of --index")
    c.add_argument("--intervals", choices=("ols", "bootstrap"), default="ols",
                   help="standard errors and 90 %% intervals: OLS formulae, or a bootstrap over units (ols)")
    c.add_argument("--uncertain", action="store_true", help="add [[uncertain]] blocks of the fitted intervals")
    c.add_argument("--out", required=True, help="folder for fitted.toml, fit.json and fit.html")
    c.set_defaults(func=cmd_fit)

    c = sub.add_parser("plan", help="least-cost renewal plan of the whole fleet (capped when the case has a budget)")
    c.add_argument("case")
    c.add_argument("--out", required=True, help="folder for plan.json, units.csv, years.csv and the report")
    c.add_argument("--solver", choices=("highs", "cbc"), default="highs", help="integer-program solver (highs)")
    c.add_argument("--time-limit", type=float, default=PLAN_SECONDS,
                   help=f"seconds for a capped solve ({PLAN_SECONDS:g}); the plan then states its proven gap")
    c.add_argument("--gap", type=float, default=1e-4, help="relative optimality gap to stop at; optimal means proven within it (0.0001)")
    c.add_argument("--quiet", action="store_true", help="no progress line")
    c.add_argument("--list-years", type=int, default=2, metavar="N",
                   help="planning years covered by buy-list.csv and the spreadsheet's buy list (2)")
    c.add_argument("--by", metavar="COLUMN",
                   help="kept inventory column (e.g. department) to group the buy list and summaries by "
                        "(default: [fleet] group_by)")
    c.set_defaults(func=cmd_plan)

    c = sub.add_parser("policy", help="optimal keep/replace action by year and age for one class (uncapped)")
    c.add_argument("case")
    c.add_argument("--class", dest="class_", required=True, help="class name")
    c.add_argument("--type", help="held type (default: every type of the class)")
    c.add_argument("--usage", type=float, help="yearly usage of the job (km, hours, …; default: the reference)")
    c.set_defaults(func=cmd_policy)


def _many_solve_commands(sub) -> None:
    """compare, sweep, hedge: the solver and worker options they share."""
    def solve_options(c):
        c.add_argument("--out", help="folder for the JSON and CSV results (default: print only)")
        c.add_argument("--workers", type=int, default=1,
                       help="worker processes: local processes, or those of the cluster --cluster local starts (1)")
        c.add_argument("--cluster", metavar="ADDRESS",
                       help="'local' to start a Dask cluster of --workers processes here, or the address of a "
                            "running Dask scheduler, e.g. tcp://scheduler-host:8786")
        c.add_argument("--solver", choices=("highs", "cbc"), default="highs", help="integer-program solver (highs)")
        c.add_argument("--time-limit", type=float, default=120.0, help="seconds per capped solve (120)")
        c.add_argument("--gap", type=float, default=1e-4, help="relative optimality gap to stop at; optimal means proven within it (0.0001)")
        c.add_argument("--quiet", action="store_true", help="no progress bar")

    c = sub.add_parser("compare", help="solve the base case and each scenario; regret and what is safe to commit now")
    c.add_argument("case")
    c.add_argument("--scenario", action="append", metavar="ID",
                   help="scenario id to compare (repeat, or a,b; default: every scenario)")
    c.add_argument("--scenarios", metavar="FILE", help="TOML file of extra [[scenario]] blocks")
    c.add_argument("--commit-years", type=int, metavar="N",
                   help="also the regret of committing each plan's first N years, then re-planning")
    solve_options(c)
    c.set_defaults(func=cmd_compare)

    c = sub.add_parser("sweep", help="present cost and first-year decisions over a grid or Monte Carlo draws")
    c.add_argument("case")
    c.add_argument("--vary", action="append", metavar="PATH=LOW:HIGH:STEPS",
                   help="grid over one input (repeat for a multi-way grid)")
    c.add_argument("--samples", type=int, metavar="N", help="Monte Carlo draws of the [[uncertain]] inputs")
    c.add_argument("--seed", type=int, default=0, help="seed of the draws (0)")
    c.add_argument("--scenarios", metavar="FILE", help="TOML file of extra [[uncertain]] blocks")
    solve_options(c)
    c.set_defaults(func=cmd_sweep)

    c = sub.add_parser("hedge", help="one commitment of the first years, best across the scenarios re-planned later")
    c.add_argument("case")
    c.add_argument("--commit-years", type=int, required=True, metavar="N", help="planning years committed now")
    c.add_argument("--objective", choices=("expected", "regret"), default="expected",
                   help="least expected present cost, or least largest regret (expected)")
    c.add_argument("--method", choices=("auto", "extensive", "lagrangian"), default="auto",
                   help="extensive form, Lagrangian decomposition, or chosen by size (auto)")
    c.add_argument("--scenario", action="append", metavar="ID",
                   help="scenario id to hedge over besides the base case (repeat, or a,b; default: every scenario)")
    solve_options(c)
    c.set_defaults(func=cmd_hedge)
