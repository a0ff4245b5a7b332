"""A map picture of the lane network: depots from their coordinates, lanes as lines, routed
tonnes by line width. Drawn with matplotlib (no base map, no network access); returns PNG bytes
for the writer to embed."""

from __future__ import annotations

import io
import math
import warnings

from costing.model import Model
from costing.plan.analysis import LaneTotals

MODE_COLOURS = {"road": "#4472C4", "rail": "#C55A11", "sea": "#2E75B6", "inland_water": "#00B0F0",
                "air": "#7030A0"}
KIND_MARKERS = {"hub": ("s", 60), "terminal": ("D", 45), "port": ("^", 55), "customer": ("o", 18),
                "depot": ("o", 30)}


def draw_map(model: Model, lanes: list[LaneTotals], title: str) -> bytes | None:
    """PNG bytes of the network map, or None when no two depots have coordinates."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.lines import Line2D

    pos = {d.depot_id: (d.longitude, d.latitude) for d in model.depots
           if d.latitude is not None and d.longitude is not None}
    if len(pos) < 2:
        return None
    used = {u.lane_id: u for u in lanes}
    top = max((u.tonnes for u in lanes), default=0.0) or 1.0
    mid_lat = sum(y for _x, y in pos.values()) / len(pos)
    fig, ax = plt.subplots(figsize=(10, 8), dpi=100)
    from matplotlib.collections import LineCollection

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
        if u is not None:
            routed.setdefault(lane.mode, ([], []))
            routed[lane.mode][0].append(seg)
            routed[lane.mode][1].append(1.0 + 9.0 * u.tonnes / top)
    if closed:
        ax.add_collection(LineCollection(closed, colors="#A0A0A0", linewidths=0.8, linestyles=":", zorder=1))
    for mode, segs in plain.items():
        ax.add_collection(LineCollection(segs, colors=MODE_COLOURS.get(mode, "#808080"), linewidths=0.6,
                                         alpha=0.35, linestyles="-" if mode == "road" else "--", zorder=1))
    for mode, (segs, widths) in routed.items():
        ax.add_collection(LineCollection(segs, colors=MODE_COLOURS.get(mode, "#808080"), linewidths=widths,
                                         alpha=0.75, capstyle="round", zorder=2))
    labelled = len(pos) <= 80
    for kind, (marker, size) in KIND_MARKERS.items():
        xs = [pos[d.depot_id] for d in model.depots if d.depot_id in pos and d.kind == kind]
        if xs:
            ax.scatter([x for x, _y in xs], [y for _x, y in xs], s=size if labelled else size / 3,
                       marker=marker, color="#222222", zorder=3)
    if labelled:
        for d in model.depots:
            if d.depot_id in pos:
                ax.annotate(d.depot_id, pos[d.depot_id], xytext=(3, 3), textcoords="offset points",
                            fontsize=7, zorder=4)
    ax.autoscale()
    ax.set_aspect(1 / max(0.2, math.cos(math.radians(mid_lat))))
    ax.set_xlabel("longitude (degrees)")
    ax.set_ylabel("latitude (degrees)")
    ax.set_title(title, fontsize=11)
    handles = [Line2D([], [], color=c, lw=3, label=m) for m, c in MODE_COLOURS.items()
               if any(ln.mode == m for ln in model.lanes)]
    handles.append(Line2D([], [], color="#A0A0A0", lw=1, ls=":", label="closed"))
    handles += [Line2D([], [], marker=mk, ls="", color="#222222", label=k)
                for k, (mk, _s) in KIND_MARKERS.items() if any(d.kind == k for d in model.depots)]
    ax.legend(handles=handles, loc="best", fontsize=8, title=f"line width: routed tonnes (max {top:,.0f} t)",
              title_fontsize=8)
    ax.grid(True, lw=0.3, alpha=0.5)
    buf = io.BytesIO()
    with warnings.catch_warnings():  # names in scripts the plot font lacks draw as boxes
        warnings.filterwarnings("ignore", message="Glyph .* missing")
        fig.tight_layout()
        fig.savefig(buf, format="png", metadata={"Software": None})
    plt.close(fig)
    return buf.getvalue()
