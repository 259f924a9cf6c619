"""The project's own palette and the cell styles built on it.

The palette avoids the trade's habitual red, amber and green. Its states differ in
lightness as well as hue, so they read in greyscale and for the common forms of
colour-blindness; and a word in the cell always says what the colour says.
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class State:
    """A named colour state: fill, text colour, and what it marks."""

    name: str
    fill: str
    font: str
    meaning: str


STATES: dict[str, State] = {s.name: s for s in (
    State("Plum", "#E7C3DC", "#5E1F4E", "loses money after ads, or spend should be cut"),
    State("Lavender", "#DDD5F3", "#3A2A78", "margin after ads is thin"),
    State("Mist", "#E6EEF4", "#24475E", "healthy"),
    State("Ocean", "#A9D2EC", "#063F63", "strong margin after ads, or spend may grow"),
    State("Stone", "#E4E4E4", "#3D3D3D", "not enough data to judge (no sales, no margin)"),
)}

INPUT_FILL = "#FFF3CF"
INPUT_FONT = "#1B4A9C"
HEADER_FILL = "#DCE3EA"
WARNING_FILL = "#FCE9B8"

# Centred in the row: a top-aligned first body row would touch the header's bottom border.
_BASE = {"font_name": "Arial", "font_size": 10, "valign": "vcenter"}
_INPUT = {"bg_color": INPUT_FILL, "font_color": INPUT_FONT, "border": 4, "border_color": "#A08A4A",
          "locked": False}
_TOTAL = {"bold": True, "top": 1}
EXPORT_FONT = "#7A7A7A"  # figures copied from the exports: grey, they do not follow any input
_EXPORT = {"font_color": EXPORT_FONT}
CARRIED_FILL = "#F8D7B0"  # an input carried from last week's workbook: its own fill, so it is seen
_CARRIED = {**_INPUT, "bg_color": CARRIED_FILL, "italic": True}

# Numbers end with the room of a digit (_0) so that a right-aligned number never touches the next column's text.
NUMBER_FORMATS = {
    "text": None,
    "int": "#,##0_0",
    "money": "{cur}#,##0.00_0",
    "percent": "0.0%_0",
    "ratio": "0.00_0",
    "date": "yyyy-mm-dd",
    "freetext": "@",  # text: what is typed stays text (=1+1 is not a formula), as in a Notes column
}

STYLES: dict[str, dict] = {
    "title": {"bold": True, "font_size": 14},
    "subtitle": {"bold": True, "font_size": 11, "valign": "top"},
    "note": {"italic": True, "font_color": "#4D4D4D", "text_wrap": False},
    "wrap": {"text_wrap": True, "valign": "top"},
    "warning": {"bold": True, "font_color": "#5A3A00", "bg_color": WARNING_FILL},
    "warning_wrap": {"bold": True, "font_color": "#5A3A00", "bg_color": WARNING_FILL, "text_wrap": True,
                     "valign": "top"},
    "alert": {"bold": True, "font_color": "#7A3E00"},
    "header": {"bold": True, "bg_color": HEADER_FILL, "bottom": 1, "text_wrap": True, "valign": "bottom"},
    "legend_header": {"bold": True},
    "label": {"indent": 1},
}
STYLES["header_num"] = {**STYLES["header"], "align": "right", "indent": 1}  # above numbers padded by a digit
for _name, _fmt in NUMBER_FORMATS.items():
    _num = {"num_format": _fmt} if _fmt else {}
    STYLES[_name] = dict(_num)
    STYLES[_name + "_input"] = {**_num, **_INPUT}
    STYLES[_name + "_carried"] = {**_num, **_CARRIED}
    STYLES[_name + "_total"] = {**_num, **_TOTAL}
    STYLES[_name + "_export"] = {**_num, **_EXPORT}
    STYLES[_name + "_left"] = {**_num, "align": "left", "bold": True}
STYLES["own"] = {"locked": False}  # the empty columns right of a table, where a user adds columns of their own
for _state in STATES.values():
    STYLES["state_" + _state.name] = {"bg_color": _state.fill, "font_color": _state.font}


def shows_when_blank(key: str) -> bool:
    """Whether a blank cell of this style looks different from no cell: a fill or a border (an input box, a total)."""
    props = STYLES[key]
    return any(k in props for k in ("bg_color", "border", "top", "bottom", "left", "right"))


def style_properties(key: str, currency_symbol: str) -> dict:
    """The xlsxwriter format properties of a style key, with the currency symbol filled in."""
    props = {**_BASE, **STYLES[key]}
    if "num_format" in props:
        symbol = '"' + currency_symbol.replace('"', "") + '"' if currency_symbol else ""
        props["num_format"] = props["num_format"].replace("{cur}", symbol)
    return props


# Which palette state marks each Status and Direction word.
STATUS_STATES = {"loss": "Plum", "thin": "Lavender", "healthy": "Mist", "strong": "Ocean",
                 "no sales": "Stone", "no margin": "Stone"}
DIRECTION_STATES = {"cut": "Plum", "grow": "Ocean"}
