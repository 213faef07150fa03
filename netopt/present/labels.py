"""Words shared by every output (files, workbook, terminal, report); labels and units are in
:mod:`netopt.data.results_schema`."""

import math

DISCLAIMER = (
    "netopt results are decision support, not decisions. They are only as good as the input data "
    "(demand, costs, capacities, lanes) and the assumptions in the settings. Legal, safety, customs "
    "and labour rules (driving hours, site permits, works councils, consultation duties) are the "
    "user's to check locally before acting on any plan."
)


def comparison_notes(comparison) -> list[str]:
    """One sentence per comparison row that is not a plain answer: a solve with no plan (and why),
    each with its priced alternative; every output of a run prints these beside the table."""
    notes = []
    cols = set(comparison.columns)
    alt_of = {}
    if "alternative_to" in cols:
        alt_of = {str(a): r for a, r in zip(comparison["alternative_to"], comparison.to_dict("records")) if a}
    for r in comparison.to_dict("records"):
        total = r.get("total_cost")
        if total is not None and isinstance(total, float) and not math.isnan(total):
            lost = float(r.get("lost_units") or 0.0)
            if lost > 0.5:
                why = (
                    f"the priced alternative to '{r['alternative_to']}'"
                    if r.get("alternative_to")
                    else "the settings allow lost demand at the penalty"
                )
                notes.append(
                    f"{r['scenario']}: {lost:,.0f} units/yr of demand lost ({r.get('lost_where') or '–'}), "
                    f"worth {float(r.get('lost_value') or 0.0):,.0f}/yr at the penalty; {why}."
                )
            continue
        why = str(r.get("diagnosis") or "").strip() or "no diagnosis available"
        text = f"{r['scenario']}: {r.get('status', 'no plan')} as asked (lost demand not allowed) — {why}."
        alt = alt_of.get(str(r["scenario"]))
        if alt is not None:
            lost = alt.get("lost_units") or 0.0
            text += (
                f" Priced alternative beside it: '{alt['scenario']}', lost demand allowed at the penalty "
                f"({lost:,.0f} units/yr lost)."
            )
        notes.append(text)
    return notes
