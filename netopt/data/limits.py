"""Resource limits on what netopt reads: the largest counts, sizes and message volumes it accepts.

Each limit is stated once here; the readers, validators, CLI and README use these names. Input beyond
a limit is refused with a message naming the limit, never truncated silently.
"""

from __future__ import annotations

MAX_FRONTIER_POINTS = 50
"""Most points on a cost–CO2 frontier (each point is one full solve)."""
