"""The keys of case format version 1 (their meaning is in docs/case-format.md)."""

FORMAT_VERSION = 1

TOP_KEYS = ("format", "study", "asset_type", "unit", "fleet", "budget", "limit", "scenario", "uncertain",
            "demand", "order", "target", "emission_cap")
STUDY_KEYS = ("title", "start_year", "horizon", "discount_rate", "end_value", "inflation", "rate_basis", "carbon_price")
TYPE_KEYS = (
    "id", "class", "price", "price_change", "buy_from", "buy_until",
    "max_age", "om", "om_change", "salvage", "min_age", "emissions",
)
UNIT_KEYS = ("id", "type", "age", "count")
FLEET_KEYS = ("file",)
CSV_COLUMNS = ("id", "type", "age")
CSV_OPTIONAL = ("count",)
BUDGET_KEYS = ("cap", "cap_by_year", "basis", "money")
LIMIT_KEYS = ("class", "max_buys_per_year")
SCENARIO_KEYS = ("id", "note", "set")
UNCERTAIN_KEYS = ("path", "dist", "low", "high", "mode", "mean", "sd")
DISTRIBUTIONS = ("uniform", "triangular", "normal")
DEMAND_KEYS = ("class", "count_by_year")
ORDER_KEYS = ("type", "count", "year", "replaces")
TARGET_KEYS = ("name", "types", "share_of_buys", "share_in_service", "from", "classes")
EMISSION_CAP_KEYS = ("from", "until", "tonnes")
EMISSION_KEYS = ("first", "change")
