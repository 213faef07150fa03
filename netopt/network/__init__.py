"""Network stage: distances, lanes, the arc table.

Importing it registers its checks with the data stage's validation (demand reachability through
:mod:`netopt.network.lanes`, plausibility warnings through :mod:`netopt.network.plausibility`).
"""

from netopt.network import lanes, plausibility  # noqa: F401 (they register their checks)
