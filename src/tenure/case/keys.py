"""The keys of case format version 1 (their meaning is in docs/case-format.md)."""

FORMAT_VERSION = 1

TOP_KEYS = ("format", "study", "asset_type", "unit", "fleet", "budget", "limit", "scenario", "uncertain",
            "demand", "order", "target", "emission_cap")
STUDY_KEYS = ("title", "start_year", "horizon", "discount_rate", "end_value", "inflation", "rate_basis", "carbon_price",
              "tax_rate")
TYPE_KEYS = (
    "id", "class", "price", "price_change", "buy_from", "buy_until",
    "max_age", "om", "om_change", "salvage", "min_age", "emissions", "depreciation", "usage_reference",
    "usage_max", "overhaul",
)
OVERHAUL_KEYS = ("cost", "ages", "om_age_after", "adds_years")
UNIT_KEYS = ("id", "type", "age", "count", "usage")
#: further keys of a [[unit]] block (not scenario override targets: overrides see resolved ages)
UNIT_MORE_KEYS = ("in_service", "model_year", "attributes")
FLEET_KEYS = ("file", "sheet", "group_by")
#: required inventory columns, besides exactly one of AGE_COLUMNS
CSV_COLUMNS = ("id", "type", "age")
AGE_COLUMNS = ("age", "in_service", "model_year")
CSV_OPTIONAL = ("count", "usage")
#: kept inventory columns may not take the name of a units.csv column
RESERVED_COLUMNS = ("unit", "class", "start_type", "start_age", "year", "action", "from_type", "from_age", "price",
                    "market_value", "defer_cost", "advance_cost", "present_cost", "attributes")
BUDGET_KEYS = ("cap", "cap_by_year", "basis", "money")
LIMIT_KEYS = ("class", "max_buys_per_year")
SCENARIO_KEYS = ("id", "note", "set", "probability")
UNCERTAIN_KEYS = ("path", "dist", "low", "high", "mode", "mean", "sd")
DISTRIBUTIONS = ("uniform", "triangular", "normal")
DEMAND_KEYS = ("class", "count_by_year")
ORDER_KEYS = ("type", "count", "year", "replaces")
TARGET_KEYS = ("name", "types", "share_of_buys", "share_in_service", "from", "classes")
EMISSION_CAP_KEYS = ("from", "until", "tonnes")
EMISSION_KEYS = ("first", "change")
