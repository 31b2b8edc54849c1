"""The workbook's look: one restrained palette, fonts and number formats.

Colour always repeats what a word or a sign already says, so a black-and-white print reads the
same: a cool blue tint marks lower risk (positive weight of evidence, higher points), a warm
sand tint marks higher risk, and the header band is a dark slate with white text.
"""

from __future__ import annotations

from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

# Every font names the workbook's body font: a font without a name is drawn in the reading
# program's own default (a serif in LibreOffice), so headings and cells would differ in print.
FONT_NAME = "Calibri"
HEADER_FILL = PatternFill("solid", fgColor="2F3E4E")
HEADER_FONT = Font(name=FONT_NAME, bold=True, color="FFFFFF")
TITLE_FONT = Font(name=FONT_NAME, bold=True, size=14, color="2F3E4E")
HEADING_FONT = Font(name=FONT_NAME, bold=True, size=11, color="2F3E4E")
NOTE_FONT = Font(name=FONT_NAME, italic=True, size=9, color="555555")
BOLD = Font(name=FONT_NAME, bold=True)
LOWER_RISK_FILL = PatternFill("solid", fgColor="DCE8F2")
HIGHER_RISK_FILL = PatternFill("solid", fgColor="F6E3CC")
INPUT_FILL = PatternFill("solid", fgColor="FFF8D6")
HEADER_BORDER = Border(bottom=Side(style="thin", color="2F3E4E"))
GROUP_BORDER = Border(top=Side(style="thin", color="8C8C8C"))
WRAP = Alignment(wrap_text=True, vertical="top")
# Header text is centred in a band taller than its lines, so the first row below does not
# touch it in print.
HEADER_LEFT = Alignment(wrap_text=True, vertical="center", horizontal="left", indent=1)
HEADER_RIGHT = Alignment(wrap_text=True, vertical="center", horizontal="right")
LINE_POINTS = 15            # height of one line of the body font, in points
HEADER_PADDING = 9          # points of dark band above and below the header's lines together
# A text cell after a right-aligned number would touch it; the indent keeps them apart.
TEXT = Alignment(horizontal="left", indent=1)
LEFT = Alignment(horizontal="left")

# Chart series colours, in the same meaning as the tints: blue for goods, warm for bads.
GOOD_LINE = "2F5D87"
BAD_LINE = "D9954F"
NEUTRAL_LINE = "7F7F7F"
# Baseline against current sample: light grey against the dark header slate, neither of the
# risk colours, since neither sample is the riskier one.
BASELINE_FILL = "B4B4B4"
CURRENT_FILL = "2F3E4E"

PERCENT = "0.0%"
COUNT = "#,##0"
INTEGER = "0"
WOE = "0.0000"
MEASURE = "0.000"
# A sign on every non-zero value so that the direction of risk reads without colour.
SIGNED_WOE = "+0.0000;-0.0000;0.0000"
