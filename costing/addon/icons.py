"""Draw the Route costing toolbar icons (our own drawing, with Pillow):
``python -m costing.addon.icons`` rewrites ``oxt/icons/*.png``.

Guarantees: each command in `ICONS` gets a square RGBA PNG per size in `SIZES` (LibreOffice's
small and large toolbar sizes, in pixels), named ``NAME-SIZE.png``, drawn at 8 times the size and
scaled down so edges are smooth. The PNGs are committed; the build copies them into the .oxt and
``Addons.xcu`` names them by the same names.
"""

from __future__ import annotations

import os

from PIL import Image, ImageDraw

HERE = os.path.dirname(os.path.abspath(__file__))
FOLDER = os.path.join(HERE, "oxt", "icons")
SIZES = (16, 26)  # px: LibreOffice's small and large toolbar icons
SCALE = 8  # drawn this many times larger, then scaled down

SHEET, GRID, HEAD = (255, 255, 255, 255), (120, 128, 140, 255), (196, 212, 230, 255)
GREEN, ROUTE, STOP, EDGE = (32, 140, 64, 255), (36, 96, 176, 255), (220, 120, 24, 255), (60, 60, 60, 255)


def _sheet(d: ImageDraw.ImageDraw, n: float) -> None:
    """A small worksheet: white page, shaded header row, grid lines (n: canvas size in px)."""
    u = n / 16
    box = (1 * u, 1.5 * u, 14.5 * u, 14.5 * u)
    d.rectangle(box, fill=SHEET, outline=GRID, width=max(1, round(u)))
    d.rectangle((box[0], box[1], box[2], box[1] + 3 * u), fill=HEAD, outline=GRID, width=max(1, round(u)))
    for x in (5.5, 10):
        d.line((x * u, box[1], x * u, box[3]), fill=GRID, width=max(1, round(0.6 * u)))
    for y in (7.5, 11):
        d.line((box[0], y * u, box[2], y * u), fill=GRID, width=max(1, round(0.6 * u)))


def draw_check(n: int) -> Image.Image:
    """Check this workbook: a worksheet with a green tick over it."""
    big = n * SCALE
    im = Image.new("RGBA", (big, big), (0, 0, 0, 0))
    d = ImageDraw.Draw(im)
    _sheet(d, big)
    u = big / 16
    tick = [(4.5 * u, 9.5 * u), (7.5 * u, 12.8 * u), (14.5 * u, 3.5 * u)]
    d.line(tick, fill=(255, 255, 255, 255), width=round(4.2 * u), joint="curve")
    d.line(tick, fill=GREEN, width=round(2.6 * u), joint="curve")
    return im.resize((n, n), Image.LANCZOS)


def draw_cost(n: int) -> Image.Image:
    """Cost this workbook: a route of three legs between four depots, and a coin."""
    big = n * SCALE
    im = Image.new("RGBA", (big, big), (0, 0, 0, 0))
    d = ImageDraw.Draw(im)
    u = big / 16
    stops = [(2.5 * u, 13 * u), (6 * u, 6.5 * u), (10.5 * u, 9.5 * u), (13.5 * u, 2.5 * u)]
    d.line(stops, fill=ROUTE, width=round(1.8 * u), joint="curve")
    for x, y in stops:
        r = 1.7 * u
        d.ellipse((x - r, y - r, x + r, y + r), fill=STOP, outline=EDGE, width=max(1, round(0.5 * u)))
    # the coin, bottom right
    cx, cy, r = 11.5 * u, 12 * u, 3.6 * u
    d.ellipse((cx - r, cy - r, cx + r, cy + r), fill=(236, 196, 64, 255), outline=(150, 110, 20, 255),
              width=round(0.8 * u))
    d.line((cx, cy - 2 * u, cx, cy + 2 * u), fill=(150, 110, 20, 255), width=round(0.9 * u))
    return im.resize((n, n), Image.LANCZOS)


ICONS = {"check": draw_check, "cost": draw_cost}


def icon_files() -> list[str]:
    """The icon file names, relative to the extension's root (``icons/NAME-SIZE.png``)."""
    return [f"icons/{name}-{n}.png" for name in ICONS for n in SIZES]


def write_icons(folder: str = FOLDER) -> list[str]:
    """Draw every icon into `folder`; returns the paths written."""
    os.makedirs(folder, exist_ok=True)
    written = []
    for name, draw in ICONS.items():
        for n in SIZES:
            path = os.path.join(folder, f"{name}-{n}.png")
            draw(n).save(path, optimize=True)
            written.append(path)
    return written


if __name__ == "__main__":
    for p in write_icons():
        print(p)
