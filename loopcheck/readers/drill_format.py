"""The number format of an Excellon drill file: units, digits and zero suppression.

An Excellon file whose coordinates carry no decimal point (``X011000Y013000``) means nothing
without its number format: the units (mm or inch), the digits before and after the implied
point, and which zeros are left out. Writers give it in one of these places:

1. in the file: ``METRIC`` / ``INCH`` / ``M71`` / ``M72``, optionally with ``,LZ`` / ``,TZ`` and
   a digit pattern (``METRIC,TZ,000.000``); ``;FILE_FORMAT=4:4``; a ``;FORMAT={3:3/ ...}``
   comment; a ``; Format : 3.3 / Absolute / MM / Leading`` comment;
2. in a parameter file beside it: ``nc_param.txt`` / ``ncdrill.log`` (``FORMAT 2.4``,
   ``OUTPUT-UNITS METRIC``, ``SUPPRESS-LEAD-ZEROES YES`` ...), or a drill log with the same stem
   as the drill file (``Coordinate Format : 3V3``, ``Zero Suppress : Leading``);
3. in the project file: the ``[files]`` role of the drill file may end in format words, e.g.
   ``"board.drl" = "drill:plated inch 2.4 omit-leading"`` (see :func:`parse_format_words`).

Where none gives it, the reader lists the plausible formats (:func:`candidates`) and the board
loader picks the one whose plated holes land on copper (``loopcheck.load``).

Zero suppression words: ``omit-leading`` (leading zeros left out, the value is right-aligned:
Excellon ``TZ``, "trailing zeros kept"), ``omit-trailing`` (left-aligned: Excellon ``LZ``).

References
----------
IPC-NC-349 (1985), "Computer numerical control formatting for drillers and routers";
Ucamco, "XNC Format Specification" 2021 (METRIC / INCH, LZ / TZ).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace
from pathlib import Path

ZERO_WORDS = {"omit-leading": "leading", "omit-trailing": "trailing"}


@dataclass(frozen=True)
class DrillFormat:
    """units "mm" | "inch" | None; digits before / after the point; zeros "leading" (leading
    zeros omitted) | "trailing" (trailing zeros omitted) | None; where it came from."""

    units: str | None = None
    integer_digits: int | None = None
    decimal_digits: int | None = None
    zeros: str | None = None
    source: str = ""

    @property
    def has_digits(self) -> bool:
        if self.zeros == "trailing":
            return self.integer_digits is not None
        return self.decimal_digits is not None

    def words(self) -> str:
        """The project-file words for this format, e.g. ``inch 2.4 omit-leading``."""
        parts = []
        if self.units:
            parts.append(self.units)
        if self.integer_digits is not None and self.decimal_digits is not None:
            parts.append(f"{self.integer_digits}.{self.decimal_digits}")
        if self.zeros:
            parts.append("omit-" + self.zeros)
        return " ".join(parts)

    def describe(self) -> str:
        z = {"leading": "leading zeros omitted", "trailing": "trailing zeros omitted"}.get(self.zeros or "", "")
        d = (f"{self.integer_digits}.{self.decimal_digits} digits"
             if self.integer_digits is not None and self.decimal_digits is not None else "")
        return ", ".join(p for p in (self.units or "", d, z) if p)

    def merged(self, other: "DrillFormat") -> "DrillFormat":
        """This format with the gaps filled from ``other``."""
        return DrillFormat(self.units or other.units,
                           self.integer_digits if self.integer_digits is not None else other.integer_digits,
                           self.decimal_digits if self.decimal_digits is not None else other.decimal_digits,
                           self.zeros or other.zeros,
                           " + ".join(s for s, f in ((self.source, self), (other.source, other))
                                      if s and f.says_something))

    @property
    def says_something(self) -> bool:
        return any(v is not None for v in (self.units, self.integer_digits, self.decimal_digits, self.zeros))


def parse_format_words(words: str) -> DrillFormat:
    """``"inch 2.4 omit-leading"`` (any order, any subset) -> DrillFormat. Raises ValueError."""
    units = zeros = None
    integer = decimal = None
    for w in words.split():
        w = w.lower()
        if w in ("mm", "metric"):
            units = "mm"
        elif w in ("inch", "in", "imperial"):
            units = "inch"
        elif w in ZERO_WORDS:
            zeros = ZERO_WORDS[w]
        elif m := re.fullmatch(r"(\d)[.:](\d)", w):
            integer, decimal = int(m[1]), int(m[2])
        else:
            raise ValueError(f"unknown drill format word {w!r} (expected mm or inch, digits like 2.4, "
                             f"omit-leading or omit-trailing)")
    return DrillFormat(units, integer, decimal, zeros, "the project file's [files]")


_UNIT_STMT = re.compile(r"^\s*(METRIC|INCH|M71|M72)\s*(?:,\s*(LZ|TZ))?\s*(?:,\s*(0*)\.(0*))?", re.M)
_FILE_FORMAT = re.compile(r"^\s*;\s*FILE_FORMAT\s*=\s*(\d)\s*:\s*(\d)", re.M)
_FORMAT_COMMENT = re.compile(r"^\s*;\s*FORMAT\s*=\s*\{\s*([-\d]+):([-\d]+)\s*/\s*[^/]*/\s*(inch|metric|mm)"
                             r"\s*/\s*([^}]*)\}", re.M | re.I)
_SIEMENS = re.compile(r"^\s*;\s*Format\s*:\s*(\d)\.(\d)\s*/\s*\w+\s*/\s*(Inch|MM)\s*/\s*(Leading|Trailing)",
                      re.M | re.I)


def in_file(text: str) -> DrillFormat:
    """What the file itself says of its format (any part may be missing)."""
    units = zeros = None
    integer = decimal = None
    head = text[:200_000]
    if m := _UNIT_STMT.search(head):
        units = "mm" if m[1] in ("METRIC", "M71") else "inch"
        if m[2]:
            # LZ: leading zeros kept -> trailing omitted; TZ: trailing kept -> leading omitted
            zeros = "trailing" if m[2] == "LZ" else "leading"
        if m[3] is not None and (m[3] or m[4]):
            integer, decimal = len(m[3]), len(m[4])
    if m := _FILE_FORMAT.search(head):
        integer, decimal = int(m[1]), int(m[2])
    if m := _FORMAT_COMMENT.search(head):
        units = "inch" if m[3].lower() == "inch" else "mm"
        if m[1] != "-" and m[2] != "-":
            integer, decimal = int(m[1]), int(m[2])
        how = m[4].lower()
        if "leading" in how:
            zeros = "leading"
        elif "trailing" in how:
            zeros = "trailing"
    if m := _SIEMENS.search(head):
        integer, decimal = int(m[1]), int(m[2])
        units = "inch" if m[3].lower() == "inch" else "mm"
        zeros = "trailing" if m[4].lower() == "leading" else "leading"   # the comment names the zeros kept
    return DrillFormat(units, integer, decimal, zeros, "the drill file")


PARAMETER_FILES = ("nc_param.txt", "ncdrill.log")


def beside(path: Path) -> DrillFormat | None:
    """The format from a parameter file beside the drill file (see the module docstring)."""
    for name in PARAMETER_FILES:
        p = path.parent / name
        if p.is_file():
            fmt = _keyword_parameters(_text(p))
            if fmt is not None:
                return replace(fmt, source=f"the parameter file {name}")
    for p in sorted(path.parent.glob(path.stem + ".*")):
        if p != path and p.suffix.lower() in (".fdl", ".log", ".rep", ".txt") and p.is_file():
            fmt = _log_style(_text(p))
            if fmt is not None:
                return replace(fmt, source=f"the drill log {p.name}")
    return None


def _text(p: Path) -> str:
    try:
        with open(p, "rb") as f:
            return f.read(1_000_000).decode("latin-1")
    except OSError:
        return ""


def _keyword_parameters(text: str) -> DrillFormat | None:
    units = zeros = None
    integer = decimal = None
    lead = trail = None
    for line in text.splitlines():
        line = " ".join(line.split()).upper()
        if m := re.fullmatch(r"FORMAT (\d+)\.(\d+)", line):
            integer, decimal = int(m[1]), int(m[2])
        elif m := re.fullmatch(r"INTEGER-PLACES (\d+)", line):
            integer = int(m[1])
        elif m := re.fullmatch(r"DECIMAL-PLACES (\d+)", line):
            decimal = int(m[1])
        elif m := re.fullmatch(r"OUTPUT-UNITS (METRIC|ENGLISH|INCHES|INCH|MM)", line):
            units = "mm" if m[1] in ("METRIC", "MM") else "inch"
        elif m := re.fullmatch(r"SUPPRESS-LEAD-ZEROE?S (YES|NO)", line):
            lead = m[1] == "YES"
        elif m := re.fullmatch(r"SUPPRESS-TRAIL-ZEROE?S (YES|NO)", line):
            trail = m[1] == "YES"
    if lead:
        zeros = "leading"
    elif trail:
        zeros = "trailing"
    elif lead is False and trail is False:
        zeros = "leading"     # nothing omitted: full width, both readings agree
    if units is None and integer is None and decimal is None:
        return None
    return DrillFormat(units, integer, decimal, zeros)


def _log_style(text: str) -> DrillFormat | None:
    params = {}
    for line in text.splitlines():
        key, colon, value = line.partition(":")
        if colon and value.strip():
            params[" ".join(key.split()).lower()] = value.strip()
    fmt = params.get("coordinate format")
    if not fmt or not (m := re.match(r"(\d)\s*[V.:]\s*(\d)", fmt, re.I)):
        return None
    zeros = None
    if supp := params.get("zero suppress"):
        w = supp.split()[0].lower()
        zeros = w if w in ("leading", "trailing") else None
    units = None
    if u := params.get("unit") or params.get("units"):
        units = "inch" if u.lower().startswith("inch") else "mm" if u.lower().startswith(("mm", "metric")) else None
    return DrillFormat(units, int(m[1]), int(m[2]), zeros)


_BARE_NUMBER = re.compile(r"[XY][+-]?\d+(?![\d.])")


def needs_digits(text: str) -> bool:
    """True when some coordinate is written without a decimal point (the digits matter)."""
    for line in text.splitlines():
        line = line.strip()
        if line and line[0] in "XYG" and _BARE_NUMBER.search(line):
            return True
    return False


def candidates(known: DrillFormat, digits_needed: bool) -> list[DrillFormat]:
    """The plausible formats that fill the gaps of ``known``, most common habit first."""
    units = [known.units] if known.units else ["inch", "mm"]
    out: list[DrillFormat] = []
    for u in units:
        if not digits_needed:
            out.append(DrillFormat(u, known.integer_digits, known.decimal_digits, known.zeros, "guessed"))
            continue
        zeros = [known.zeros] if known.zeros else ["leading", "trailing"]
        for z in zeros:
            if known.has_digits and known.zeros:
                pairs = [(known.integer_digits, known.decimal_digits)]
            elif z == "leading":       # only the decimals matter
                decs = [known.decimal_digits] if known.decimal_digits is not None else (
                    [4, 5, 3, 6] if u == "inch" else [3, 4, 2, 5])
                pairs = [(known.integer_digits or (2 if u == "inch" else 3), d) for d in decs]
            else:                       # only the integer digits matter
                ints = [known.integer_digits] if known.integer_digits is not None else (
                    [2, 3] if u == "inch" else [3, 4, 2])
                pairs = [(i, known.decimal_digits or (4 if u == "inch" else 3)) for i in ints]
            out.extend(DrillFormat(u, i, d, z, "guessed") for i, d in pairs)
    return out
