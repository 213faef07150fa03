"""Resource limits on what netopt reads: the largest counts, sizes and message volumes it accepts.

Each limit is stated once here; the readers, validators, CLI and README use these names. Input beyond
a limit is refused with a message naming the limit, never truncated silently.
"""

from __future__ import annotations

# --------------------------------------------------------------------------- studies

MAX_FRONTIER_POINTS = 50
"""Most points on a cost–CO2 frontier (each point is one full solve)."""

MAX_SCENARIOS = 1_000
"""Most scenarios in one case (each is at least one solve, and a run keeps every result)."""

MAX_CLUSTER_POINTS = 3_000
"""Most customer locations ``netopt sites`` clusters (its p-median start holds a locations × locations
distance matrix: 72 MB at this size)."""

MAX_WORKERS = 256
"""Most local worker processes a sweep starts (each holds its own copy of the model)."""

CONNECT_TIMEOUT_S = 10.0
"""Default time to reach a Dask scheduler before the sweep gives up (s)."""

# --------------------------------------------------------------------------- numbers in tables and settings

MAX_MAGNITUDE = 1e12
"""Largest number any number column or setting accepts unless it declares a smaller maximum (units of
the column: units/year, currency, kg, km, money, ...).  Beyond it the model's numbers leave the range a
solver works in (HiGHS refuses matrix entries of 1e15 or more, its ``large_matrix_value``, and reads bounds
and costs of 1e20 or more as infinite); blank or ``inf`` still means "no limit" where a column allows it."""

MAX_DAYS = 36_500.0
"""Largest number of days any day-valued column or setting accepts (100 years)."""

MAX_TIME_LIMIT_S = 1e7
"""Longest solver time limit, in seconds (about 116 days)."""

MAX_THREADS = 256
"""Most solver threads."""

MAX_SAFETY_STOCK_BREAKPOINTS = 200
"""Most breakpoints of a DC's piecewise-linear safety-stock curve (each adds variables per DC and product)."""

MAX_SITE_COUNT = 1_000_000
"""Largest site count a setting may name (open DCs, active suppliers): no table holds more rows."""

# --------------------------------------------------------------------------- size of what is read

MAX_TABLE_ROWS = MAX_SITE_COUNT
"""Most data rows in one table (CSV file or sheet), and most rows a sheet may declare."""

MAX_TABLE_COLUMNS = 16_384
"""Most columns a table or sheet may hold or declare: the widest sheet a workbook holds (column XFD).  The
lane matrix has one column per destination; the other tables have a few dozen at most."""

MAX_CELL_CHARS = 10_000
"""Most characters in one cell (a site code, a number, a note)."""

MAX_CSV_FILE_BYTES = 500_000_000
"""Largest CSV table file, in bytes (500 MB)."""

MAX_TOML_FILE_BYTES = 20_000_000
"""Largest ``settings.toml`` or ``scenarios.toml``, in bytes (20 MB)."""

MAX_WORKBOOK_UNCOMPRESSED_BYTES = 500_000_000
"""Largest total uncompressed size of a workbook's parts (the sum of its zip members), in bytes (500 MB);
checked from the zip directory before anything is decompressed."""

# --------------------------------------------------------------------------- messages

MAX_ERRORS_PER_COLUMN = 20
"""Most lines a problem report prints for one table, column and kind of message; the rest are counted."""

MAX_PRINTED_PROBLEMS = 200
"""Most problem lines a report prints in all (errors first); the rest are counted."""
