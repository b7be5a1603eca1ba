"""A small display list written as SVG text or rasterised to PNG with Pillow.

The copper drawing is plain geometry, so it needs no plotting library: shapes and text are
collected on a :class:`Canvas` (pixel units, y down) and written out directly.  Text widths come
from a fixed table of DejaVu Sans advance widths (the font the SVG asks for and the PNG uses), so
every label's box is known before anything is rendered and the same input always gives the same
bytes.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from pathlib import Path
from xml.sax.saxutils import escape

FONT_FAMILY = "DejaVu Sans, Verdana, Arial, Helvetica, sans-serif"
FONT_FILE = "DejaVuSans.ttf"
#: Ascent and descent of DejaVu Sans in em (its hhea table: 1901 and 483 of 2048 units).
ASCENT_EM = 0.93
DESCENT_EM = 0.24
#: Advance widths of DejaVu Sans for the printable ASCII characters (space to "~"), in em,
#: rounded up to 0.01 em so an estimate is never narrower than the rendered text.
_ASCII_WIDTHS_EM = (
    "0.32 0.41 0.46 0.84 0.64 0.96 0.78 0.28 0.40 0.40 0.50 0.84 0.32 0.37 0.32 0.34 0.64 0.64 0.64 0.64 "
    "0.64 0.64 0.64 0.64 0.64 0.64 0.34 0.34 0.84 0.84 0.84 0.54 1.00 0.69 0.69 0.70 0.78 0.64 0.58 0.78 "
    "0.76 0.30 0.30 0.66 0.56 0.87 0.75 0.79 0.61 0.79 0.70 0.64 0.62 0.74 0.69 0.99 0.69 0.62 0.69 0.40 "
    "0.34 0.40 0.84 0.50 0.50 0.62 0.64 0.55 0.64 0.62 0.36 0.64 0.64 0.28 0.28 0.58 0.28 0.98 0.64 0.62 "
    "0.64 0.64 0.42 0.53 0.40 0.64 0.60 0.82 0.60 0.60 0.53 0.64 0.34 0.64 0.84"
)
CHAR_WIDTH_EM = {chr(32 + i): float(w) for i, w in enumerate(_ASCII_WIDTHS_EM.split())} | {"\u00b0": 0.50}
#: Width assumed for a character outside the table (em): wider than any glyph in it.
UNKNOWN_CHAR_EM = 1.0
#: PNG pixels per canvas unit, and the supersampling used to smooth edges before downscaling.
PNG_SCALE = 1.5
PNG_SUPERSAMPLE = 2


def text_width(text: str, size_px: float) -> float:
    """Estimated advance width of ``text`` in DejaVu Sans at ``size_px`` (never an underestimate
    for the characters in the table)."""
    return size_px * sum(CHAR_WIDTH_EM.get(c, UNKNOWN_CHAR_EM) for c in text)


def text_height(size_px: float) -> float:
    return size_px * (ASCENT_EM + DESCENT_EM)


@dataclass(frozen=True)
class Box:
    """Axis-aligned box in canvas units (y down)."""

    x0: float
    y0: float
    x1: float
    y1: float

    def intersects(self, other: "Box") -> bool:
        return self.x0 < other.x1 and other.x0 < self.x1 and self.y0 < other.y1 and other.y0 < self.y1

    def inside(self, other: "Box") -> bool:
        return self.x0 >= other.x0 and self.y0 >= other.y0 and self.x1 <= other.x1 and self.y1 <= other.y1

    def grow(self, d: float) -> "Box":
        return Box(self.x0 - d, self.y0 - d, self.x1 + d, self.y1 + d)


@dataclass(frozen=True)
class Text:
    x: float  # left edge
    y: float  # top edge
    text: str
    size_px: float
    color: str = "#1a202c"
    background: str | None = None

    @property
    def box(self) -> Box:
        return Box(self.x, self.y, self.x + text_width(self.text, self.size_px), self.y + text_height(self.size_px))


@dataclass(frozen=True)
class Shape:
    """A polygon (``closed``) or polyline; ``dash`` is (on, off) in canvas units."""

    points: tuple[tuple[float, float], ...]
    fill: str | None = None
    stroke: str | None = None
    width: float = 1.0
    closed: bool = True
    dash: tuple[float, float] | None = None
    opacity: float = 1.0


@dataclass(frozen=True)
class Circle:
    cx: float
    cy: float
    r: float
    fill: str | None = None
    stroke: str | None = None
    width: float = 1.0


@dataclass
class Canvas:
    width: float
    height: float
    background: str = "#ffffff"
    items: list = field(default_factory=list)

    def add(self, item) -> None:
        self.items.append(item)

    @property
    def texts(self) -> list[Text]:
        return [i for i in self.items if isinstance(i, Text)]

    def layered(self) -> list:
        """Shapes first, then text on top (a label's background masks the lines behind it)."""
        return [i for i in self.items if not isinstance(i, Text)] + self.texts

    @property
    def bounds(self) -> Box:
        return Box(0.0, 0.0, self.width, self.height)

    # ------------------------------------------------------------------------------- SVG

    def svg(self) -> bytes:
        w, h = _num(self.width), _num(self.height)
        out = [
            '<?xml version="1.0" encoding="UTF-8"?>',
            f'<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}" '
            f'font-family="{FONT_FAMILY}">',
            f'<rect x="0" y="0" width="{w}" height="{h}" fill="{self.background}"/>',
        ]
        for item in self.layered():
            out.append(_SVG_WRITERS[type(item)](item))
        out.append("</svg>")
        return ("\n".join(out) + "\n").encode("utf-8")

    # ------------------------------------------------------------------------------- PNG

    def png(self) -> bytes:
        """The canvas rasterised with Pillow (drawn supersampled, then scaled down)."""
        from PIL import Image, ImageDraw

        k = PNG_SCALE * PNG_SUPERSAMPLE
        size = (PNG_SUPERSAMPLE * round(self.width * PNG_SCALE), PNG_SUPERSAMPLE * round(self.height * PNG_SCALE))
        image = Image.new("RGB", size, self.background)
        draw = ImageDraw.Draw(image, "RGBA")
        for item in self.layered():
            _PNG_PAINTERS[type(item)](draw, item, k)
        image = image.reduce(PNG_SUPERSAMPLE)  # box filter over each supersampled block
        buf = io.BytesIO()
        image.save(buf, format="PNG", optimize=False, compress_level=3)
        return buf.getvalue()


def _num(v: float) -> str:
    text = f"{v:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _pts(points) -> str:
    return " ".join(f"{_num(x)},{_num(y)}" for x, y in points)


def _svg_shape(s: Shape) -> str:
    tag = "polygon" if s.closed else "polyline"
    attrs = [f'points="{_pts(s.points)}"', f'fill="{s.fill or "none"}"']
    if s.stroke:
        attrs.append(f'stroke="{s.stroke}" stroke-width="{_num(s.width)}" stroke-linejoin="miter"')
    if s.dash:
        attrs.append(f'stroke-dasharray="{_num(s.dash[0])} {_num(s.dash[1])}"')
    if s.opacity != 1.0:
        attrs.append(f'opacity="{_num(s.opacity)}"')
    return f"<{tag} {' '.join(attrs)}/>"


def _svg_circle(c: Circle) -> str:
    stroke = f' stroke="{c.stroke}" stroke-width="{_num(c.width)}"' if c.stroke else ""
    return f'<circle cx="{_num(c.cx)}" cy="{_num(c.cy)}" r="{_num(c.r)}" fill="{c.fill or "none"}"{stroke}/>'


def _svg_text(t: Text) -> str:
    parts = []
    if t.background:
        b = t.box.grow(1.0)
        parts.append(f'<rect x="{_num(b.x0)}" y="{_num(b.y0)}" width="{_num(b.x1 - b.x0)}" height="{_num(b.y1 - b.y0)}" fill="{t.background}"/>')
    parts.append(f'<text x="{_num(t.x)}" y="{_num(t.y + ASCENT_EM * t.size_px)}" font-size="{_num(t.size_px)}" '
                 f'fill="{t.color}">{escape(t.text)}</text>')
    return "".join(parts)


_SVG_WRITERS = {Shape: _svg_shape, Circle: _svg_circle, Text: _svg_text}


def _rgba(color: str, opacity: float = 1.0) -> tuple[int, int, int, int]:
    c = color.lstrip("#")
    return (int(c[0:2], 16), int(c[2:4], 16), int(c[4:6], 16), round(255 * opacity))


def _dashes(points, on: float, off: float):
    """Split a polyline into dash segments (the SVG dash pattern, restarted at each vertex-free
    path start as SVG does)."""
    period, phase = on + off, 0.0
    for (x0, y0), (x1, y1) in zip(points, points[1:]):
        length = math.hypot(x1 - x0, y1 - y0)
        t = 0.0
        while t < length:
            in_on = phase < on
            step = min((on - phase) if in_on else (period - phase), length - t)
            if in_on:
                a, b = t / length, (t + step) / length
                yield (x0 + a * (x1 - x0), y0 + a * (y1 - y0)), (x0 + b * (x1 - x0), y0 + b * (y1 - y0))
            t += step
            phase = (phase + step) % period


def _png_shape(draw, s: Shape, k: float) -> None:
    pts = [(x * k, y * k) for x, y in s.points]
    if s.fill and s.closed:
        draw.polygon(pts, fill=_rgba(s.fill, s.opacity))
    if s.stroke:
        width = max(1, round(s.width * k))
        color = _rgba(s.stroke, s.opacity)
        path = pts + [pts[0]] if s.closed else pts
        if s.dash:
            for a, b in _dashes(path, s.dash[0] * k, s.dash[1] * k):
                draw.line([a, b], fill=color, width=width)
        else:
            draw.line(path, fill=color, width=width, joint="curve")


def _png_circle(draw, c: Circle, k: float) -> None:
    box = [(c.cx - c.r) * k, (c.cy - c.r) * k, (c.cx + c.r) * k, (c.cy + c.r) * k]
    draw.ellipse(box, fill=_rgba(c.fill) if c.fill else None, outline=_rgba(c.stroke) if c.stroke else None,
                 width=max(1, round(c.width * k)))


def _png_text(draw, t: Text, k: float) -> None:
    if t.background:
        b = t.box.grow(1.0)
        draw.rectangle([b.x0 * k, b.y0 * k, b.x1 * k, b.y1 * k], fill=_rgba(t.background))
    draw.text((t.x * k, t.y * k), t.text, fill=_rgba(t.color), font=_font(round(t.size_px * k)), anchor="la")


_PNG_PAINTERS = {Shape: _png_shape, Circle: _png_circle, Text: _png_text}

_FONTS: dict[int, object] = {}


def font_path() -> str:
    """DejaVu Sans from the system fonts, else the copy matplotlib ships (found without importing it)."""
    import importlib.util

    name = FONT_FILE
    candidates = [Path("/usr/share/fonts/truetype/dejavu") / name]
    spec = importlib.util.find_spec("matplotlib")
    if spec is not None and spec.submodule_search_locations:
        candidates.append(Path(list(spec.submodule_search_locations)[0]) / "mpl-data" / "fonts" / "ttf" / name)
    for path in candidates:
        if path.is_file():
            return str(path)
    return name  # Pillow then searches the system font folders by name


def _font(size_px: int):
    from PIL import ImageFont

    if size_px not in _FONTS:
        _FONTS[size_px] = ImageFont.truetype(font_path(), size_px)
    return _FONTS[size_px]
