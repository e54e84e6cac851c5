"""Rondo's app icons: a loop of six stops around a house, drawn as PNG files by the project.

Run ``python -m webapp.icon_art [folder]`` to redraw them (default ``static/icons``). The art is
made of signed-distance shapes with one pixel of edge softening, so any size comes out crisp.
"""

from __future__ import annotations

import math
import struct
import sys
import zlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

__all__ = ["IconSpec", "ICONS", "ICON_DIR", "SAFE_ZONE_RADIUS", "draw", "png_bytes",
           "write_icons"]

ICON_DIR = Path(__file__).resolve().parent.parent / "static" / "icons"

# The palette of the page (static/rondo.css and the manifest's theme colour).
_GREEN = (0x10, 0x3B, 0x32)  # theme_color: the deep green of the masthead bar
_PAPER = (0xFF, 0xFD, 0xF6)  # --paper
_LOOP = (0x6F, 0xD3, 0xB3)  # the tab bar's highlight green
_HOUSE = (0xF4, 0xC5, 0x42)  # the home square of static/icon.svg

# A maskable icon keeps everything that matters inside a centred circle of radius 40 % of
# its size (W3C Web App Manifest, "icon masks" / safe zone; from memory).
SAFE_ZONE_RADIUS = 0.40
_RING_R = 0.29  # centre of the loop to the centre of each stop, in icon widths
_DOT_R = 0.058
_STOPS = 6
_CORNER_R = 0.2  # rounded corners of the non-maskable icons (common practice, no source)


@dataclass(frozen=True)
class IconSpec:
    """One icon file: name, square size in pixels, manifest purpose, full-bleed or rounded."""

    filename: str
    size_px: int
    purpose: str
    full_bleed: bool


ICONS = (
    IconSpec("rondo-192.png", 192, "any", full_bleed=False),
    IconSpec("rondo-512.png", 512, "any", full_bleed=False),
    IconSpec("rondo-maskable-512.png", 512, "maskable", full_bleed=True),
    # iOS paints transparent corners black, so the home-screen icon is opaque to the edge.
    IconSpec("rondo-touch-180.png", 180, "apple-touch-icon", full_bleed=True),
)


def _rounded_box(x, y, cx, cy, half_w, half_h, radius):
    qx = np.abs(x - cx) - half_w + radius
    qy = np.abs(y - cy) - half_h + radius
    outside = np.hypot(np.maximum(qx, 0), np.maximum(qy, 0))
    return outside + np.minimum(np.maximum(qx, qy), 0) - radius


def _circle(x, y, cx, cy, radius):
    return np.hypot(x - cx, y - cy) - radius


def _roof(x, y):
    """A triangle by its three edges' half-planes: exact inside, close enough at the rim."""
    apex_y, base_y, half_base = 0.335, 0.475, 0.15
    slope = math.hypot(half_base, base_y - apex_y)
    nx, ny = (base_y - apex_y) / slope, -half_base / slope
    left = nx * (0.5 - x) + ny * (y - apex_y)
    right = nx * (x - 0.5) + ny * (y - apex_y)
    return np.maximum(np.maximum(left, right), y - base_y)


def draw(size_px: int, *, full_bleed: bool) -> np.ndarray:
    """The icon as a (size, size, 4) array of 8-bit straight-alpha RGBA."""
    centres = (np.arange(size_px) + 0.5) / size_px
    x, y = np.meshgrid(centres, centres)
    px = 1.0 / size_px
    colour = np.zeros((size_px, size_px, 3))
    alpha = np.zeros((size_px, size_px))

    def paint(distance, rgb):
        nonlocal alpha
        cover = np.clip(0.5 - distance / px, 0.0, 1.0)
        colour[:] = colour * (1 - cover[..., None]) + np.array(rgb) / 255.0 * cover[..., None]
        alpha = alpha * (1 - cover) + cover

    if full_bleed:
        paint(np.full_like(x, -1.0), _GREEN)
    else:
        paint(_rounded_box(x, y, 0.5, 0.5, 0.5, 0.5, _CORNER_R), _GREEN)
    paint(np.abs(_circle(x, y, 0.5, 0.5, _RING_R)) - 0.016, _LOOP)
    for k in range(_STOPS):
        angle = -math.pi / 2 + k * 2 * math.pi / _STOPS
        paint(_circle(x, y, 0.5 + _RING_R * math.cos(angle), 0.5 + _RING_R * math.sin(angle),
                      _DOT_R), _PAPER)
    paint(np.minimum(_rounded_box(x, y, 0.5, 0.56, 0.1, 0.09, 0.012), _roof(x, y)), _HOUSE)
    paint(_rounded_box(x, y, 0.5, 0.605, 0.03, 0.045, 0.008), _GREEN)
    # Colour was blended as if opaque; divide back to straight alpha where anything shows.
    straight = np.where(alpha[..., None] > 0, colour / np.maximum(alpha[..., None], 1e-9), 0)
    rgba = np.dstack([straight, alpha])
    return np.round(np.clip(rgba, 0, 1) * 255).astype(np.uint8)


def _chunk(kind: bytes, data: bytes) -> bytes:
    # Length, type, data, CRC-32 over type and data (PNG, ISO/IEC 15948 §5.3).
    return struct.pack(">I", len(data)) + kind + data + struct.pack(
        ">I", zlib.crc32(kind + data) & 0xFFFFFFFF)


def png_bytes(rgba: np.ndarray) -> bytes:
    """An 8-bit RGBA PNG (colour type 6), every row with filter type 0."""
    height, width = rgba.shape[:2]
    header = struct.pack(">IIBBBBB", width, height, 8, 6, 0, 0, 0)
    raw = b"".join(b"\x00" + rgba[row].tobytes() for row in range(height))
    return (b"\x89PNG\r\n\x1a\n" + _chunk(b"IHDR", header)
            + _chunk(b"IDAT", zlib.compress(raw, 9)) + _chunk(b"IEND", b""))


def write_icons(directory: str | Path = ICON_DIR) -> list[Path]:
    """Draw every icon of ``ICONS`` into ``directory``; return the paths written."""
    folder = Path(directory)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for spec in ICONS:
        path = folder / spec.filename
        path.write_bytes(png_bytes(draw(spec.size_px, full_bleed=spec.full_bleed)))
        written.append(path)
    return written


if __name__ == "__main__":
    for written_path in write_icons(sys.argv[1] if len(sys.argv) > 1 else ICON_DIR):
        print(written_path)
