"""Words and number-kind hints shared by every output (files, workbook, terminal, report)."""

DISCLAIMER = (
    "netopt results are decision support, not decisions. They are only as good as the input data "
    "(demand, costs, capacities, lanes) and the assumptions in the settings. Legal, safety, customs "
    "and labour rules (driving hours, site permits, works councils, consultation duties) are the "
    "user's to check locally before acting on any plan."
)

MONEY_HINTS = ("cost", "amount", "value", "penalty", "objective", "delta", "price")
SHARE_HINTS = ("share", "utilisation", "pct", "gap")
DAY_HINTS = ("days",)
