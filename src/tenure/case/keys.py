"""The keys of case format version 1 (their meaning is in docs/case-format.md)."""

FORMAT_VERSION = 1

TOP_KEYS = ("format", "study", "asset_type", "unit", "fleet", "budget", "limit", "scenario", "uncertain")
STUDY_KEYS = ("title", "start_year", "horizon", "discount_rate", "end_value")
TYPE_KEYS = (
    "id", "class", "price", "price_change", "buy_from", "buy_until",
    "max_age", "om", "om_change", "salvage",
)
UNIT_KEYS = ("id", "type", "age", "count")
FLEET_KEYS = ("file",)
CSV_COLUMNS = ("id", "type", "age")
CSV_OPTIONAL = ("count",)
BUDGET_KEYS = ("cap", "cap_by_year", "basis")
LIMIT_KEYS = ("class", "max_buys_per_year")
SCENARIO_KEYS = ("id", "note", "set", "probability")
UNCERTAIN_KEYS = ("path", "dist", "low", "high", "mode", "mean", "sd")
DISTRIBUTIONS = ("uniform", "triangular", "normal")
