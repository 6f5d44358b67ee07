"""A small SVG writer: the few shapes our drawings use, in a byte-stable form.

Ours rather than a library because the drawings need six primitives, numbers printed
the same way on every machine (two decimals, no exponent) and nothing else; a general
SVG library would add a dependency for less control over the bytes.

Text is set in DejaVu Sans (the face the PDF embeds) with ``textLength`` fixed to the
width the layout measured, so a viewer that substitutes another face still fits each
run into the room the layout gave it.
"""

from __future__ import annotations

from collections.abc import Sequence
from xml.sax.saxutils import escape, quoteattr

Point = tuple[float, float]


def _n(value: float) -> str:
    text = f"{value:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


class SvgWriter:
    def __init__(self, width: float, height: float, title: str = ""):
        self.parts: list[str] = [
            '<?xml version="1.0" encoding="UTF-8"?>\n',
            f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" '
            f'width="{_n(width)}pt" height="{_n(height)}pt" '
            f'viewBox="0 0 {_n(width)} {_n(height)}" '
            f'font-family="DejaVu Sans, Verdana, sans-serif">\n']
        if title:
            self.parts.append(f"<title>{escape(title)}</title>\n")

    @staticmethod
    def _paint(width: float, fill: str | None,
               dash: tuple[float, float] | None = None) -> str:
        stroke = (f' stroke="black" stroke-width="{_n(width)}"' if width > 0
                  else ' stroke="none"')
        if dash:
            stroke += f' stroke-dasharray="{_n(dash[0])} {_n(dash[1])}"'
        return f' fill="{fill or "none"}"{stroke}'

    def open_group(self, name: str, dx: float, dy: float) -> None:
        self.parts.append(f'<g id={quoteattr(name)} transform="translate({_n(dx)} {_n(dy)})">\n')

    def close_group(self) -> None:
        self.parts.append("</g>\n")

    def polyline(self, points: Sequence[Point], width: float,
                 dash: tuple[float, float] | None = None) -> None:
        coords = " ".join(f"{_n(x)},{_n(y)}" for x, y in points)
        self.parts.append(f'<polyline points="{coords}"{self._paint(width, None, dash)}/>\n')

    def polygon(self, points: Sequence[Point], width: float, fill: str | None) -> None:
        coords = " ".join(f"{_n(x)},{_n(y)}" for x, y in points)
        self.parts.append(f'<polygon points="{coords}"{self._paint(width, fill)}/>\n')

    def rect(self, x: float, y: float, width: float, height: float, stroke: float,
             fill: str | None, radius: float = 0.0) -> None:
        rounded = f' rx="{_n(radius)}"' if radius else ""
        self.parts.append(f'<rect x="{_n(x)}" y="{_n(y)}" width="{_n(width)}" '
                          f'height="{_n(height)}"{rounded}{self._paint(stroke, fill)}/>\n')

    def circle(self, cx: float, cy: float, r: float, stroke: float, fill: str | None) -> None:
        self.parts.append(f'<circle cx="{_n(cx)}" cy="{_n(cy)}" r="{_n(r)}"'
                          f'{self._paint(stroke, fill)}/>\n')

    def text(self, text: str, x: float, baseline: float, size: float, bold: bool,
             width: float) -> None:
        weight = ' font-weight="bold"' if bold else ""
        self.parts.append(f'<text x="{_n(x)}" y="{_n(baseline)}" font-size="{_n(size)}"'
                          f'{weight} textLength="{_n(width)}" '
                          f'lengthAdjust="spacingAndGlyphs">{escape(text)}</text>\n')

    def finish(self) -> bytes:
        return ("".join(self.parts) + "</svg>\n").encode("utf-8")
