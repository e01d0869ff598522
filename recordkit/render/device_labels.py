"""Device labels: one a device, with its id, kind, room, "replace by" date and a QR code, laid out on
A4 or Letter sheets in a grid of labels whose size is given in millimetres.

The QR code (segno, SVG) holds the device's page address when the site's address (`site_url`) is known,
else the device id. Standalone HTML with inline SVG: it prints the same from a browser or WeasyPrint.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import segno
from markupsafe import Markup

from .checklist import UnitSheet, _env

PAPER_MM = {"a4": (210.0, 297.0), "letter": (215.9, 279.4)}  # portrait; ISO 216 and ANSI/ASME Y14.1
MARGIN_MM = 8.0            # most printers' unprintable edge is 3-6 mm (common practice)
DEFAULT_SIZE_MM = (64.0, 38.0)


class LabelSizeError(ValueError):
    """A label size that is not WIDTHxHEIGHT in millimetres, or that does not fit the paper."""


@dataclass(frozen=True)
class Grid:
    paper: str
    label_w: float
    label_h: float
    columns: int
    rows: int

    @property
    def per_page(self) -> int:
        return self.columns * self.rows


def parse_size(text: str) -> tuple[float, float]:
    """'64x38' (millimetres) -> (64.0, 38.0)."""
    try:
        width, height = (float(part) for part in text.lower().replace("mm", "").split("x"))
    except ValueError:
        raise LabelSizeError(f"label size {text!r}: give WIDTHxHEIGHT in millimetres, e.g. 64x38") from None
    if not (20 <= width <= 200 and 15 <= height <= 280):
        raise LabelSizeError(f"label size {text!r}: between 20x15 and 200x280 mm")
    return width, height


def grid(paper: str, size_mm: tuple[float, float] = DEFAULT_SIZE_MM) -> Grid:
    page_w, page_h = PAPER_MM[paper]
    width, height = size_mm
    columns, rows = math.floor((page_w - 2 * MARGIN_MM) / width), math.floor((page_h - 2 * MARGIN_MM) / height)
    if columns < 1 or rows < 1:
        raise LabelSizeError(f"a {width:g}x{height:g} mm label does not fit {paper} paper inside "
                             f"{MARGIN_MM:g} mm margins")
    return Grid(paper, width, height, columns, rows)


def device_address(site_url: str | None, page_path: str, device_id: str) -> str:
    """What a label's QR code holds: the device's page when the site's address is known, else its id."""
    if not site_url:
        return device_id
    return site_url.rstrip("/") + "/" + page_path.lstrip("/") + f"#device-{device_id}"


def qr_svg(data: str) -> Markup:
    # One fixed mask: choosing the best of eight took three quarters of the time (about 7 ms a code), and any
    # mask is a valid symbol that readers decode (ISO/IEC 18004 §7.8; the tests read every code back).
    return Markup(segno.make(data, error="m", micro=False, mask=0).svg_inline(border=2, omitsize=True, dark="#000"))


def label_rows(sheets: list[UnitSheet], address) -> list[dict]:
    """One label a device in service, in room order; `address(sheet, row)` gives the QR code's text."""
    return [{"id": row.device.id, "uid": row.device.uid, "kind": row.device.kind, "room": row.room,
             "unit": sheet.unit.name, "replace_by": replace_month(row.replace_by), "qr_text": text, "qr": qr_svg(text)}
            for sheet in sheets for row in sheet.rows for text in (address(sheet, row),)]


def replace_month(replace_by: str) -> str:
    """The sheet's replace-by text as the label prints it: YYYY-MM, 'now', or '—' (no fixed life)."""
    return replace_by[:7] if replace_by[:4].isdigit() else replace_by


def labels_html(labels: list[dict], layout: Grid) -> str:
    pages = [labels[i:i + layout.per_page] for i in range(0, len(labels), layout.per_page)] or [[]]
    page_w, page_h = PAPER_MM[layout.paper]
    # the grid is centred on the page
    left = (page_w - layout.columns * layout.label_w) / 2
    top = (page_h - layout.rows * layout.label_h) / 2
    placed = [[(label, left + (i % layout.columns) * layout.label_w, top + (i // layout.columns) * layout.label_h)
               for i, label in enumerate(page)] for page in pages]
    return _env.get_template("labels.html.j2").render(pages=placed, layout=layout, page_w=page_w, page_h=page_h,
                                                     qr_mm=min(layout.label_h - 6, layout.label_w * 0.45))
