"""A map picture of the lane network: depots from their coordinates, lanes as lines, routed
tonnes by line width. Drawn with matplotlib on an equirectangular grid whose aspect is corrected
by cos(mid latitude), so depots anywhere on Earth keep their shape near the middle; returns PNG
bytes for the writer to embed.

What it guarantees:

- no network access: the light geographic context (land, coastlines and borders) is Natural
  Earth 1:110m country outlines (public domain) read from the data files the ``countryinfo``
  package ships in its wheel; without that package the map is drawn on its graticule alone;
- depot labels (id and a short name) never overlap one another: each is placed beside its depot
  where its box, measured from matplotlib's own text extent, overlaps no placed label, no other
  depot and stays inside the map; a label that fits nowhere near goes further out on a leader
  line, then as the id alone, and is left off when nothing fits (the caption counts those);
- the legend (lane modes, routed tonnes as line widths with their values, depot kinds) sits
  outside the map, never over the data.
"""

from __future__ import annotations

import functools
import io
import json
import math
import os
import warnings
from collections import Counter

from costing.collector import fewer_collections
from costing.model import Model
from costing.plan.analysis import LaneTotals

MODE_COLOURS = {"road": "#4472C4", "rail": "#C55A11", "sea": "#2E75B6", "inland_water": "#00B0F0",
                "air": "#7030A0"}
KIND_MARKERS = {"hub": ("s", 60), "terminal": ("D", 45), "port": ("^", 55), "customer": ("o", 18),
                "depot": ("o", 30)}
# (face, edge) per depot kind; customers hollow, so they read apart from depots of the same shape
MARKER_COLOURS = {"customer": ("white", "#222222")}
KIND_RANK = {"hub": 0, "terminal": 1, "port": 1, "depot": 2, "customer": 3}

LABEL_LIMIT = 80  # depots labelled at most, by priority (routed tonnes, then kind)
LABEL_FONT_PT = 7
# the picture: inches at 100 dots an inch, shown at its size on the Map sheet and printed on one
# landscape A4 page at about 90 % (labels at 6 pt or more)
FIG_W, FIG_H = 11.0, 7.4
MAP_BOX = (0.065, 0.085, 0.68, 0.85)  # the map's axes in the figure (left, bottom, width, height)
NAME_CHARS = 24  # a depot's name on the map is cut to this many characters
# where a label may go, beside its depot: (direction x, direction y, horizontal, vertical alignment)
_SIDES = [(1, 0, "left", "center"), (1, 1, "left", "bottom"), (1, -1, "left", "top"),
          (-1, 0, "right", "center"), (-1, 1, "right", "bottom"), (-1, -1, "right", "top"),
          (0, 1, "center", "bottom"), (0, -1, "center", "top")]
LAND = "#F4F1E8"
SEA = "#E8F0F6"
BORDER = "#A9A49A"
OUTLINE_SOURCE = "Natural Earth 1:110m country outlines (public domain), for orientation only"


@functools.lru_cache(maxsize=1)
def _country_rings() -> tuple[tuple[tuple[float, float, float, float], tuple[tuple[float, float], ...]], ...]:
    """Every country outline ring shipped in the countryinfo package's data files, as
    ((min lon, min lat, max lon, max lat), ((lon, lat), ...)); empty when the package is absent.
    The files are read as data (the package's code is not imported)."""
    import importlib.util

    try:
        spec = importlib.util.find_spec("countryinfo")
    except (ImportError, ValueError):
        return ()
    if spec is None or not spec.submodule_search_locations:
        return ()
    folder = os.path.join(list(spec.submodule_search_locations)[0], "data")
    rings, seen = [], set()
    try:
        names = sorted(os.listdir(folder))
    except OSError:
        return ()
    for name in names:
        if not name.endswith(".json"):
            continue
        try:
            with open(os.path.join(folder, name), encoding="utf-8") as fh:
                doc = json.load(fh)
        except (OSError, ValueError):
            continue
        geo = doc.get("geoJSON") if isinstance(doc, dict) else None
        for feature in (geo or {}).get("features", []) if isinstance(geo, dict) else []:
            geom = (feature or {}).get("geometry") or {}
            polys = {"Polygon": [geom.get("coordinates")],
                     "MultiPolygon": geom.get("coordinates")}.get(geom.get("type"), [])
            for poly in polys or []:
                for ring in poly or []:
                    try:
                        pts = tuple((float(p[0]), float(p[1])) for p in ring)
                    except (TypeError, ValueError, IndexError):
                        continue
                    if len(pts) < 3 or pts in seen:
                        continue
                    seen.add(pts)
                    xs, ys = [p[0] for p in pts], [p[1] for p in pts]
                    rings.append(((min(xs), min(ys), max(xs), max(ys)), pts))
    return tuple(rings)


def country_outlines(x0: float, y0: float, x1: float, y1: float) -> list[tuple[tuple[float, float], ...]]:
    """Country outline rings (lon, lat in degrees) that reach into the box [x0, x1] x [y0, y1]."""
    return [pts for (a, b, c, d), pts in _country_rings() if c >= x0 and a <= x1 and d >= y0 and b <= y1]


def depot_labels(model: Model) -> dict[str, str]:
    """Map label per depot: its id and a short name. A first word that at least a third of the
    names (three or more) start with, such as the operator's own name, says nothing on a map and
    is left off; names are cut to NAME_CHARS characters."""
    names = {d.depot_id: (d.name or "").strip() for d in model.depots}
    firsts = Counter(n.split()[0] for n in names.values() if len(n.split()) > 1)
    common = None
    if firsts:
        word, count = firsts.most_common(1)[0]
        if count >= 3 and count * 3 >= len(names):
            common = word
    out = {}
    for depot_id, name in names.items():
        words = name.split()
        rest = " ".join(words[1:])
        if common and words and words[0] == common and sum(ch.isalpha() for ch in rest) >= 3:
            name = rest
        if len(name) > NAME_CHARS:
            name = name[: NAME_CHARS - 1].rstrip() + "\u2026"
        out[depot_id] = depot_id if not name or name == depot_id else f"{depot_id} {name}"
    return out


def _nice(x: float) -> float:
    """The largest of 1, 2, 5 x 10^k not above x (x > 0)."""
    k = 10 ** math.floor(math.log10(x))
    return max(m * k for m in (1, 2, 5) if m * k <= x)


def width_samples(top: float) -> list[float]:
    """Tonnes shown in the line-width legend: the largest routed, and two round values below it."""
    if top <= 0:
        return []
    out = [top]
    for share in (0.5, 0.2):
        v = _nice(top * share)
        if v not in out and v < top:
            out.append(v)
    return out


def line_width(tonnes: float, top: float) -> float:
    """Line width in points of a lane carrying `tonnes` when the busiest lane carries `top`."""
    return 1.0 + 9.0 * tonnes / (top or 1.0)


def _overlaps(a, b, pad: float = 1.0) -> bool:
    return not (a.x1 + pad <= b.x0 or b.x1 + pad <= a.x0 or a.y1 + pad <= b.y0 or b.y1 + pad <= a.y0)


def place_labels(fig, ax, pos: dict[str, tuple[float, float]], labels: dict[str, str], order: list[str]):
    """Place depot labels in priority `order` so that no two overlap (boxes measured with the
    renderer), none covers another depot's marker and all stay inside the axes. Returns (placed
    Text artists, ids left unlabelled). Call after the axes' limits and aspect are final."""
    import numpy as np
    from matplotlib.transforms import offset_copy

    renderer = fig.canvas.get_renderer()
    inside = ax.get_window_extent(renderer)
    marker_r = 3.5 * fig.dpi / 72
    ids = list(pos)
    at = {d: i for i, d in enumerate(ids)}
    centres = ax.transData.transform(np.array([pos[d] for d in ids], dtype=float))
    mx, my = centres[:, 0], centres[:, 1]

    def covers_a_marker(box, own: int) -> bool:
        hit = ((mx + marker_r > box.x0) & (mx - marker_r < box.x1)
               & (my + marker_r > box.y0) & (my - marker_r < box.y1))
        hit[own] = False
        return bool(hit.any())

    placed, boxes, skipped = [], [], []
    style = {"fontsize": LABEL_FONT_PT, "zorder": 6, "color": "#1A1A1A", "clip_on": False,
             "bbox": {"boxstyle": "square,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.7}}
    for d in order:
        x, y = pos[d]
        done = False
        attempts = [(labels[d], 4, False), (labels[d], 14, True), (labels[d], 26, True)]
        if labels[d] != d:
            attempts += [(d, 4, False), (d, 14, True)]
        for text, dist, leader in attempts:
            for sx, sy, ha, va in _SIDES:
                k = dist / math.hypot(sx, sy)
                dx, dy = sx * k, sy * k
                shifted = offset_copy(ax.transData, fig, dx, dy, "points")
                t = ax.text(x, y, text, ha=ha, va=va, transform=shifted, **style)
                box = t.get_window_extent(renderer)
                ok = (box.x0 >= inside.x0 and box.x1 <= inside.x1 and box.y0 >= inside.y0
                      and box.y1 <= inside.y1
                      and not any(_overlaps(box, b) for b in boxes)
                      and not covers_a_marker(box, at[d]))
                if not ok:
                    t.remove()
                    continue
                t.set_gid("depot-label")
                placed.append(t)
                boxes.append(box)
                if leader:
                    px, py = centres[at[d]]
                    px, py = px + dx * fig.dpi / 72, py + dy * fig.dpi / 72
                    ax_pt = ax.transData.inverted().transform((px, py))
                    ax.plot([x, ax_pt[0]], [y, ax_pt[1]], color="#555555", lw=0.5, zorder=5)
                done = True
                break
            if done:
                break
        if not done:
            skipped.append(d)
    return placed, skipped


def _degrees(axis: str):
    def fmt(v, _pos=None):
        hemi = ("E", "W") if axis == "x" else ("N", "S")
        v = round(v, 6)
        s = f"{abs(v):g}\u00b0"
        return s + (hemi[0] if v > 0 else hemi[1] if v < 0 else "")
    return fmt


def drawable(model: Model) -> bool:
    """Whether the map has anything to draw: two or more depots with coordinates (`draw_map`
    returns None otherwise)."""
    return sum(d.latitude is not None and d.longitude is not None for d in model.depots) >= 2


def start_map(model: Model, lanes: list[LaneTotals], title: str, fork: bool = False):
    """The map for `write_costed`: None when there is nothing to draw (`drawable`); with `fork`,
    a `costing.aside.Job` drawing it in a second process when forking is available (the
    sheets are written meanwhile; the Map sheet collects it); else the PNG bytes, drawn now."""
    from costing import aside

    if not drawable(model):
        return None
    job = aside.start(draw_map, model, lanes, title, fork=fork)
    return job if job.forked else job.result()


def map_figure(model: Model, lanes: list[LaneTotals], title: str):
    """The map's matplotlib figure: (figure, axes, legend, placed label Texts, unlabelled depot
    ids), or None when fewer than two depots have coordinates. Close the figure when done."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection, PolyCollection
    from matplotlib.lines import Line2D
    from matplotlib.ticker import FuncFormatter

    pos = {d.depot_id: (d.longitude, d.latitude) for d in model.depots
           if d.latitude is not None and d.longitude is not None}
    if len(pos) < 2:
        return None
    used = {u.lane_id: u for u in lanes}
    top = max((u.tonnes for u in lanes), default=0.0)
    xs, ys = [p[0] for p in pos.values()], [p[1] for p in pos.values()]
    mid_lat = (min(ys) + max(ys)) / 2
    aspect = 1 / max(0.2, math.cos(math.radians(mid_lat)))
    fig = plt.figure(figsize=(FIG_W, FIG_H), dpi=100)
    box = MAP_BOX
    ax = fig.add_axes(box)
    # limits that hold every depot with a margin and give the axes box the aspect: one degree of
    # latitude drawn `aspect` times as long as one degree of longitude
    w_px, h_px = box[2] * FIG_W, box[3] * FIG_H
    pad = 0.06 * max(max(xs) - min(xs), (max(ys) - min(ys)) * aspect, 0.05)
    dx = max(max(xs) - min(xs) + 2 * pad, (max(ys) - min(ys) + 2 * pad / aspect) * aspect * w_px / h_px)
    dy = dx * h_px / (aspect * w_px)
    cx, cy = (min(xs) + max(xs)) / 2, (min(ys) + max(ys)) / 2
    vx0, vx1, vy0, vy1 = cx - dx / 2, cx + dx / 2, cy - dy / 2, cy + dy / 2
    ax.set_xlim(vx0, vx1)
    ax.set_ylim(vy0, vy1)
    ax.set_autoscale_on(False)
    outlines = country_outlines(vx0, vy0, vx1, vy1)
    if outlines:
        ax.set_facecolor(SEA)
        ax.add_collection(PolyCollection([list(r) for r in outlines], facecolors=LAND, edgecolors=BORDER,
                                         linewidths=0.6, zorder=0))
    ax.grid(True, lw=0.3, alpha=0.5, color="#808080", zorder=0.5)
    ax.xaxis.set_major_formatter(FuncFormatter(_degrees("x")))
    ax.yaxis.set_major_formatter(FuncFormatter(_degrees("y")))
    ax.tick_params(labelsize=8)

    # one collection per style: fast for networks of thousands of lanes
    closed, plain, routed = [], {}, {}
    for lane in model.lanes:
        if lane.from_depot not in pos or lane.to_depot not in pos:
            continue
        seg = [pos[lane.from_depot], pos[lane.to_depot]]
        if not lane.open:
            closed.append(seg)
            continue
        plain.setdefault(lane.mode, []).append(seg)
        u = used.get(lane.lane_id)
        if u is not None and u.tonnes > 0:
            routed.setdefault(lane.mode, ([], []))
            routed[lane.mode][0].append(seg)
            routed[lane.mode][1].append(line_width(u.tonnes, top))
    if closed:
        ax.add_collection(LineCollection(closed, colors="#8C8C8C", linewidths=0.8, linestyles=":", zorder=1))
    for mode, segs in plain.items():
        ax.add_collection(LineCollection(segs, colors=MODE_COLOURS.get(mode, "#808080"), linewidths=0.6,
                                         alpha=0.45, linestyles="-" if mode == "road" else "--", zorder=1))
    for mode, (segs, widths) in routed.items():
        ax.add_collection(LineCollection(segs, colors=MODE_COLOURS.get(mode, "#808080"), linewidths=widths,
                                         alpha=0.7, capstyle="round", zorder=2))
    many = len(pos) > LABEL_LIMIT
    for kind, (marker, size) in KIND_MARKERS.items():
        pts = [pos[d.depot_id] for d in model.depots if d.depot_id in pos and d.kind == kind]
        if pts:
            face, edge = MARKER_COLOURS.get(kind, ("#222222", "white"))
            ax.scatter([x for x, _y in pts], [y for _x, y in pts], s=size / 3 if many else size,
                       marker=marker, facecolors=face, edgecolors=edge, linewidths=0.8, zorder=3)
    ax.set_title(title, fontsize=11)

    # legend: outside the map, at its right
    def header(text):
        return Line2D([], [], ls="", marker="", label=text)

    handles = [header("Lanes")]
    handles += [Line2D([], [], color=c, lw=3, label=m.replace("_", " ")) for m, c in MODE_COLOURS.items()
                if any(ln.mode == m for ln in model.lanes)]
    handles.append(Line2D([], [], color="#808080", lw=0.6, alpha=0.6, label="open, not routed"))
    if closed:
        handles.append(Line2D([], [], color="#8C8C8C", lw=1, ls=":", label="closed"))
    samples = width_samples(top)
    if samples:
        handles.append(header("Routed tonnes (line width)"))
        handles += [Line2D([], [], color="#606060", lw=line_width(t, top), alpha=0.7, solid_capstyle="butt",
                           label=f"{t:,.0f} t" + (" (busiest lane)" if i == 0 else ""))
                    for i, t in enumerate(samples)]
    handles.append(header("Depots"))
    kinds = {d.kind for d in model.depots if d.depot_id in pos}
    handles += [Line2D([], [], marker=mk, ls="", markerfacecolor=MARKER_COLOURS.get(k, ("#222222",))[0],
                       markeredgecolor="#222222", label=k)
                for k, (mk, _s) in KIND_MARKERS.items() if k in kinds]
    legend = ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.03, 1.0), borderaxespad=0.0,
                       fontsize=8, handlelength=3.2, frameon=False)
    heads = {"Lanes", "Routed tonnes (line width)", "Depots"}
    for text in legend.get_texts():
        if text.get_text() in heads:
            text.set_fontweight("bold")

    # labels, busiest depots first
    through: dict[str, float] = {}
    for u in lanes:
        for d in (u.from_depot, u.to_depot):
            through[d] = through.get(d, 0.0) + u.tonnes
    kind_of = {d.depot_id: d.kind for d in model.depots}
    order = sorted(pos, key=lambda d: (-through.get(d, 0.0), KIND_RANK.get(kind_of.get(d, ""), 4), d))
    labels = depot_labels(model)
    placed, skipped = place_labels(fig, ax, pos, labels, order[:LABEL_LIMIT])
    skipped += order[LABEL_LIMIT:]
    notes = []
    if outlines:
        notes.append(f"Land and borders: {OUTLINE_SOURCE}.")
    if skipped:
        notes.append(f"{len(skipped)} depot label(s) left off where they would overlap "
                     f"(busiest depots labelled first).")
    notes.append("Lines join depots straight; they are not road geometry.")
    fig.text(0.06, 0.02, " ".join(notes), fontsize=7, color="#555555", ha="left", va="bottom")
    return fig, ax, legend, placed, skipped


@fewer_collections()  # costing.collector
def draw_map(model: Model, lanes: list[LaneTotals], title: str) -> bytes | None:
    """PNG bytes of the network map, or None when no two depots have coordinates."""
    import matplotlib.pyplot as plt

    with warnings.catch_warnings():  # names in scripts the plot font lacks draw as boxes
        warnings.filterwarnings("ignore", message="Glyph .* missing")
        drawn = map_figure(model, lanes, title)
        if drawn is None:
            return None
        fig = drawn[0]
        buf = io.BytesIO()
        fig.savefig(buf, format="png", metadata={"Software": None}, bbox_inches="tight", pad_inches=0.15)
    plt.close(fig)
    return buf.getvalue()
