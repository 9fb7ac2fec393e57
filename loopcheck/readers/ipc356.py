"""Read an IPC-D-356 / IPC-D-356A netlist with the project's own fixed-column parser.

The standard is IPC-D-356A, "Bare Substrate Electrical Test Data Format", IPC, 1998 (and its
predecessor IPC-D-356). Records are 80-column card images; a test record puts each field in
fixed columns. The column layout below was checked against two public, independent parsers'
documentation of the standard (gerbv's ``src/ipcd356a.c``, which quotes the column numbers of
the document, and pcb-tools' ``gerber/ipc356.py``), which agree, and against the real netlist
in the corpus (``spec-examples/ipc-d-356.ipc``).

Test records 317 (through feature), 327 (surface feature), 367 (read like 317) and their
continuations 017 / 027 / 067 (another test point of the same net, read the same way);
columns are 1-based and inclusive, as in the standard:

=======  =================================================================================
cols     field
=======  =================================================================================
1-3      record code: col 1 ``3`` test record (``0`` continuation), col 2 ``1`` through /
         ``2`` surface / others, col 3 ``7``
4-17     net name (14 characters; ``N/C`` or blank: no net; ``NNAME<n>``: an alias, below)
18-20    blank
21-26    reference designator (``VIA`` for a via)
27       ``-``
28-31    pin (terminal) number or name
32       ``M`` for a mid-net point, else blank
33       ``D`` when a hole follows, else blank
34-37    hole diameter (4 digits)
38       ``P`` plated, ``U`` unplated
39       ``A``
40-41    access: ``00`` all layers (through), ``01`` primary side (top), ``nn`` layer nn
42       ``X``
43       sign of X (``+``, ``-`` or blank)
44-49    X location (6 digits)
50       ``Y``
51       sign of Y
52-57    Y location (6 digits)
58       ``X``
59-62    feature size along X (4 digits)
63       ``Y`` (absent: a round feature of the X size)
64-67    feature size along Y (blank or zero: a round feature, Y = X)
68       ``R``
69-71    rotation (3 digits; blank: 0)
72       blank (some writers put the ``S`` here)
73       ``S``
74       solder mask: 0 none, 1 primary side, 2 secondary side, 3 both
75-80    optional information (not read)
=======  =================================================================================

Dimensions are integers in the units of the ``P  UNITS`` parameter record:
``CUST`` or ``CUST 0``: inch, 0.0001 inch, degrees; ``CUST 1``: mm, 0.001 mm, degrees;
``CUST 2``: inch, 0.0001 inch, radians (both parsers above); ``SI``: 0.001 mm (gerbv);
``ENGLISH``: 0.0001 inch (from memory of the original IPC-D-356, not checked). A file without
a UNITS record is read as ``CUST 0`` and says so in a note. Hole, location and feature size
use the same resolution.

Blank fields: every field after the location may be left blank (or the line may end before
it): feature sizes (a blank or zero Y size is a round feature, Y = X), rotation (0), hole
diameter (a hole of unknown size), plating code, access code (through for 317/367, top for
327) and the solder mask code (None; an unreadable code is noted, never an error, since
nothing here uses it). Each kind of blank field is counted in one note. A field whose digits
are cut by the end of the line is an error.

Net names: the field holds 14 characters, so IPC-D-356A gives longer names (or names with
spaces) as aliases: a parameter record ``P  NNAME<id> <full name>`` (also ``P  NNAME <id>
<name>``, and a comment ``C  NNAME<id> <name>`` in some writers' files) and the alias in the
net-name field of the test records, either the whole token ``NNAME<id>`` or only ``<id>``.
They are resolved to the full names (see ``_Parser.resolve_aliases``); two aliases of one
full name stay two nets. A name that fills all 14 columns without an alias may have been cut
by the writer to its last 14 characters: a note says so, and ``Netlist.full_width_names``
(with names ending ``#<n>``, the form some writers give
two cut names that would be equal) lists these names for a later step (``loopcheck.netnames``) to restore from Gerber X2 names.

Conductor records 378 (cols 4-17 net, cols 19-21 ``L`` + layer) and outline records 389
(cols 4-17 ``BOARD_EDGE``, ``PANEL_EDGE``, ``SCORE_LINE``, ``OTHER_FAB``) carry free-form
data after those columns, continued on 078 / 089 lines: the first ``X<w>[Y<h>]`` word is the
line (aperture) size, then ``X``/``Y`` words give points, each coordinate modal (a word may
give X or Y alone), and ``*`` ends one path. They are read into point lists in mm. For 389
the public readings differ (gerbv: a size word first; pcb-tools and gerbonara: points only);
the size word is taken unless only the points-only reading closes the outline, with a note.

A parameter ``P  IMAGE`` other than ``PRIMARY`` (a panel or step-and-repeat image) makes the
records after it skipped, with a note, until ``P  IMAGE PRIMARY``. Record 999 ends the file.

Errors: a test record shorter than its location fields (57 columns), a field cut off by the
end of the line, a non-numeric number or an unknown units record is an
:class:`~loopcheck.errors.InputError` naming the file and line. Blank lines, comments and
record types this reader does not use are tolerated and counted in ``notes``.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from dataclasses import dataclass, field, replace
from pathlib import Path

from loopcheck.errors import InputError
from loopcheck.limits import DEFAULT_LIMITS, InputLimits

Point = tuple[float, float]

_INCH_TENTHOUSANDTHS_MM = 0.0001 * 25.4   # one unit of CUST 0 / CUST 2, in mm
_MICRON_MM = 0.001                        # one unit of CUST 1 / SI, in mm


@dataclass(frozen=True)
class NetPoint:
    """One test record: a component pad or a via, in mm."""

    net: str                      # "" when the record names no net (blank or N/C)
    ref: str                      # reference designator; "" for a via
    pin: str                      # "" for a via
    x_mm: float
    y_mm: float
    access: int                   # 0 = through (all layers), 1 = top, N = layer N
    hole_mm: float | None         # drilled diameter; None without a hole field
    plated: bool | None           # None without a hole field
    # Feature size as written (the pad's own x/y, before ``rotation_deg`` turns it, as gerbv
    # reads it and as the corpus netlist's rotated pads show); None when not given.
    width_mm: float | None
    height_mm: float | None       # = width for a round feature (no Y size)
    rotation_deg: float           # degrees, as written (CUST 2 radians converted)
    is_via: bool
    midpoint: bool                # a mid-net point (col 32 "M")
    line: int                     # 1-based line number in the file
    record: str = "317"           # record code as written: 317, 327, 367, 017, ...
    soldermask: int | None = None

    @property
    def terminal(self) -> str:
        return f"{self.ref}.{self.pin}" if self.ref else ""


@dataclass(frozen=True)
class Conductor:
    """A 378 record: copper of one net on one layer as paths of points [mm]."""

    net: str
    layer: int | None
    width_mm: float | None
    height_mm: float | None
    paths: list[list[Point]]
    line: int


@dataclass(frozen=True)
class OutlineRecord:
    """A 389 record: ``kind`` is BOARD_EDGE, PANEL_EDGE, SCORE_LINE or OTHER_FAB."""

    kind: str
    width_mm: float | None
    paths: list[list[Point]]
    line: int


@dataclass
class Netlist:
    path: str
    units: str                              # "inch" or "mm" (the file's; results are in mm)
    points: list[NetPoint]
    layer_count: int | None                 # highest access/layer code above 1, else None
    conductors: list[Conductor] = field(default_factory=list)
    outline: list[OutlineRecord] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    parameters: dict[str, str] = field(default_factory=dict)   # P records: JOB, VER, ...
    aliases: dict[str, str] = field(default_factory=dict)      # NNAME1 -> full net name
    ended: bool = False                     # the 999 end record was found
    # net names (no alias) that fill all 14 columns of the net field, or end in "#<n>": the
    # writer may have cut them (loopcheck.netnames restores them from Gerber X2 names)
    maybe_cut_names: list[str] = field(default_factory=list)

    @property
    def nets(self) -> dict[str, list[NetPoint]]:
        out: dict[str, list[NetPoint]] = {}
        for p in self.points:
            if p.net:
                out.setdefault(p.net, []).append(p)
        return out

    @property
    def board_edge(self) -> list[list[Point]]:
        return [path for rec in self.outline if rec.kind == "BOARD_EDGE" for path in rec.paths]


# ----------------------------------------------------------------------------------------------


@dataclass
class _Units:
    name: str           # "inch" or "mm"
    mm_per_unit: float
    radians: bool
    record: str


_UNITS = {
    "CUST": _Units("inch", _INCH_TENTHOUSANDTHS_MM, False, "CUST"),
    "CUST 0": _Units("inch", _INCH_TENTHOUSANDTHS_MM, False, "CUST 0"),
    "CUST 1": _Units("mm", _MICRON_MM, False, "CUST 1"),
    "CUST 2": _Units("inch", _INCH_TENTHOUSANDTHS_MM, True, "CUST 2"),
    "SI": _Units("mm", _MICRON_MM, False, "SI"),
    "ENGLISH": _Units("inch", _INCH_TENTHOUSANDTHS_MM, False, "ENGLISH"),
}

_WORD = re.compile(r"\*|[XY][+-]?\d+")
_MAX_WORD_DIGITS = 10      # 10^10 units (0.001 mm or 0.0001 inch) is over ten kilometres
_NNAME = re.compile(r"NNAME[0-9A-Z_]*$", re.IGNORECASE)
_UNIQUIFIED = re.compile(r".{1,12}#\d+$")      # a cut name a writer made unique: TAIL#1
_NNAME_COMMENT = re.compile(r"C\s+(NNAME[0-9A-Z_]+)\s+(\S.*)$", re.IGNORECASE)


class _Parser:
    def __init__(self, path: str):
        self.path = path
        self.units = _UNITS["CUST 0"]
        self.units_given = False
        self.points: list[NetPoint] = []
        self.seen_records: set[tuple] = set()
        self.repeated_records = 0
        self.conductors: list[Conductor] = []
        self.outline: list[OutlineRecord] = []
        self.parameters: dict[str, str] = {}
        self.aliases: dict[str, str] = {}
        self.notes: list[str] = []
        self.skipped: dict[str, int] = {}
        self.blank = 0
        self.comments = 0
        self.image_skip = False
        self.image_skipped = 0
        self.ended = False
        self.after_end = 0
        self.full_width_names: set[str] = set()
        self.unaliased_nname: set[str] = set()
        self.max_layer = 0
        self.open_free: dict | None = None   # the 378/389 record a 078/089 line continues
        self.kept_apart: list[str] = []
        self.uniquified: set[str] = set()
        self.counts: Counter[str] = Counter()   # blank or odd fields, for one note each
        self.mask_example = ""

    # fields ------------------------------------------------------------------------------
    def error(self, lineno: int, msg: str) -> InputError:
        return InputError(msg, path=self.path, line=lineno)

    @staticmethod
    def cols(line: str, first: int, last: int) -> str:
        """Columns first..last (1-based, inclusive), as in the standard."""
        return line[first - 1:last]

    def need(self, line: str, lineno: int, first: int, last: int, what: str) -> None:
        if first <= len(line) < last:
            raise self.error(lineno, f"record cut off in the {what} field (columns {first}-{last}); "
                                     f"the line has {len(line)} columns")

    def number(self, text: str, lineno: int, what: str, first: int, signed: bool = False) -> int:
        s = text.strip()
        if signed and s[:1] in "+-":
            sign, s = (-1 if s[0] == "-" else 1), s[1:].strip()
        else:
            sign = 1
        if not (s.isascii() and s.isdigit()):    # "²".isdigit() is True, int("²") fails
            raise self.error(lineno, f"{what} {text.strip()!r} in columns {first}-{first + len(text) - 1} "
                                     "is not a number")
        return sign * int(s)

    def mm(self, units: int) -> float:
        return units * self.units.mm_per_unit

    def net_name(self, raw: str) -> str:
        """The net field as written ("" for blank or N/C); aliases are resolved at the end."""
        name = raw.strip()
        return "" if name.upper() == "N/C" else name

    def alias(self, key: str, value: str, lineno: int, source: str) -> None:
        """Record ``NNAME<id> <full name>`` (a P record, or a comment some writers use)."""
        key_u = key.upper()
        if key_u == "NNAME":              # spaced form: NNAME <id> <full name>
            ident, _, value = value.strip().partition(" ")
            key_u = "NNAME" + ident.upper()
        value = value.strip()
        if key_u == "NNAME" or not value:
            raise self.error(lineno, f"net name alias {key} gives no name")
        self.aliases[key_u] = value
        if source == "comment":
            self.counts["alias comment"] += 1

    # records -----------------------------------------------------------------------------
    def parameter(self, line: str, lineno: int) -> None:
        body = line[3:].strip() if len(line) > 3 else ""
        if not body:
            return
        key, _, value = body.partition(" ")
        key_u, value = key.upper(), value.strip()
        if _NNAME.match(key_u):
            self.alias(key, value, lineno, "parameter")
            return
        self.parameters[key_u] = value
        if key_u == "UNITS":
            norm = " ".join(value.upper().split())
            if norm not in _UNITS:
                raise self.error(lineno, f"unknown units record {value!r} "
                                         "(expected CUST, CUST 0, CUST 1, CUST 2, SI or ENGLISH)")
            if self.points or self.conductors or self.outline:
                self.notes.append(f"line {lineno}: UNITS record after the first test record; "
                                  "the records before it were read as CUST 0 (inch)")
            self.units = _UNITS[norm]
            self.units_given = True
            if self.units.radians:
                self.notes.append("UNITS CUST 2 declares rotations in radians; rotations were "
                                  "converted from radians to degrees")
            if norm == "ENGLISH":
                self.notes.append("UNITS ENGLISH read as 0.0001 inch (resolution from memory "
                                  "of IPC-D-356, not checked against the standard)")
        elif key_u == "IMAGE":
            self.image_skip = value.split()[:1] != ["PRIMARY"] if value else False

    def blank_or_number(self, line: str, lineno: int, first: int, last: int, what: str,
                        signed: bool = False) -> int | None:
        """A numeric field the standard lets a writer leave blank: None when its columns are
        blank or lie past the end of the line; an error when the line ends inside its digits."""
        text = self.cols(line, first, last)
        if not text.strip():
            return None
        self.need(line, lineno, first, last, what)
        return self.number(text, lineno, what, first, signed=signed)

    def test_record(self, line: str, lineno: int, code: str) -> None:
        if len(line) < 57:
            raise self.error(lineno, f"test record {code} has {len(line)} columns; its X/Y "
                                     "location needs columns 42-57")
        c = lambda a, b: self.cols(line, a, b)   # noqa: E731
        net = self.net_name(c(4, 17))
        ref = c(21, 26).strip()
        pin = c(28, 31).strip()
        midpoint = c(32, 32) == "M"
        hole_mm = plated = None
        if c(33, 33) == "D":
            # the diameter and the plating code may each be left blank: a hole of unknown size
            d = self.blank_or_number(line, lineno, 34, 37, "hole diameter")
            hole_mm = self.mm(d) if d is not None else None
            if d is None:
                self.counts["hole size blank"] += 1
            code38 = c(38, 38)
            if code38 in ("P", "U"):
                plated = code38 == "P"
            elif code38.strip():
                raise self.error(lineno, f"plating code {code38!r} in column 38 is not P or U")
        elif c(33, 38).strip() and c(33, 33) != " ":
            raise self.error(lineno, f"column 33 is {c(33, 33)!r}; a hole field starts with D")
        if c(39, 39) == "A" and c(40, 41).strip():
            access = self.number(c(40, 41), lineno, "access code", 40)
        elif c(39, 41).strip() not in ("", "A"):
            raise self.error(lineno, f"columns 39-41 {c(39, 41)!r}: an access code is A + 2 digits")
        else:
            access = 0 if code[1] != "2" else 1
            self.counts["access blank " + ("top (01)" if access else "through (00)")] += 1
        if c(42, 42) != "X" or c(50, 50) != "Y":
            raise self.error(lineno, "the location must be X in column 42 and Y in column 50, "
                                     f"found {c(42, 42)!r} and {c(50, 50)!r}")
        x = self.mm(self.number(c(43, 49), lineno, "X location", 43, signed=True))
        y = self.mm(self.number(c(51, 57), lineno, "Y location", 51, signed=True))
        width = height = None
        if c(58, 58) == "X":
            w = self.blank_or_number(line, lineno, 59, 62, "feature X size")
            width = self.mm(w) if w is not None else None
        h = None
        if c(63, 63) == "Y":
            h = self.blank_or_number(line, lineno, 64, 67, "feature Y size")
        if h is None or h == 0:
            # a round feature: the standard leaves its Y size blank; some writers write zero
            height = width
            if width is not None and c(63, 63) == "Y":
                self.counts["round blank" if h is None else "round zero"] += 1
        else:
            height = self.mm(h)
        rotation = 0.0
        if c(68, 68) == "R":
            r = self.blank_or_number(line, lineno, 69, 71, "rotation", signed=True)
            if r is not None:
                rotation = (math.degrees(r) if self.units.radians else float(r)) % 360.0
        soldermask = self.soldermask(line)
        is_via = ref.upper() == "VIA"
        if is_via:
            ref, pin = "", ""
        self.max_layer = max(self.max_layer, access)
        # a record that repeats an earlier one field for field adds nothing; kept once (20 000
        # copies of one pin made the measurements quadratic: fuzz run seed 20261202, case 7637)
        key = (net, ref, pin, x, y, access, hole_mm, plated, width, height, rotation, is_via, midpoint,
               code, soldermask)
        if key in self.seen_records:
            self.repeated_records += 1
            return
        self.seen_records.add(key)
        self.points.append(NetPoint(net=net, ref=ref, pin=pin, x_mm=x, y_mm=y, access=access,
                                    hole_mm=hole_mm, plated=plated, width_mm=width,
                                    height_mm=height, rotation_deg=rotation, is_via=is_via,
                                    midpoint=midpoint, line=lineno, record=code,
                                    soldermask=soldermask))

    def soldermask(self, line: str) -> int | None:
        """The solder mask code: ``S`` in column 73 and a digit 0-3 in 74 (the standard); some
        writers put the ``S`` in column 72. Blank: None. The code is informative (nothing here
        uses it), so an unreadable one is counted in a note, never an error."""
        if self.cols(line, 73, 73) == "S":
            value = line[73:].split()[0] if line[73:].strip() else ""
        elif self.cols(line, 72, 72) == "S":
            value = line[72:].split()[0] if line[72:].strip() else ""
            self.counts["mask column 72"] += 1
        else:
            return None
        if value == "":
            return None
        if value[:1] in "0123" and (len(value) == 1 or not value[1:2].isdigit()):
            return int(value[0])
        self.counts["mask unreadable"] += 1
        self.mask_example = self.mask_example or value
        return None

    def free_start(self, line: str, lineno: int, code: str) -> None:
        if code == "378":
            net = self.net_name(self.cols(line, 4, 17))
            layer = None
            if self.cols(line, 19, 19) == "L":
                layer = self.number(self.cols(line, 20, 21), lineno, "conductor layer", 20)
                self.max_layer = max(self.max_layer, layer)
            self.open_free = {"code": code, "net": net, "layer": layer, "line": lineno, "tokens": []}
            self.free_words(line[21:], lineno)
        else:
            kind = self.cols(line, 4, 17).split()
            self.open_free = {"code": code, "kind": kind[0] if kind else "", "line": lineno,
                              "tokens": []}
            self.free_words(line[17:], lineno)

    def free_words(self, text: str, lineno: int) -> None:
        """Collect the X/Y words of a 378/389 record or its 078/089 continuation."""
        rec = self.open_free
        for token in text.split():
            words = _WORD.findall(token)
            if "".join(words) != token:
                raise self.error(lineno, f"unreadable data {token!r} in a {rec['code']} record "
                                         "(X/Y words and * expected)")
            for word in words:
                # free-format words have no column width: a run of digits past any board (and,
                # past 308 digits, past a float) is refused here, where the line is known
                digits = word.lstrip("XY+-").lstrip("0")
                if len(digits) > _MAX_WORD_DIGITS:
                    raise self.error(lineno, f"coordinate {word[:20]}... ({len(digits)} digits) in a "
                                             f"{rec['code']} record is out of range")
            rec["tokens"].append(words)

    def _size_and_paths(self, tokens: list[list[str]], size_first: bool):
        """(size [w, h] or None, paths) from whitespace tokens of X/Y words. Coordinates are
        modal; a point is complete at the end of its token; ``*`` ends a path."""
        size = None
        if size_first and tokens:
            size = [None, None]
            for word in tokens[0]:
                if word != "*":
                    size[0 if word[0] == "X" else 1] = self.mm(int(word[1:]))
            tokens = tokens[1:]
        paths: list[list[Point]] = [[]]
        x = y = None
        for words in tokens:
            pending = False
            for word in words + ["end"]:
                if word in ("*", "end"):
                    if pending and x is not None and y is not None:
                        paths[-1].append((x, y))
                    pending = False
                    if word == "*":
                        if paths[-1]:
                            paths.append([])
                        x = y = None
                    continue
                if word[0] == "X":
                    x = self.mm(int(word[1:]))
                else:
                    y = self.mm(int(word[1:]))
                pending = True
        return size, [p for p in paths if p]

    def free_close(self) -> None:
        rec = self.open_free
        if rec is None:
            return
        self.open_free = None
        if rec["code"] == "378":
            # all public readings agree: the first word is the conductor's width (and height)
            (w, h), paths = self._size_and_paths(rec["tokens"], True) if rec["tokens"] else ((None, None), [])
            self.conductors.append(Conductor(net=rec["net"], layer=rec["layer"], width_mm=w,
                                             height_mm=h if h is not None else w, paths=paths,
                                             line=rec["line"]))
            return
        # 389: gerbv reads a line-size word before the points, pcb-tools and gerbonara read
        # points only. Take the size word unless only the points-only reading closes the ring.
        size, paths = self._size_and_paths(rec["tokens"], True)
        _, plain = self._size_and_paths(rec["tokens"], False)
        closed = lambda ps: bool(ps) and all(len(p) > 2 and p[0] == p[-1] for p in ps)  # noqa: E731
        w = size[0] if size else None
        if closed(plain) and not closed(paths):
            paths, w = plain, None
            self.notes.append(f"line {rec['line']}: outline record read without a line-size word "
                              "(only so do its points close)")
        self.outline.append(OutlineRecord(kind=rec["kind"], width_mm=w, paths=paths, line=rec["line"]))

    # the file ----------------------------------------------------------------------------
    def parse(self, text: str) -> Netlist:
        lines = text.splitlines()
        long_lines = 0
        for lineno, raw in enumerate(lines, start=1):
            line = raw.rstrip("\r\n").rstrip()
            if self.ended:
                if line.strip():
                    self.after_end += 1
                continue
            if not line.strip():
                self.blank += 1
                continue
            if len(line) > 80:
                long_lines += 1
            code = line[:3]
            if code[:1] == "0" and self.open_free is not None and code[1:] == self.open_free["code"][1:]:
                self.free_words(line[3:], lineno)
                continue
            self.free_close()
            if line[0] == "C":
                self.comments += 1
                m = _NNAME_COMMENT.match(line)
                if m:
                    self.alias(m[1], m[2], lineno, "comment")
            elif line[0] == "P" and line[1:3].strip() == "":
                self.parameter(line, lineno)
            elif code == "999":
                self.ended = True
            elif self.image_skip:
                self.image_skipped += 1
            elif re.fullmatch(r"[30][1-6]7", code):
                self.test_record(line, lineno, code)
            elif code in ("378", "389"):
                self.free_start(line, lineno, code)
            else:
                self.skipped[code] = self.skipped.get(code, 0) + 1
        self.free_close()
        return self.finish(long_lines)

    def resolve_aliases(self) -> None:
        """Replace alias tokens in the net fields by the full names of their NNAME records.

        A record names an alias either by the whole token (``NNAME1``, the standard's form) or
        by the part after ``NNAME`` (``M0000`` for ``NNAMEM0000``, as some writers do); the
        short form is taken only for an alias whose whole token no record uses. Two aliases
        whose full names are equal (a writer that cut long names to fit its alias record), or an
        alias whose full name is also written plainly, stay two nets: the alias gets its token
        appended in brackets, and a note says so.
        """
        fields = {p.net for p in self.points if p.net} | {c.net for c in self.conductors if c.net}
        upper = {f.upper() for f in fields}
        mapping: dict[str, str] = {}
        for f in sorted(fields):
            u = f.upper()
            if u in self.aliases:
                mapping[f] = u
            elif "NNAME" + u in self.aliases and "NNAME" + u not in upper:
                mapping[f] = "NNAME" + u
                self.counts["alias short token"] += 1
        by_name: dict[str, list[str]] = {}
        for f, key in mapping.items():
            by_name.setdefault(self.aliases[key], []).append(f)
        plain = fields - set(mapping)
        resolved: dict[str, str] = {}
        for name, tokens in by_name.items():
            if len(tokens) == 1 and name not in plain:
                resolved[tokens[0]] = name
            else:
                for f in tokens:
                    resolved[f] = f"{name} [{f}]"
                self.kept_apart.append(name)
        for f in plain:
            if _NNAME.match(f):
                self.unaliased_nname.add(f)
            elif len(f) == 14:
                self.full_width_names.add(f)
            elif _UNIQUIFIED.fullmatch(f):
                self.uniquified.add(f)
        if resolved:
            self.points = [replace(p, net=resolved[p.net]) if p.net in resolved else p
                           for p in self.points]
            self.conductors = [replace(c, net=resolved[c.net]) if c.net in resolved else c
                               for c in self.conductors]

    def finish(self, long_lines: int) -> Netlist:
        self.resolve_aliases()
        notes = self.notes
        if not self.units_given:
            notes.insert(0, "no UNITS record: read as CUST 0 (inch, 0.0001 inch)")
        if not self.ended:
            notes.append("no 999 end record: the file may be cut short")
        if self.after_end:
            notes.append(f"{self.after_end} lines after the 999 end record were not read")
        if self.blank:
            notes.append(f"{self.blank} blank lines skipped")
        for code, n in sorted(self.skipped.items()):
            notes.append(f"{n} records of type {code!r} not used by this reader")
        if self.image_skipped:
            notes.append(f"{self.image_skipped} records of a non-primary IMAGE (panel) skipped")
        if long_lines:
            notes.append(f"{long_lines} lines are longer than the standard's 80 columns")
        if self.full_width_names:
            notes.append(f"{len(self.full_width_names)} net names fill all 14 columns of the "
                         "IPC-D-356 net field and may have been cut short by the writer "
                         f"(e.g. {sorted(self.full_width_names)[0]!r})")
        if self.unaliased_nname:
            notes.append(f"net alias(es) without a P NNAME record: {', '.join(sorted(self.unaliased_nname))}")
        if self.kept_apart:
            notes.append(f"{len(self.kept_apart)} long net names are given by more than one alias "
                         f"(e.g. {self.kept_apart[0]!r}); each alias is kept as its own net, named "
                         "with its alias in brackets")
        if self.counts["alias comment"]:
            notes.append(f"{self.counts['alias comment']} net name aliases read from comment lines "
                         "(C  NNAME...), not from P records")
        c = self.counts
        round_features = c["round blank"] + c["round zero"]
        if round_features:
            notes.append(f"{round_features} features give no Y size ({c['round blank']} blank, "
                         f"{c['round zero']} zero): read as round, Y = X")
        for what in ("through (00)", "top (01)"):
            if c["access blank " + what]:
                notes.append(f"{c['access blank ' + what]} test records without an access code: "
                             f"read as {what}")
        if c["hole size blank"]:
            notes.append(f"{c['hole size blank']} holes without a diameter (hole field D with a "
                         "blank size)")
        if c["mask column 72"]:
            notes.append(f"{c['mask column 72']} solder mask codes written from column 72 "
                         "(the standard: S in column 73)")
        if c["mask unreadable"]:
            notes.append(f"{c['mask unreadable']} solder mask codes are not 0-3 (e.g. "
                         f"S{self.mask_example}); solder mask codes are not used")
        if self.repeated_records:
            notes.append(f"{self.repeated_records} test records repeat an earlier record field for "
                         "field; each is read once")
        holes = [p.hole_mm for p in self.points if p.hole_mm]
        tiny = [h for h in holes if h < 0.1]
        if tiny:
            notes.append(f"{len(tiny)} of {len(holes)} holes are under 0.1 mm (smallest "
                         f"{min(tiny):.4f} mm) as the {self.units.record} units read them; "
                         "the writer may have used other units for the hole field")
        layer_count = self.max_layer if self.max_layer >= 2 else None
        return Netlist(path=self.path, units=self.units.name, points=self.points,
                       layer_count=layer_count, conductors=self.conductors, outline=self.outline,
                       notes=notes, parameters=self.parameters, aliases=self.aliases,
                       ended=self.ended,
                       maybe_cut_names=sorted(self.full_width_names | self.uniquified))


def read_ipc356(path: str | Path, limits: InputLimits = DEFAULT_LIMITS) -> Netlist:
    """Read an IPC-D-356 / IPC-D-356A netlist; coordinates and sizes in mm.

    Parameters
    ----------
    path : the netlist file.
    limits : size limits for untrusted files.

    Returns
    -------
    Netlist with one NetPoint per test record, conductor and outline records, and notes.

    Raises
    ------
    InputError : unreadable file, a malformed record (with its line), or a file that is not
        an IPC-D-356 netlist.
    """
    p = Path(path)
    name = str(path)
    try:
        size = p.stat().st_size
        if size > limits.max_file_bytes:
            raise InputError(f"netlist is {size} bytes, over the limit of {limits.max_file_bytes}",
                             path=name)
        data = p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read netlist: {exc.strerror or exc}", path=name) from exc
    if b"\x00" in data:
        raise InputError("binary data in an IPC-D-356 netlist (NUL bytes)", path=name)
    text = data.decode("latin-1")
    parser = _Parser(name)
    netlist = parser.parse(text)
    if len(netlist.points) > limits.max_objects_per_layer:
        raise InputError(f"{len(netlist.points)} test records, over the limit of "
                         f"{limits.max_objects_per_layer}", path=name)
    if not netlist.points and not netlist.parameters and not parser.comments:
        raise InputError("not an IPC-D-356 netlist: no parameter, comment or test records", path=name)
    if not netlist.points:
        netlist.notes.append("no test records (317/327): the netlist names no pads")
    return netlist
