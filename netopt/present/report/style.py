"""Design of the report's charts: colours, matplotlib settings, inline SVG and small drawing helpers."""

from __future__ import annotations

import io
import itertools
import re

import numpy as np

# ----------------------------------------------------------------------------- design

INK = "#1c2a35"
MUTED = "#66737d"
GRID = "#d9dedb"
ACCENT = "#0e6f68"
WARN = "#b5651d"
BAD = "#b3261e"
GOOD = "#2e7d4f"

SITE_STYLE = {
    # key: (marker, face, edge, size pt^2, legend label)
    "supplier": ("^", "#94703f", "white", 70, "supplier"),
    "supplier_idle": ("^", "none", "#94703f", 50, "supplier, not used"),
    "plant": ("s", "#433d7a", "white", 90, "plant"),
    "dc_keep": ("H", ACCENT, "white", 190, "DC kept open"),
    "dc_open": ("H", "#e3a21a", INK, 190, "DC newly opened"),
    "dc_close": ("X", BAD, "white", 120, "DC closed"),
    "dc_idle": ("H", "none", "#8d979e", 150, "candidate DC, not opened"),
    "dc_out": ("X", "#8d979e", "white", 120, "DC out (nothing through it)"),
    "customer": ("o", "#5f86ab", "white", None, "customer (area ∝ demand)"),
    # against the base (difference maps)
    "dc_gained": ("H", "#e3a21a", INK, 190, "DC open here, not in the base"),
    "dc_lost": ("X", BAD, "white", 120, "DC open in the base, not here"),
    "dc_both": ("H", ACCENT, "white", 190, "DC open in both"),
    "customer_short": ("o", "#f3cfca", BAD, None, "customer losing demand"),
}
FLOW_GAINED, FLOW_LOST, FLOW_SAME = "#2f6fb3", "#d4622a", "#b8c0c5"  # difference maps: more, less, unchanged flow

MODE_HINTS = [  # (name fragment, colour): common mode names get familiar colours
    ("ltl", "#e1a82c"),
    ("parcel", "#e1a82c"),
    ("courier", "#e1a82c"),
    ("ocean", "#1f5ea6"),
    ("sea", "#1f5ea6"),
    ("ship", "#1f5ea6"),
    ("rail", "#7c3f98"),
    ("train", "#7c3f98"),
    ("air", "#c0392b"),
    ("barge", "#2a9d8f"),
    ("inland", "#2a9d8f"),
    ("river", "#2a9d8f"),
    ("road", "#d8772a"),
    ("truck", "#d8772a"),
]
FALLBACK = ["#3a7d44", "#9c4f76", "#5a6f8f", "#b38b2d", "#4a9bb0", "#8a5a3c", "#6c7a2a", "#a04545"]

COST_COLOURS = {
    "supply": "#8a6a3d",
    "production": "#433d7a",
    "dc_fixed": "#0e6f68",
    "dc_closing": "#6aa39d",
    "dc_handling": "#9cc7bf",
    "transport": "#d8772a",
    "duties": "#7a4a8f",
    "pipeline_inventory": "#5f86ab",
    "safety_stock": "#a7c1da",
    "carbon": "#5b8a3a",
    "late_delivery": "#d08a3c",
    "unmet_penalty": "#b3261e",
}

# ----------------------------------------------------------------------------- matplotlib helpers


def chart_rc():
    """The matplotlib settings of every chart and map of the report (one place)."""
    return {
        "font.family": "DejaVu Sans",
        "font.size": 9,
        "axes.edgecolor": GRID,
        "axes.labelcolor": INK,
        "xtick.color": MUTED,
        "ytick.color": MUTED,
        "text.color": INK,
        "axes.titleweight": "bold",
        "axes.titlesize": 10,
        "axes.titlelocation": "left",
        "svg.fonttype": "none",
        "svg.hashsalt": "netopt",
        "axes.spines.top": False,
        "axes.spines.right": False,
        "legend.frameon": False,
        # Every text drawn is literal: a name or currency holding "$" (e.g. "$\\frac$") is no TeX.
        "text.parse_math": False,
        "text.usetex": False,
    }


_svg_counter = itertools.count(1)
_PATH_D = re.compile(r'\sd="[^"]*"')
_LONG_NUMBER = re.compile(r"-?\d+\.\d{3,}")


def to_svg(fig) -> str:
    """The figure as an inline <svg> element; ids made unique so several SVGs share one page."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", facecolor="none", edgecolor="none", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg") :]
    # Path coordinates in points to 2 decimals (matplotlib writes 6): a hundredth of a point is
    # far below what a screen or printer shows, and map outlines shrink by a third.
    text = _PATH_D.sub(lambda m: _LONG_NUMBER.sub(lambda n: f"{float(n.group()):.2f}", m.group()), text)
    pre = f"f{next(_svg_counter)}-"
    text = re.sub(r'\bid="', f'id="{pre}', text)
    text = re.sub(r"url\(#", f"url(#{pre}", text)
    text = re.sub(r'xlink:href="#', f'xlink:href="#{pre}', text)
    width = re.search(r'<svg[^>]*?\swidth="([\d.]+)pt"', text)
    text = re.sub(r'(<svg[^>]*?)\swidth="[^"]*"\s+height="[^"]*"', r"\1", text, count=1)
    style = f' style="max-width:{float(width.group(1)) * 4 / 3:.0f}px"' if width else ""
    return text.replace("<svg ", f'<svg role="img"{style} ', 1)


def new_chart(w: float, h: float, left: float = 0.8, right: float = 0.2, top: float = 0.2, bottom: float = 0.5):
    """A figure of w × h inches with one axes and fixed margins (inches); no layout engine (fast)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(w, h))
    ax = fig.add_axes((left / w, bottom / h, max(w - left - right, 0.5) / w, max(h - top - bottom, 0.3) / h))
    return fig, ax


def label_inches(labels, size: float = 8.0) -> float:
    """Room for the widest of ``labels`` at ``size`` points (DejaVu Sans character widths, roughly)."""

    def em(ch: str) -> float:
        return 0.72 if ch.isupper() or ch in "_MW@%" else 0.64 if ch.isdigit() else 0.36 if ch in " .,:;|il'" else 0.58

    longest = max((sum(em(c) for c in str(x)) for x in labels), default=0.0)
    return 0.15 + longest * size / 72.0


def hbars(ax, y, width, left=0.0, colour=INK, height=0.66, edge="white", lw=0.5) -> None:
    """Horizontal bars as one collection (much faster than one patch per bar)."""
    from matplotlib.collections import PolyCollection

    y = np.atleast_1d(np.asarray(y, float))
    width = np.broadcast_to(np.asarray(width, float), y.shape)
    left = np.broadcast_to(np.asarray(left, float), y.shape)
    keep = np.abs(width) > 0
    if not keep.any():
        return
    y, width, left = y[keep], width[keep], left[keep]
    colours = (
        np.broadcast_to(np.asarray(colour, dtype=object), keep.shape)[keep] if not isinstance(colour, str) else colour
    )
    h = height / 2
    verts = [[(x, yy - h), (x + w, yy - h), (x + w, yy + h), (x, yy + h)] for yy, w, x in zip(y, width, left)]
    ax.add_collection(PolyCollection(verts, facecolors=colours, edgecolors=edge, linewidths=lw), autolim=True)


def text_in(ax, *args, **kw):
    """Text inside the axes, left out of the layout computation (fast, and never shrinks the plot)."""
    t = ax.text(*args, **kw)
    t.set_in_layout(False)
    return t


def note_at(ax, *args, **kw):
    t = ax.annotate(*args, **kw)
    t.set_in_layout(False)
    return t


def plain(s) -> str:
    """Text for a chart, as written: ``chart_rc`` turns mathtext off, so "$" needs no escape."""
    return str(s)


def short_number(x: float) -> str:
    """Money or volume in short form: 1.2 M, 35 k (no currency)."""
    if x is None or not np.isfinite(x):
        return "–"
    a = abs(x)
    if a >= 1e9:
        return f"{x / 1e9:.2f} bn"
    if a >= 1e6:
        return f"{x / 1e6:.2f} M"
    if a >= 1e4:
        return f"{x / 1e3:.0f} k"
    if a >= 1e3:
        return f"{x / 1e3:.1f} k"
    return f"{x:.0f}"


def short_ticks(axis) -> None:
    """Tick labels in short form scaled to the axis (12 M, 350 k, 1,200), never repeating a label."""
    import matplotlib.ticker as mt

    def fmt_tick(v, _pos):
        if v == 0:
            return "0"
        lo, hi = axis.get_view_interval()
        top = max(abs(lo), abs(hi))
        if top >= 1e6:
            return f"{v / 1e6:,.6g} M"
        if top >= 1e4:
            return f"{v / 1e3:,.6g} k"
        return f"{v:,.6g}"

    axis.set_major_formatter(mt.FuncFormatter(fmt_tick))


def mode_colours(modes) -> dict[str, str]:
    """A colour per mode name: familiar colours for common names, then a fixed palette."""
    out: dict[str, str] = {}
    spare = iter(FALLBACK * 4)
    for m in sorted(set(map(str, modes))):
        low = m.lower()
        hit = next((c for frag, c in MODE_HINTS if frag in low), None)
        out[m] = hit if hit and hit not in out.values() else next(spare)
    return out
