"""Words shared by every output (files, workbook, terminal, report); labels and units are in
:mod:`netopt.data.results_schema`."""

DISCLAIMER = (
    "netopt results are decision support, not decisions. They are only as good as the input data "
    "(demand, costs, capacities, lanes) and the assumptions in the settings. Legal, safety, customs "
    "and labour rules (driving hours, site permits, works councils, consultation duties) are the "
    "user's to check locally before acting on any plan."
)
