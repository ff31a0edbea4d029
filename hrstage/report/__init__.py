"""Self-contained HTML report of a tagged catalogue (no network, no scripts).

See ``docs/plot.md`` (section "Report") for its contents. Labels are indicative and do not
replace a spectroscopic analysis; the report says so in its cautions.
"""

from .html import DEFAULT_MAX_ROWS, INFORMATIONAL_BITS, render_report, write_report

__all__ = ["render_report", "write_report", "DEFAULT_MAX_ROWS", "INFORMATIONAL_BITS"]
