"""Copper layers told by file name where the common conventions (``readers.discover`` steps 3
and 4) do not say: short extensions, two-letter names, inner layers named by their function.

:func:`copper_position` returns a claim for one file name:

- ``("top",)`` / ``("bottom",)``: extensions ``.cmp`` ``.top`` ``.sol`` ``.bot`` (component
  side / solder side), and names whose words are ``top`` / ``bottom`` / ``bot`` / ``tl`` /
  ``bl`` / ``tc`` / ``bc`` (``board.top.art``, ``TL.gbr``);
- ``("L", n)``: a layer number in a short extension (``.l2``, ``.gl2``, ``.lay2``) or a word
  ``L02`` / ``LAYER_2`` / ``LY2``;
- ``("inner", k)``: ``.in1``, ``.ly2`` ... are left to the common conventions;
- ``("function", n, rank)``: an inner plane or signal layer named by function (``GND2``,
  ``PWR``, ``VCC``, ``PLANE1``, ``SIG3``, ``INNER``, ``MID``): its number ``n`` (None when the
  name has none) and a rank for the most likely order where names say nothing (ground, then
  power, then the rest: common practice for a 4-layer board's planes, L2 ground and L3 power).

A name that also says silk, mask, paste, drill, outline ... is not copper (None).
"""

from __future__ import annotations

import re

_NOT_COPPER = re.compile(r"silk|mask|paste|legend|overlay|drill|outline|profile|edge|cut|route|rout\b|fab|"
                         r"assy|assembly|mech|keep|court|doc|dim|drawing|stencil|border|frame|gko|gm\d|"
                         r"carbon|peel|glue|notes?|readme|npth|pth|hole|slot|v-?score|panel", re.I)
_TOP = {"top", "tl", "tc", "cmp", "component", "toplayer", "topcopper", "front", "primary"}
_BOTTOM = {"bottom", "bot", "bl", "bc", "sol", "solder", "bottomlayer", "bottomcopper", "back", "secondary"}
_GROUND = re.compile(r"^(gnd|ground|vss|agnd|dgnd|pgnd|0v)\d*$", re.I)
_POWER = re.compile(r"^(pwr|power|vcc|vdd|vin|vbat|plane|pln|split)\d*$", re.I)
_SIGNAL = re.compile(r"^(sig|signal|inner|inr|int|mid|internal|layer|lyr)\d*$", re.I)
_NUMBER_WORD = re.compile(r"^(?:l|layer|lay|lyr|ly)0*(\d{1,2})$", re.I)
_EXT_NUMBER = re.compile(r"^\.(?:l|gl|lay|lyr)0*(\d{1,2})$", re.I)
_EXT_TOP = {".cmp", ".top", ".tl", ".tc"}
_EXT_BOTTOM = {".sol", ".bot", ".bl", ".bc"}


def words(name: str) -> list[str]:
    stem = name.rsplit(".", 1)[0] if "." in name else name
    return [w for w in re.split(r"[^A-Za-z0-9]+", stem) if w]


def copper_position(name: str) -> tuple | None:
    """The copper claim a file name makes by the conventions above, or None."""
    ext = "." + name.rsplit(".", 1)[1].lower() if "." in name else ""
    stem = name[: -len(ext)] if ext else name
    if _NOT_COPPER.search(stem):
        return None
    if ext in _EXT_TOP:
        return ("top",)
    if ext in _EXT_BOTTOM:
        return ("bottom",)
    if m := _EXT_NUMBER.match(ext):
        return ("L", int(m[1]))
    ws = [w.lower() for w in words(name)]
    # the words after the board's name say the layer; a name of one word is all layer
    tail = ws[1:] if len(ws) > 1 else ws
    numbered = [int(m[1]) for w in tail if (m := _NUMBER_WORD.match(w))]
    sides = {("top",) for w in tail if w in _TOP} | {("bottom",) for w in tail if w in _BOTTOM}
    if len(sides) == 1 and not numbered:
        return sides.pop()
    if numbered and not sides:
        return ("L", numbered[-1])
    if sides or numbered:
        return None          # L01_Top and the like: the common conventions decide
    for w in tail:
        for rank, rx in enumerate((_GROUND, _POWER, _SIGNAL)):
            if rx.match(w):
                n = re.search(r"(\d+)$", w)
                return ("function", int(n[1]) if n else None, rank)
    return None
