"""The Map sheet: the network map picture drawn by costing.sheets.map."""

from __future__ import annotations

from costing.sheets.formats import Writer


def write_map(w: Writer, ws, png: bytes) -> None:
    """Place the network map picture (PNG bytes) on the Map sheet, with its caption."""
    import io

    ws.write_string(0, 0, "Lane network and routed tonnes (line width), drawn from depot coordinates "
                    "over coarse land and borders for orientation.", w.f["bold"])
    ws.insert_image(2, 0, "network-map.png", {"image_data": io.BytesIO(png)})
