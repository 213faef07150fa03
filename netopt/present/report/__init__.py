"""The analyst's report: one self-contained HTML file (see :mod:`netopt.present.report.page`).

Modules, each importing only those listed before it: ``style`` (colours, SVG helpers),
``land`` (coastlines and borders), ``map_layout`` (projection and frame), ``map`` (the
network and difference maps), ``charts`` (the other charts), ``tables`` (HTML tables), ``page``
(the sections, :func:`render_report` and :func:`write_report`).
"""

from netopt.present.report.map_layout import map_layout, project, site_table
from netopt.present.report.page import render_report, write_report

__all__ = ["map_layout", "project", "render_report", "site_table", "write_report"]
