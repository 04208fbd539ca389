"""A4 PDF documents with fpdf2: a standard heading block, sections, tables and charts."""
from __future__ import annotations

import io
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import matplotlib
from fpdf import FPDF
from fpdf.fonts import FontFace

# DejaVu ships with matplotlib, so µ, ≤ and every name print on any machine without system fonts.
FONT_DIR = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
NOT_OFFICIAL = ("This document is made from the logbook's records. It is not the official dose record, "
                "which stays with the approved dosimetry service, and it does not replace the local "
                "rules, the law that applies or the radiation safety officer's judgement.")


@dataclass(frozen=True)
class Provenance:
    """What every document states: whose lab, which period, which rules, made when and by whom."""

    lab: str
    period: str
    limit_set: str
    policies: tuple[str, ...]
    made_at: str
    made_by: str


class Document(FPDF):
    """An A4 portrait document with the logbook's heading block and page numbers."""

    def __init__(self, title: str, provenance: Provenance):
        super().__init__(orientation="P", unit="mm", format="A4")
        self.title_text = title
        self.provenance = provenance
        self.add_font("DejaVu", "", str(FONT_DIR / "DejaVuSans.ttf"))
        self.add_font("DejaVu", "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
        self.set_auto_page_break(auto=True, margin=15)
        self.set_margins(15, 15, 15)
        self.set_title(title)
        self.set_creator("X-ray lab safety logbook")
        self.add_page()
        self._heading_block()

    def footer(self) -> None:
        """Title and page number on every page."""
        self.set_y(-12)
        self.set_font("DejaVu", "", 7)
        self.cell(0, 5, f"{self.title_text} · {self.provenance.lab} · page {self.page_no()}/{{nb}}",
                  align="C")

    def _heading_block(self) -> None:
        p = self.provenance
        self.set_font("DejaVu", "B", 15)
        self.multi_cell(0, 8, self.title_text, new_x="LMARGIN", new_y="NEXT")
        self.set_font("DejaVu", "", 9)
        for label, value in (("Laboratory", p.lab), ("Period", p.period), ("Limit set", p.limit_set),
                             *(("Counting" if i == 0 else "", text) for i, text in enumerate(p.policies)),
                             ("Made", f"{p.made_at} by {p.made_by}")):
            self.set_font("DejaVu", "B", 9)
            self.cell(28, 5, label)
            self.set_font("DejaVu", "", 9)
            self.multi_cell(0, 5, value, new_x="LMARGIN", new_y="NEXT")
        self.ln(1)
        self.caution(NOT_OFFICIAL)

    def caution(self, text: str) -> None:
        """A boxed caution."""
        self.set_font("DejaVu", "B", 8.5)
        self.set_fill_color(253, 240, 213)
        self.multi_cell(0, 4.5, text, border=1, fill=True, padding=1.5, new_x="LMARGIN", new_y="NEXT")
        self.set_fill_color(255, 255, 255)
        self.ln(2)

    def section(self, text: str) -> None:
        """A section heading; starts a new page when little room is left."""
        if self.get_y() > self.h - 45:
            self.add_page()
        self.ln(2)
        self.set_font("DejaVu", "B", 11.5)
        self.multi_cell(0, 6, text, new_x="LMARGIN", new_y="NEXT")
        self.set_font("DejaVu", "", 9)

    def paragraph(self, text: str) -> None:
        """Plain text."""
        self.set_font("DejaVu", "", 9)
        self.multi_cell(0, 4.5, text, new_x="LMARGIN", new_y="NEXT")
        self.ln(1)

    def rows_table(self, header: Sequence[str], rows: Sequence[Sequence], widths: Sequence[float] | None = None,
              empty: str = "None.") -> None:
        """A table with a repeated bold header; `empty` when there are no rows."""
        if not rows:
            self.paragraph(empty)
            return
        self.set_font("DejaVu", "", 7.5)
        with super().table(col_widths=tuple(widths) if widths else None, line_height=4,
                           headings_style=FontFace(emphasis="BOLD", fill_color=(232, 236, 240)),
                           repeat_headings=1, text_align="LEFT") as table:
            table.row([str(h) for h in header])
            for row in rows:
                table.row(["" if v is None else str(v) for v in row])
        self.ln(2)

    def chart(self, png: bytes, width: float = 180) -> None:
        """A chart drawn elsewhere (matplotlib), as PNG."""
        if self.get_y() > self.h - 90:
            self.add_page()
        self.image(io.BytesIO(png), w=width)
        self.ln(2)

    def bytes(self) -> bytes:
        """The finished PDF."""
        return bytes(self.output())
