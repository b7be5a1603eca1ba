"""The plugin icon, drawn by code and written as PNG with the standard library only.

The picture is the antenna itself: a ground plane along the bottom, the short and feed legs
rising from it and the arm running right, in copper colour on a dark board.
"""

from __future__ import annotations

import struct
import zlib

BOARD_RGBA = (24, 56, 40, 255)
GROUND_RGBA = (196, 120, 48, 255)
COPPER_RGBA = (232, 152, 64, 255)
FEED_RGBA = (220, 40, 40, 255)
#: The drawing on a 16 x 16 unit canvas: (x0, y0, x1, y1, colour), y down.
SHAPES = (
    (0.0, 12.0, 16.0, 16.0, GROUND_RGBA),  # ground plane
    (2.0, 4.0, 15.0, 5.5, COPPER_RGBA),  # arm
    (2.0, 4.0, 3.5, 12.0, COPPER_RGBA),  # short leg
    (5.5, 4.0, 7.0, 12.0, COPPER_RGBA),  # feed leg
    (4.5, 12.0, 8.0, 16.0, BOARD_RGBA),  # port gap in the ground
    (5.5, 11.0, 7.0, 15.0, FEED_RGBA),  # feed pad and track
)
CANVAS_UNITS = 16.0


def pixels(size_px: int) -> list[list[tuple[int, int, int, int]]]:
    """RGBA rows of the icon at ``size_px`` x ``size_px`` (each pixel sampled at its centre)."""
    scale = CANVAS_UNITS / size_px
    rows = []
    for j in range(size_px):
        row = []
        for i in range(size_px):
            x, y = (i + 0.5) * scale, (j + 0.5) * scale
            colour = BOARD_RGBA
            for x0, y0, x1, y1, rgba in SHAPES:
                if x0 <= x < x1 and y0 <= y < y1:
                    colour = rgba
            row.append(colour)
        rows.append(row)
    return rows


def _chunk(kind: bytes, data: bytes) -> bytes:
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)


def png_bytes(size_px: int) -> bytes:
    """The icon as an 8-bit RGBA PNG (PNG specification, ISO/IEC 15948: IHDR, IDAT, IEND)."""
    raw = b"".join(b"\x00" + bytes(v for px in row for v in px) for row in pixels(size_px))
    header = struct.pack(">IIBBBBB", size_px, size_px, 8, 6, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + _chunk(b"IHDR", header) + _chunk(b"IDAT", zlib.compress(raw, 9)) + _chunk(b"IEND", b"")
