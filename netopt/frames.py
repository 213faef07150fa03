"""``netopt.frames.make_case``: a case from pandas DataFrames (defined in :mod:`netopt.data.frames`)."""

from netopt.data.frames import make_case

__all__ = ["make_case"]
