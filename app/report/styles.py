"""Fonts, colours and paragraph styles of the review sheet.

The sheet embeds the Bitstream Vera TrueType fonts that ship with reportlab
(the standard 14 PDF fonts are not embedded, so a reader could substitute
them).  Vera covers Latin-1 plus dashes and a few maths signs, but no Greek:
texts on the sheet spell out eta, psi, omega.
"""
from __future__ import annotations

import os
from functools import lru_cache

import reportlab
from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT
from reportlab.lib.styles import ParagraphStyle
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont

FONT, BOLD, ITALIC = "TwVera", "TwVera-Bold", "TwVera-Italic"

INK = colors.HexColor("#1a1a1a")
GREY = colors.HexColor("#666666")
RULE = colors.HexColor("#b0b0b0")
HEAD_FILL = colors.HexColor("#e4e8ee")
ZEBRA = colors.HexColor("#f5f6f8")
PASS_INK = colors.HexColor("#1d6b2f")
PASS_FILL = colors.HexColor("#e6f2e8")
FAIL_INK = colors.HexColor("#a11d1d")
WEAK_INK = colors.HexColor("#6f4e9c")  # inside the margin, weakly excited: listed, not a failure
FAIL_FILL = colors.HexColor("#f8e4e2")
NEUTRAL_FILL = colors.HexColor("#eeeeee")
OPEN_INK = colors.HexColor("#7a4f00")  # a verdict still open: amber, neither pass nor fail
OPEN_FILL = colors.HexColor("#fbf0d9")
# line colours of the plots: distinguishable in print and for common colour blindness
PALETTE = [colors.HexColor(c) for c in
           ("#0b5394", "#d9730d", "#2e8b57", "#9b2d86", "#8c6d1f", "#1b9aaa", "#c2185b", "#555555")]


@lru_cache(maxsize=1)
def register_fonts() -> None:
    folder = os.path.join(os.path.dirname(reportlab.__file__), "fonts")
    faces = {FONT: "Vera.ttf", BOLD: "VeraBd.ttf", ITALIC: "VeraIt.ttf", FONT + "-BoldItalic": "VeraBI.ttf"}
    for name, file in faces.items():
        pdfmetrics.registerFont(TTFont(name, os.path.join(folder, file)))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=BOLD, italic=ITALIC,
                                  boldItalic=FONT + "-BoldItalic")


# every drawing of the sheet measures its text in these fonts: registered when the styles are
# first imported (2-3 ms), so a chart drawn on its own measures the same as on the sheet
register_fonts()


@lru_cache(maxsize=1)
def styles() -> dict[str, ParagraphStyle]:
    register_fonts()
    base = ParagraphStyle("body", fontName=FONT, fontSize=8.5, leading=11, textColor=INK,
                          alignment=TA_LEFT, spaceAfter=3)
    return {
        "body": base,
        "small": ParagraphStyle("small", parent=base, fontSize=7.5, leading=9.5),
        "note": ParagraphStyle("note", parent=base, fontSize=7, leading=9, textColor=GREY),
        "cell": ParagraphStyle("cell", parent=base, fontSize=7, leading=8.5, spaceAfter=0),
        "cell_bold": ParagraphStyle("cell_bold", parent=base, fontName=BOLD, fontSize=7, leading=8.5,
                                    spaceAfter=0),
        "title": ParagraphStyle("title", parent=base, fontName=BOLD, fontSize=16, leading=20,
                                spaceAfter=2),
        "kicker": ParagraphStyle("kicker", parent=base, fontSize=8, leading=10, textColor=GREY,
                                 spaceAfter=1),
        "h1": ParagraphStyle("h1", parent=base, fontName=BOLD, fontSize=11, leading=14, spaceBefore=10,
                             spaceAfter=4, keepWithNext=1),
        "h2": ParagraphStyle("h2", parent=base, fontName=BOLD, fontSize=9, leading=12, spaceBefore=6,
                             spaceAfter=3, keepWithNext=1),
        # headings over a long table: no keepWithNext (which would move a heading and a table longer
        # than the rest of the page to the next page whole); see base.heading
        "h1_flow": ParagraphStyle("h1_flow", parent=base, fontName=BOLD, fontSize=11, leading=14, spaceBefore=10,
                                  spaceAfter=4),
        "h2_flow": ParagraphStyle("h2_flow", parent=base, fontName=BOLD, fontSize=9, leading=12, spaceBefore=6,
                                  spaceAfter=3),
        "verdict": ParagraphStyle("verdict", parent=base, fontName=BOLD, fontSize=11, leading=14,
                                  spaceAfter=2),
        "verdict_long": ParagraphStyle("verdict_long", parent=base, fontName=BOLD, fontSize=9.5, leading=12,
                                       spaceAfter=2),
    }


def pretty_unit(unit: str) -> str:
    """'kg*m^2' -> 'kg·m²' for print (Vera has the Latin-1 superscripts)."""
    return unit.replace("*", "·").replace("^2", "²").replace("^3", "³")


def escape(text) -> str:
    """Text for a reportlab Paragraph (its mini-markup treats <, > and & specially)."""
    return str(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
