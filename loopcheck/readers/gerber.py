"""Gerber (RS-274X / X2 / X3) reader: one copper layer -> one shapely geometry in mm.

Parsing is gerbonara's (``GerberParser``), with a thin subclass that
  * records step-and-repeat blocks instead of letting gerbonara copy objects (its 1.5.0 expansion
    drops the first object of a block and every region in it), and checks the expanded object
    count against the limits *before* anything is expanded;
  * keeps %IPNEG% for itself (applied once, to the finished image, instead of flipping each
    object's polarity);
  * reads X2 attributes written inside comments (``G04 #@! TF...*``, ``G04 #@! TO...*``);
  * gives regions the object attributes (net, pin) that were current when they were drawn;
  * tolerates a %TD% of an attribute that was never set (harmless, and some writers do it);
  * supports the LM / LR / LS aperture transformations (mirror, rotate, scale of flashes);
  * refuses every malformed statement in its own words, naming the file and the line: an
    invalid D code (``D0``), an undefined aperture selected, a flash or draw before any aperture
    is selected, coordinate words that cannot be read (or longer than 14 digits, the most a
    format statement can declare), an operation code other than D01-D03, an aperture definition
    with the wrong number of parameters, a negative size or an undefined macro, a macro that
    cannot be parsed or evaluated (the message names the aperture's definition line),
    unreadable FS / MO / LP / LM / LR / LS / SR statements, block apertures (AB, not supported),
    attribute statements without a name and unknown G codes with data. gerbonara's exception
    text never reaches the user (``_REASONS`` translates the ones it raises). A lone unknown
    statement that cannot change the image (a job attribute, an unknown extended command, a
    lone unknown G code) is skipped with a note.

Geometry is built here: each aperture's shape once (``aperture_shapes``), flashes stamped
vectorised, strokes with round apertures buffered (round caps), strokes with other apertures swept
as the convex hull of the aperture at both ends, arcs and region arcs approximated by chords with a
sagitta below ``tol_mm`` (default 5 um; circles are area-equivalent polygons), regions repaired
with ``make_valid`` (cut-ins). Polarity follows file order exactly: the image is the union over
dark runs of each run minus every clear run after it (``fast_union.compose``: each dark shape cut
only by the later clear shapes it meets, then one clustered union of everything). The copper of
each X2 net (``%TO.N%``) follows the same rule: each of its parts is cut by the clear shapes that
come after it and meet it, and by nothing else (``_Image.net_copper``).

References
----------
Ucamco, "The Gerber Layer Format Specification", revision 2023.08: 4.7 (regions), 4.9 (LM, LR,
LS), 4.10 (polarity), 4.11 (step and repeat), 5 (attributes), 8.1 (deprecated IP).
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely
import shapely.affinity
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry

from gerbonara import graphic_objects as go
from gerbonara.rs274x import GerberFile, GerberParser, InterpMode
from gerbonara.utils import Inch

from ..errors import InputError
from ..limits import DEFAULT_LIMITS, InputLimits
from . import aperture_shapes as shp
from . import fast_union as fu
from .aperture_shapes import DEFAULT_TOL_MM, aperture_info, unit_factor

EMPTY = Polygon()
_LINEAR = InterpMode.LINEAR


@dataclass(frozen=True)
class PinFlash:
    """A component pad named by an X2 %TO.P% attribute (on a flash, or a region's centroid)."""

    ref: str
    pin: str
    net: str | None
    x_mm: float
    y_mm: float
    function: str | None = None    # third field of %TO.P%, e.g. "Anode", where given


@dataclass
class GerberLayer:
    """One Gerber layer as geometry in mm (dark minus clear, in file order), with X2 attributes."""

    path: str
    geometry: BaseGeometry
    attributes: dict[str, str] = field(default_factory=dict)   # "FileFunction" -> "Copper,L1,Top"
    net_copper: dict[str, BaseGeometry] = field(default_factory=dict)
    pin_flashes: list[PinFlash] = field(default_factory=list)
    component_values: dict[str, str] = field(default_factory=dict)
    component_footprints: dict[str, str] = field(default_factory=dict)   # X3 .CFtp / .CPkg, where given
    object_count: int = 0            # graphic objects after step-and-repeat
    units: str = "mm"                # the file's own units: "mm" or "inch"
    negative: bool = False           # True when the image was inverted (%IPNEG% / negative copper)
    chord_tolerance_mm: float = DEFAULT_TOL_MM
    warnings: list[str] = field(default_factory=list)


# Step-and-repeat copies stacked on one another: a panel or an array of vias has none (depth 1);
# a thousand copies of a pour 1 um apart took minutes to merge (fuzz run, seed 20261202, case 408).
MAX_SR_OVERLAP = 64


def _overlap_depth(objects, offsets: list[tuple[float, float]]) -> int:
    """How many copies of a step-and-repeat block cover one point at most, from the extent of the
    block's coordinates (aperture sizes left out, so never more than the truth) and the steps."""
    xs: list[float] = []
    ys: list[float] = []
    for o in objects:
        for a, b in (("x", "y"), ("x1", "y1"), ("x2", "y2")):
            x, y = getattr(o, a, None), getattr(o, b, None)
            if isinstance(x, (int, float)) and isinstance(y, (int, float)):
                xs.append(x), ys.append(y)
        for pt in getattr(o, "outline", None) or ():
            xs.append(pt[0]), ys.append(pt[1])
    if not xs:
        return 1
    distinct = {(round(dx, 9), round(dy, 9)) for dx, dy in offsets}
    # a zero step (I0 or J0) puts whole copies exactly on one another
    depth = len(offsets) // len(distinct)
    for extent, steps in ((max(xs) - min(xs), sorted({dx for dx, _ in distinct})),
                          (max(ys) - min(ys), sorted({dy for _, dy in distinct}))):
        if len(steps) < 2:
            continue
        step = min(b - a for a, b in zip(steps, steps[1:]))
        depth *= len(steps) if step <= 0 else min(len(steps), 1 + int(extent / step))
    return depth


class _LimitExceeded(Exception):
    pass


class _Malformed(Exception):
    """A statement the Gerber format does not allow; the message is ours (never a library's)."""


class _ApertureFailure(Exception):
    """An aperture whose shape cannot be built (a macro that divides by zero, ...)."""

    def __init__(self, aperture, cause: Exception):
        super().__init__(type(cause).__name__)
        self.aperture = aperture
        self.cause = cause


class _ObjectList(list):
    """gerbonara's parser appends every finished object here: stamp regions, count objects."""

    def __init__(self, parser: "_Parser"):
        super().__init__()
        self._parser = parser

    def append(self, obj):  # noqa: D401
        p = self._parser
        if isinstance(obj, go.Region) and not _attrs(obj):
            obj.attrs = dict(p.graphics_state.object_attrs)
        if p.aperture_transform is not None and isinstance(obj, (go.Flash, go.Line, go.Arc)):
            obj.__dict__["_lc_transform"] = p.aperture_transform
        super().append(obj)
        if len(self) + p.sr_extra > p.limits.max_objects_per_layer:
            raise _LimitExceeded(
                f"more than {p.limits.max_objects_per_layer} graphic objects in one layer (limit)")


@dataclass
class _SRBlock:
    start: int
    end: int
    offsets: list[tuple[float, float]]   # in file units


class _Parser(GerberParser):
    STATEMENT_REGEXES = dict(GerberParser.STATEMENT_REGEXES)
    _DEC = r"[\+-]?\d+(?:[.]\d*)?|[\+-]?[.]\d+"
    STATEMENT_REGEXES["load_mirroring"] = r"^LM(?P<mirror>N|XY|X|Y)$"
    STATEMENT_REGEXES["load_rotation"] = fr"^LR(?P<angle>{_DEC})$"
    STATEMENT_REGEXES["load_scaling"] = fr"^LS(?P<scale>{_DEC})$"
    # coordinate numbers of at most 14 digits (7 + 7, the most an FS statement declares): a
    # longer word is not matched, and the unknown-statement check below refuses it
    STATEMENT_REGEXES["coord"] = GerberParser.STATEMENT_REGEXES["coord"].replace(r"[\+-]?\d+", r"[\+-]?\d{1,14}")

    def __init__(self, target, limits: InputLimits):
        super().__init__(target)
        self.limits = limits
        self.sr_blocks: list[_SRBlock] = []
        self.sr_open: tuple[int, list[tuple[float, float]]] | None = None
        self.sr_extra = 0
        self.sr_extra_vertices = 0
        self.image_negative = False
        self.mirror = "N"
        self.rotation_deg = 0.0
        self.scale = 1.0
        self.aperture_transform = None
        self.notes: list[str] = []
        self.more_notes = 0
        self.missing_eof = False
        self._zero_width: dict[int, bool] = {}
        self._value_key = None
        self._value_scale = None
        self.aperture_lines: dict[int, tuple[int, int]] = {}   # id(aperture) -> (D number, line)

    # -- the common case fast: a linear D01 (a trace segment, or a region contour point) is handled
    #    here with what gerbonara would do for it, minus its per-statement checks that cannot fire
    #    (those cases go to gerbonara: arcs, first point, zero-width apertures, image transforms kept)
    def _value(self, s):
        """A coordinate's digits as gerbonara's parse_gerber_value reads them: the same decimal
        string, its float taken as an exact integer ratio (Python's int division rounds correctly,
        as float() of the decimal string does), without building the string."""
        fs = self.file_settings
        key = self._value_key
        if key is None or fs.zeros is not key[0] or fs.number_format is not key[1]:
            self._value_key = (fs.zeros, fs.number_format)
            self._value_scale = None
            digits = fs.number_format or (2, 5)
            if None not in digits:
                if fs.zeros == "leading":
                    self._value_scale = ("leading", digits[1]) if digits[1] else None
                else:
                    self._value_scale = ("trailing", digits[0])
        mode = self._value_scale
        if mode is None or not s.isdigit() or s == "00":
            return fs.parse_gerber_value(s)
        if mode[0] == "leading":
            return int(s) / 10 ** mode[1]
        return int(s + "0" * mode[1]) / 10 ** len(s)      # digits after the point: len(s)

    def _parse_coord(self, match):
        interp, x_s, x, y_s, y, i_s, i, j_s, j, op = match.groups()
        gs = self.graphics_state
        if gs.aperture is None and self.current_region is None:
            if op == "3":
                raise _Malformed("a flash (D03) before any aperture is selected (Dnn, nn >= 10)")
            if op == "1" or (op is None and (x or y) and self.last_operation == "1"):
                raise _Malformed("a draw (D01) before any aperture is selected (Dnn, nn >= 10)")
        if (op == "3" and interp is None and not i and not j and self.current_region is None
                and gs.point is not None and gs.unit is not None and gs.aperture is not None
                and not self.step_repeat_objects):
            return self._flash(x_s, x, y_s, y)
        if (op != "1" or i or j or gs.point is None or gs.unit is None or self.step_repeat_objects
                or (interp is None and gs.interpolation_mode is not _LINEAR)
                or (interp is not None and interp != "G01")):
            return super()._parse_coord(match)
        region = self.current_region
        if region is None:
            ap = gs.aperture
            if ap is None:
                return super()._parse_coord(match)
            zero = self._zero_width.get(id(ap))
            if zero is None:
                zero = self._zero_width[id(ap)] = math.isclose(ap.equivalent_width(), 0)
            if zero:
                return super()._parse_coord(match)
        elif region.unit is not gs.unit:
            return super()._parse_coord(match)
        x, y = self._signed(x_s, x), self._signed(y_s, y)
        self.last_operation = "1"
        if interp is not None:
            gs.interpolation_mode = _LINEAR
        old = gs.point
        new = gs.point = (old[0] if x is None else x, old[1] if y is None else y)
        if gs._mat is None:
            gs._update_xform()
        a, b, c, d = gs._mat
        ox, oy = gs.image_offset
        old = (a * old[0] + b * old[1] + ox, c * old[0] + d * old[1] + oy)   # as map_coord does
        new = (a * new[0] + b * new[1] + ox, c * new[0] + d * new[1] + oy)
        if region is None:
            self.target.objects.append(go.Line(old[0], old[1], new[0], new[1], ap, polarity_dark=gs._polarity_dark,
                                               unit=gs.unit, attrs=dict(gs.object_attrs)))
        else:
            if not region.outline:
                region.outline.append(old)
            region.outline.append(new)
            region.arc_centers.append(None)

    def _signed(self, sign, digits):
        """One coordinate word's value with its sign, or None when the word is absent."""
        if not digits:
            return None
        v = self._value(digits)
        return -v if sign else v

    def _flash(self, x_s, x, y_s, y):
        """D03 outside a region, as gerbonara's GraphicsState.flash builds it."""
        gs = self.graphics_state
        x, y = self._signed(x_s, x), self._signed(y_s, y)
        self.last_operation = "3"
        old = gs.point
        px, py = gs.point = (old[0] if x is None else x, old[1] if y is None else y)
        if gs._mat is None:
            gs._update_xform()
        a, b, c, d = gs._mat
        ox, oy = gs.image_offset
        self.target.objects.append(go.Flash(a * px + b * py + ox, c * px + d * py + oy, gs.aperture,
                                            polarity_dark=gs._polarity_dark, unit=gs.unit,
                                            attrs=dict(gs.object_attrs)))

    # -- apertures: checked here so that a bad definition or selection is named in our words
    _SHAPE_PARAMS = {"C": ("circle", 1, 2), "R": ("rectangle", 2, 3), "O": ("obround", 2, 3),
                     "P": ("polygon", 2, 4)}

    def _parse_aperture_definition(self, match):
        number, shape, mods = int(match["number"]), match["shape"], match["modifiers"]
        if number < 10:
            raise _Malformed(f"aperture number D{number}: apertures are numbered from D10")
        values = []
        for word in (mods.strip(" ,").split("X") if mods and mods.strip(" ,") else []):
            try:
                values.append(float(word))
            except ValueError:
                raise _Malformed(f"aperture D{number}: parameter {word!r} is not a number") from None
            if not math.isfinite(values[-1]):
                raise _Malformed(f"aperture D{number}: parameter {word!r} is not a finite number")
        if shape in self._SHAPE_PARAMS:
            name, lo, hi = self._SHAPE_PARAMS[shape]
            if not lo <= len(values) <= hi:
                raise _Malformed(f"aperture D{number}: a {name} ({shape}) takes {lo} to {hi} "
                                 f"parameters, {len(values)} given")
            if any(v < 0 for v in values[:1 if shape in "CP" else 2]) or (shape == "P" and values[1] < 3):
                raise _Malformed(f"aperture D{number}: a {name} with a negative size"
                                 + (" or fewer than 3 vertices" if shape == "P" else ""))
        elif shape not in self.aperture_macros:
            raise _Malformed(f"aperture D{number} uses the macro {shape!r}, which no AM statement "
                             "before it defines")
        super()._parse_aperture_definition(match)
        self.aperture_lines[id(self.aperture_map[number])] = (number, self.lineno)

    def _parse_aperture(self, match):
        number = int(match["number"])
        if number < 10:
            raise _Malformed(f"D{number} is not a valid D code (D01, D02 and D03 are operations "
                             "and come after coordinates; apertures are numbered from D10)")
        if number not in self.aperture_map and not (number == 10 and "zuken" in self.generator_hints):
            raise _Malformed(f"aperture D{number} is selected but never defined (no %ADD{number}...*% "
                             "before it)")
        super()._parse_aperture(match)

    def _parse_attribute(self, match):
        if not match["name"] and match["type"] != "TD":
            raise _Malformed(f"a {match['type']} attribute statement without an attribute name")
        if match["type"] != "TD" and match["value"] is None:
            # a named attribute without a value: read as one empty field
            match = re.match(self.STATEMENT_REGEXES["attribute"], f"{match['type']}{match['name']},")
        if match["type"] == "TD" and match["name"]:
            name = match["name"]
            if name not in self.graphics_state.object_attrs and name not in self.aperture_attrs:
                return   # deleting what was never set, or a file attribute: nothing to do
        super()._parse_attribute(match)

    # statements gerbonara does not know: those that would change the image are refused; others
    # (job attributes, unknown extended commands, a lone unknown G code) are noted and skipped
    _DATA_STATEMENT = re.compile(r"^(?:G0*\d+)?\s*(?:[XYIJ][+-]?[\d.]|[XYIJ].*D0*\d+$)")
    _IMAGE_STATEMENT = re.compile(r"^(FS|MO|LP|LM|LR|LS|AD|AM|SR|AB|IP|OF|SF|MI|IR|AS)")

    def _unknown_statement(self, stmt: str) -> None:
        m = re.search(r"D0*(\d+)$", stmt)
        if m and re.match(r"^(?:G0*\d+)?\s*(?:[XYIJ][+-]?\d{1,14})*D", stmt) and int(m[1]) in (0, 4, 5, 6, 7, 8, 9):
            raise _Malformed(f"D{int(m[1]):02d} is not an operation code (D01 draw, D02 move, D03 flash)")
        if re.search(r"\d{15}", stmt):
            raise _Malformed("a coordinate word of more than 14 digits")
        m = self._IMAGE_STATEMENT.match(stmt)
        if m:
            if m[1] == "AB":
                raise _Malformed("block apertures (AB) are not supported by this reader")
            raise _Malformed(f"the {m[1]} statement cannot be read")
        m = re.match(r"^G0*(\d+)(.*)$", stmt)
        if m and m[2].strip():
            raise _Malformed(f"G{int(m[1]):02d} with data after it: not a G code of the Gerber format")
        if self._DATA_STATEMENT.search(stmt):
            raise _Malformed("coordinate data that cannot be read (X, Y, I, J words of digits "
                             "with an optional sign, then D01, D02 or D03)")

    # -- warnings: kept on the parser (a few, for the layer's notes), not through the warnings
    #    module: some files raise one per coordinate statement
    def warn(self, msg, kls=SyntaxWarning):
        if msg.startswith("Unknown statement found"):
            self._unknown_statement(self.line or "")
        if "missing mandatory M02" in msg:
            self.missing_eof = True
        elif len(self.notes) < 20:
            self.notes.append(f"line {self.lineno}: {msg}")
        else:
            self.more_notes += 1

    # -- step and repeat: record blocks, expand later (and only after the count check)
    def _close_sr(self):
        if self.sr_open is None:
            return
        start, offsets = self.sr_open
        end = len(self.target.objects)
        self.sr_open = None
        if len(offsets) > 1 and end > start:
            self.sr_extra += (len(offsets) - 1) * (end - start)
            total = len(self.target.objects) + self.sr_extra
            if total > self.limits.max_step_repeat_objects:
                raise _LimitExceeded(
                    f"step-and-repeat of {len(offsets)} copies x {end - start} objects would make "
                    f"{total} graphic objects, over the limit of {self.limits.max_step_repeat_objects}")
            vertices = sum(len(o.outline) for o in self.target.objects[start:end] if isinstance(o, go.Region))
            self.sr_extra_vertices += (len(offsets) - 1) * vertices
            if self.sr_extra_vertices > self.limits.max_step_repeat_vertices:
                raise _LimitExceeded(
                    f"step-and-repeat of {len(offsets)} copies x {vertices} region vertices would add "
                    f"{self.sr_extra_vertices} vertices, over the limit of "
                    f"{self.limits.max_step_repeat_vertices}")
            depth = _overlap_depth(self.target.objects[start:end], offsets)
            if depth > MAX_SR_OVERLAP:
                raise _LimitExceeded(
                    f"step-and-repeat copies lie on top of each other {depth} deep (the step is far "
                    f"smaller than the repeated block), over the limit of {MAX_SR_OVERLAP}")
            self.sr_blocks.append(_SRBlock(start, end, offsets))

    def _parse_step_repeat(self, match):
        self._close_sr()   # a new SR statement also ends the block before it
        if match["coords"]:
            nx, ny = int(match["X"]), int(match["Y"])
            i, j = float(match["I"]), float(match["J"])
            if nx < 1 or ny < 1:
                raise SyntaxError("SR step-repeat X and Y values must be at least 1")
            if nx * ny > self.limits.max_step_repeat_objects:
                raise _LimitExceeded(
                    f"step-and-repeat of {nx} x {ny} copies is over the limit of "
                    f"{self.limits.max_step_repeat_objects} graphic objects")
            # the spec's order: y varies fastest within each x column
            self.sr_open = (len(self.target.objects), [(i * a, j * b) for a in range(nx) for b in range(ny)])
        self.step_repeat_coords = None
        self.step_repeat_objects = None

    def _parse_eof(self, match):
        self._close_sr()
        super()._parse_eof(match)

    # -- deprecated image polarity: apply once to the whole image, at the end
    def _parse_image_polarity(self, match):
        self.image_negative = match["polarity"] == "NEG"

    # -- X2 attributes hidden in comments, lenient attribute deletion
    _COMMENT_ATTR = re.compile(r"#@!\s*(?P<body>T[FAOD].*)$")

    def _parse_comment(self, match):
        m = self._COMMENT_ATTR.match(match["comment"].strip())
        if m:
            am = re.match(self.STATEMENT_REGEXES["attribute"], m["body"].rstrip("*"))
            if am:
                self._parse_attribute(am)
                return
        super()._parse_comment(match)

    # -- aperture transformations (gerbonara 1.5.0 has none)
    def _update_transform(self):
        if self.mirror == "N" and self.rotation_deg == 0.0 and self.scale == 1.0:
            self.aperture_transform = None
        else:
            self.aperture_transform = (self.mirror, self.rotation_deg, self.scale)

    def _parse_load_mirroring(self, match):
        self.mirror = match["mirror"]
        self._update_transform()

    def _parse_load_rotation(self, match):
        self.rotation_deg = float(match["angle"])
        self._update_transform()

    def _parse_load_scaling(self, match):
        self.scale = float(match["scale"])
        self._update_transform()


# ----------------------------------------------------------------------------------------------
# reading the text

_BINARY_CHARS = re.compile(rb"[\x00-\x08\x0e-\x1f\x7f]")


def _read_text(path: Path, limits: InputLimits, kind: str) -> str:
    try:
        size = path.stat().st_size
    except OSError as e:
        raise InputError(f"cannot read {kind} file: {e.strerror}", path=str(path)) from None
    if size > limits.max_file_bytes:
        raise InputError(f"{kind} file is {size} bytes, over the limit of {limits.max_file_bytes}",
                         path=str(path))
    try:
        data = path.read_bytes()
    except OSError as e:
        raise InputError(f"cannot read {kind} file: {e.strerror}", path=str(path)) from None
    sample = data[:65536]
    if sample and len(_BINARY_CHARS.findall(sample)) > max(2, len(sample) // 1000):
        raise InputError(f"not a {kind} file (binary data)", path=str(path))
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


_X2_ESCAPE = re.compile(r"\\u([0-9a-fA-F]{4})")


def _unescape(value: str) -> str:
    """X2 attribute values escape characters as \\uXXXX (e.g. '*' as \\u002A)."""
    return _X2_ESCAPE.sub(lambda m: chr(int(m[1], 16)), value)


def _attrs(obj) -> dict:
    """An object's X2 attributes (gerbonara's Region has a class-level placeholder, not a dict)."""
    a = obj.__dict__.get("attrs")
    return a if isinstance(a, dict) else {}


def _attr_fields(attrs: dict, name: str) -> tuple[str, ...] | None:
    v = attrs.get(name)
    if v is None:
        return None
    return tuple(_unescape(str(x)) for x in v)


_LINE_IN_MESSAGE = re.compile(r":(\d+) \"")


# One statement's text between its delimiters (* or %). Real statements are short (none in the
# corpus or the real boards reaches 2,000 characters); the parser's statement splitter takes time
# that grows with the square of an unterminated run (40,000 characters: 6 s), so a longer run is
# refused before parsing.
MAX_STATEMENT_CHARS = 10_000
_LONG_STATEMENT = re.compile(r"[^*%%]{%d}" % (MAX_STATEMENT_CHARS + 1))


def _check_statement_length(path: Path, text: str) -> None:
    m = _LONG_STATEMENT.search(text)
    if m is not None:
        raise InputError(f"a statement runs past {MAX_STATEMENT_CHARS} characters without its end "
                         "('*' or '%')", path=str(path), line=text.count("\n", 0, m.start()) + 1)


def _parse(path: Path, text: str, limits: InputLimits) -> tuple[GerberFile, _Parser, list[str]]:
    _check_statement_length(path, text)
    target = GerberFile()
    parser = _Parser(target, limits)
    target.objects = _ObjectList(parser)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")      # the parser's own warnings go to parser.notes
        try:
            parser.parse(text, filename=path.name)
            parser._close_sr()
        except _LimitExceeded as e:
            raise InputError(str(e), path=str(path), line=parser.lineno or None) from None
        except _Malformed as e:
            raise _statement_error(path, parser, str(e)) from None
        except SyntaxError as e:
            cause = e.__cause__
            if isinstance(cause, _LimitExceeded):
                raise InputError(str(cause), path=str(path), line=_line_of(e, parser)) from None
            if isinstance(cause, _Malformed):
                raise _statement_error(path, parser, str(cause)) from None
            raise _statement_error(path, parser, _reason(cause if cause is not None else e)) from None
        except RecursionError:
            raise InputError("Gerber file too deeply nested", path=str(path)) from None
        except Exception as e:  # gerbonara raises assorted types on malformed input
            raise _statement_error(path, parser, _reason(e)) from None
    if parser.missing_eof:
        raise InputError("Gerber file ends without M02: truncated or incomplete", path=str(path))
    notes = list(parser.notes)
    if parser.more_notes:
        notes.append(f"... and {parser.more_notes} more parser warnings")
    if target.unit is None and len(target.objects) == 0 and "%FS" not in text and "%MO" not in text:
        raise InputError("not a Gerber file (no format or unit statement, no graphics)", path=str(path))
    return target, parser, notes


# gerbonara's messages for malformed statements, in the project's words (its text never reaches
# the user: a message not listed here gets the general wording)
_REASONS = [
    (r"does not contain a unit definition", "graphics before the unit statement (%MOMM*% or %MOIN*%)"),
    (r"Interpolation attempted without selecting aperture", "a draw (D01) before any aperture is selected"),
    (r"i/j coordinates given for linear", "I/J offsets on a linear draw (I and J belong to arcs, G02/G03)"),
    (r"G74/G75 combined with coord", "G74/G75 with coordinates (the quadrant mode stands alone)"),
    (r"Ambiguous coordinate statement", "coordinates without an operation code (D01, D02 or D03) after a move or flash"),
    (r"DO3 flash statement inside region", "a flash (D03) inside a region (G36 ... G37)"),
    (r"different coordinate formats for X and Y", "the format statement gives X and Y different digit counts"),
    (r"Region end command \(G37\) outside", "G37 ends a region that no G36 started"),
    (r"TD attribute deletion command must not contain", "an attribute deletion (TD) with values"),
    (r"Attempt to TD delete file attribute", "an attribute deletion (TD) of a file attribute"),
    (r"SR step-repeat called inside", "a step and repeat (SR) opened inside another"),
    (r"SR step-repeat X and Y values", "a step and repeat (SR) with fewer than one copy"),
    (r"Unknown aperture macro primitive code (\d+)", "an aperture macro primitive code {0} (the format defines 0, 1, 4, 5, 6, 7, 20, 21, 22)"),
    (r"aperture macro expression|parsing variable definition", "an aperture macro expression that cannot be read"),
    (r"include", "an include statement (IF), which this reader does not follow"),
    (r"image_polarity|image_rotation", "an image polarity or rotation value the format does not define"),
]


def _reason(e: BaseException) -> str:
    text = str(e)
    for pattern, reason in _REASONS:
        m = re.search(pattern, text)
        if m:
            return reason.format(*m.groups())
    return "a statement that cannot be read as the Gerber format defines it"


def _statement_error(path: Path, parser: _Parser, reason: str) -> InputError:
    stmt = _one_line(parser.line or "")
    if len(stmt) > 60:
        stmt = stmt[:57] + "..."
    where = f"malformed statement {stmt!r}: " if stmt else "malformed statement: "
    return InputError(where + reason, path=str(path), line=parser.lineno or None)


def _one_line(text: str) -> str:
    return " ".join(text.split())[:300]


def _line_of(e: Exception, parser: _Parser) -> int | None:
    m = _LINE_IN_MESSAGE.search(str(e))
    if m:
        return int(m[1])
    return parser.lineno or None


# ----------------------------------------------------------------------------------------------
# geometry


class _Shapes:
    """Aperture shapes in mm, computed once per aperture (and per LM/LR/LS transformation)."""

    def __init__(self, tol_mm: float):
        self.tol = tol_mm
        self._cache: dict = {}

    def get(self, aperture, transform=None) -> shp.ApertureInfo:
        key = (id(aperture), transform)
        info = self._cache.get(key)
        if info is None:
            try:
                info = aperture_info(aperture, self.tol)
                if transform is not None:
                    info = _transformed(info, transform, self.tol)
            except (ValueError, TypeError, IndexError, KeyError, ZeroDivisionError, OverflowError,
                    AttributeError, shapely.errors.GEOSException) as e:
                raise _ApertureFailure(aperture, e) from None
            self._cache[key] = (info, aperture)   # keep the aperture alive: ids stay unique
            return info
        return info[0]


def _transformed(info: shp.ApertureInfo, transform, tol_mm: float) -> shp.ApertureInfo:
    mirror, rotation, scale = transform
    g = info.shape
    # order from memory of the specification: mirror, then rotate, then scale
    if mirror in ("X", "XY"):
        g = shapely.affinity.scale(g, -1.0, 1.0, origin=(0, 0))
    if mirror in ("Y", "XY"):
        g = shapely.affinity.scale(g, 1.0, -1.0, origin=(0, 0))
    if rotation:
        g = shapely.affinity.rotate(g, rotation, origin=(0, 0))
    if scale != 1.0:
        g = shapely.affinity.scale(g, scale, scale, origin=(0, 0))
    r = info.round_radius_mm * scale if info.round_radius_mm is not None else None
    simple = isinstance(g, Polygon) and not g.is_empty and len(g.interiors) == 0
    return shp.ApertureInfo(g, r, simple)


def arc_points(x1, y1, x2, y2, cx, cy, clockwise: bool, tol_mm: float) -> np.ndarray:
    """Chord points (n, 2) of a circular arc from (x1, y1) to (x2, y2) about (cx, cy) [mm].

    Equal start and end points make a full circle. The radius is interpolated between the start
    and end radii, which differ slightly in real files (coordinate rounding). The chord count keeps
    the sagitta r (1 - cos(dphi/2)) below ``tol_mm``; interior vertices sit slightly outside the
    arc so that the polyline encloses the same area as the arc (the end points are exact).
    """
    r1 = math.hypot(x1 - cx, y1 - cy)
    r2 = math.hypot(x2 - cx, y2 - cy)
    a1 = math.atan2(y1 - cy, x1 - cx)
    a2 = math.atan2(y2 - cy, x2 - cx)
    if clockwise:
        sweep = -((a1 - a2) % (2 * math.pi))
    else:
        sweep = (a2 - a1) % (2 * math.pi)
    if abs(sweep) < 1e-12:
        if math.hypot(x2 - x1, y2 - y1) < 1e-9:
            sweep = -2 * math.pi if clockwise else 2 * math.pi
        else:
            return np.array([(x1, y1), (x2, y2)])
    r = max(r1, r2)
    if r <= tol_mm:
        n = 2
    else:
        dphi = 2.0 * math.acos(max(-1.0, 1.0 - tol_mm / r))
        n = max(2, int(math.ceil(abs(sweep) / dphi)))
    n = min(n, 4096)
    t = np.linspace(0.0, 1.0, n + 1)
    ang = a1 + sweep * t
    rad = r1 + (r2 - r1) * t
    # interior vertices pushed out so that each chord's segment area balances: the polyline
    # then encloses the arc's area (sector area (phi/2) r^2 = (1/2) (k r)^2 sin(phi))
    phi = abs(sweep) / n
    if n > 1 and phi > 1e-9:
        rad[1:-1] *= math.sqrt(phi / math.sin(phi))
    pts = np.column_stack((cx + rad * np.cos(ang), cy + rad * np.sin(ang)))
    pts[0] = (x1, y1)
    pts[-1] = (x2, y2)
    return pts


# How much retracing an invalid region contour may have before its repair is refused: the sum,
# over the contour's segments drawn more than once, of n * (n - 1) for a segment drawn n times.
# Repairing (make_valid) costs time and memory growing with that sum: a segment drawn 4,000
# times took 6.5 s and 1.6 GB, 40,000 times (a fuzzed file) 12 GB. A writer's cut-ins draw a
# segment twice (2 each); a thousand of them are 2,000.
MAX_RETRACE = 1_000_000


class _RetracedContour(Exception):
    """A region contour that draws the same segments over and over: a damaged file."""


def _undirected(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Segments a[k] -> b[k] as rows (x1, y1, x2, y2) with the lesser end first, so that a
    segment drawn either way round gives the same row."""
    swap = (a[:, 0] > b[:, 0]) | ((a[:, 0] == b[:, 0]) & (a[:, 1] > b[:, 1]))
    return np.where(swap[:, None], np.hstack([b, a]), np.hstack([a, b]))


def _check_retrace(pts: np.ndarray) -> None:
    """Raise _RetracedContour when the closed contour ``pts`` retraces itself past MAX_RETRACE."""
    _, counts = np.unique(_undirected(pts, np.roll(pts, -1, axis=0)), axis=0, return_counts=True)
    counts = counts.astype(np.int64)
    work = int((counts * (counts - 1)).sum())
    if work > MAX_RETRACE:
        raise _RetracedContour(f"a region contour draws one segment {int(counts.max())} times over "
                               f"({len(pts)} vertices): a damaged file, not a shape that can be repaired "
                               "in bounded time")


def _repaired(pts) -> BaseGeometry:
    """The invalid contour ``pts`` [mm] made valid (cut-ins, touching rings), unless it retraces
    itself too much for that to be done in bounded time and memory."""
    _check_retrace(np.asarray(pts, dtype=float))
    return shp._polygonal(shapely.make_valid(Polygon(pts)))


def region_polygon(region: go.Region, f: float, tol_mm: float) -> BaseGeometry:
    """A region's contour (lines and arcs) as a valid shapely polygon [mm]."""
    outline = region.outline
    if len(outline) < 2:
        return EMPTY
    arcs = region.arc_centers
    if not any(a and a[0] is not None for a in arcs):
        pts = np.asarray(outline, dtype=float) * f
        if len(pts) < 3:
            return EMPTY
        poly = Polygon(pts)
        if not poly.is_valid:
            poly = _repaired(pts)
        return poly
    pts: list = [(outline[0][0] * f, outline[0][1] * f)]
    for k in range(1, len(outline)):
        x2, y2 = outline[k][0] * f, outline[k][1] * f
        arc = arcs[k - 1] if k - 1 < len(arcs) else None
        if arc and arc[0] is not None:
            clockwise, (cx, cy) = arc
            x1, y1 = pts[-1]
            pts.extend(arc_points(x1, y1, x2, y2, cx * f, cy * f, clockwise, tol_mm)[1:].tolist())
        else:
            pts.append((x2, y2))
    if len(pts) < 3:
        return EMPTY
    poly = Polygon(pts)
    if not poly.is_valid:
        poly = _repaired(pts)
    return poly


@dataclass
class _Run:
    dark: bool
    geoms: list            # shapely geometries
    nets: list             # net name or None, parallel to geoms


def _object_net(obj) -> str | None:
    attrs = _attrs(obj)
    v = _attr_fields(attrs, ".N") if attrs else None
    if v and v[0]:
        return v[0]
    return None


def _run_geometries(objs: list, shapes: _Shapes) -> tuple[list, list]:
    """Geometries [mm] of a list of objects of one polarity (order does not matter: they are unioned).

    Strokes with a round aperture that continue one another (the next starts where the last ended,
    same aperture, same net) are joined into one polyline and buffered once: the Minkowski sum of
    a polyline with a disc is the union of its segments' sums, with far fewer vertices to union.
    """
    tol = shapes.tol
    geoms: list = []
    nets: list = []
    flashes: dict = {}      # aperture key -> (info, [x], [y], [net])
    chains: dict = {}       # radius -> list of ([points], net)
    hull_lines: dict = {}   # aperture key -> (info, [x1,y1,x2,y2], [net])
    chain = None            # the open chain: [radius, net, points]

    def flush():
        nonlocal chain
        if chain is not None:
            chains.setdefault(chain[0], []).append((chain[2], chain[1]))
            chain = None

    for obj in objs:
        f = unit_factor(obj.unit)
        net = _object_net(obj)
        if isinstance(obj, go.Flash):
            tr = obj.__dict__.get("_lc_transform")
            info = shapes.get(obj.aperture, tr)
            if info.shape.is_empty:
                continue
            entry = flashes.get((id(obj.aperture), tr))
            if entry is None:
                entry = flashes[(id(obj.aperture), tr)] = (info, [], [], [])
            entry[1].append(obj.x * f)
            entry[2].append(obj.y * f)
            entry[3].append(net)
        elif isinstance(obj, (go.Line, go.Arc)):
            if obj.aperture is None:
                continue
            tr = obj.__dict__.get("_lc_transform")
            info = shapes.get(obj.aperture, tr)
            x1, y1, x2, y2 = obj.x1 * f, obj.y1 * f, obj.x2 * f, obj.y2 * f
            r = info.round_radius_mm
            if isinstance(obj, go.Arc):
                pts = arc_points(x1, y1, x2, y2, x1 + obj.cx * f, y1 + obj.cy * f, obj.clockwise, tol)
                if r is None:
                    if not info.shape.is_empty:
                        geoms.append(_swept_hull(info, pts))
                        nets.append(net)
                    continue
                new_pts = pts.tolist()
            else:
                if r is None:
                    if not info.shape.is_empty:
                        entry = hull_lines.setdefault((id(obj.aperture), tr), (info, [], []))
                        entry[1].append((x1, y1, x2, y2))
                        entry[2].append(net)
                    continue
                new_pts = [(x1, y1), (x2, y2)]
            if r <= 0:
                continue
            if (chain is not None and chain[0] == r and chain[1] == net
                    and abs(chain[2][-1][0] - x1) < 1e-9 and abs(chain[2][-1][1] - y1) < 1e-9):
                chain[2].extend(new_pts[1:])
            else:
                flush()
                chain = [r, net, list(new_pts)]
        elif isinstance(obj, go.Region):
            g = region_polygon(obj, f, tol)
            if not g.is_empty:
                geoms.append(g)
                nets.append(net)
    flush()
    for info, xs, ys, fnets in flashes.values():
        geoms.extend(_stamp(info.shape, info.simple, np.column_stack((xs, ys))))
        nets.extend(fnets)
    for r, items in chains.items():
        q = _stroke_quad_segs(r, tol)
        coords = np.concatenate([np.asarray(p, dtype=float) for p, _ in items])
        index = np.repeat(np.arange(len(items)), [len(p) for p, _ in items])
        lines = shapely.linestrings(coords, indices=index)
        chain_nets = [n for _, n in items]
        for net in dict.fromkeys(chain_nets):
            mine = lines[[k for k, n in enumerate(chain_nets) if n == net]] if len(set(chain_nets)) > 1 else lines
            merged = _merged_chains(mine)
            geoms.extend(shapely.buffer(merged, r, quad_segs=q).tolist())
            nets.extend([net] * len(merged))
    for info, segs, lnets in hull_lines.values():
        base = _outline_points(info.shape)
        a = np.asarray(segs, dtype=float)
        p1 = base[None, :, :] + a[:, None, 0:2]
        p2 = base[None, :, :] + a[:, None, 2:4]
        hulls = shapely.convex_hull(shapely.multipoints(np.concatenate((p1, p2), axis=1)))
        geoms.extend(hulls.tolist())
        nets.extend(lnets)
    return geoms, nets


def _merged_chains(lines: np.ndarray) -> np.ndarray:
    """Polylines of one width (and net) joined wherever exactly two of them meet end to end, in
    any order: a pour or a long trace drawn as thousands of strokes becomes a few paths, each
    buffered once (the union of the strokes is the same set; 110k -> 38k vertices to merge on a
    track-hatched corpus plane). Zero-length strokes (dots) are kept as they are."""
    lines = _without_retraces(lines)
    if len(lines) < 2:
        return lines
    dots = shapely.length(lines) == 0
    paths = lines[~dots]
    if len(paths) > 1:
        paths = shapely.get_parts(shapely.line_merge(shapely.multilinestrings(paths)))
    return np.concatenate((paths, lines[dots])) if dots.any() else paths


# retracing of one stroke polyline (the sum of n(n-1) over its segments drawn n > 1 times) past
# which it is taken apart into its distinct segments (a segment drawn 100 times); the 230 Gerber
# files of the corpus and the real and demo boards reach 164
MAX_STROKE_RETRACE = 10_000


def _without_retraces(lines: np.ndarray) -> np.ndarray:
    """Polylines that draw one of their segments more than once, replaced by their distinct
    segments (two-point lines, joined again by ``_merged_chains``). A round stroke is the union of
    its segments' sums with the disc, so the copper is the same set; but buffering a polyline that
    retraces itself n times costs memory growing with n^2 (a stroke drawn back and forth 40,000
    times ended in bad_alloc past 3 GB; found by fuzzing). Only polylines whose retracing passes
    MAX_STROKE_RETRACE (counted as for region contours) are changed; real files' strokes stay
    exactly as drawn."""
    if len(lines) == 0:
        return lines
    xy, owner = shapely.get_coordinates(lines, return_index=True)
    same = owner[1:] == owner[:-1]                      # consecutive points of one polyline
    a, b, who = xy[:-1][same], xy[1:][same], owner[1:][same]
    if len(who) < 2:
        return lines
    keys = np.column_stack((who, _undirected(a, b)))
    uniq, first, counts = np.unique(keys, axis=0, return_index=True, return_counts=True)
    counts = counts.astype(np.int64)
    work = np.bincount(uniq[:, 0].astype(np.int64), weights=counts * (counts - 1), minlength=len(lines))
    retracing = np.flatnonzero(work > MAX_STROKE_RETRACE)
    if len(retracing) == 0:
        return lines
    keep = np.ones(len(lines), dtype=bool)
    keep[retracing] = False
    once = np.sort(first[np.isin(uniq[:, 0], retracing)])   # each distinct segment, first drawn
    segments = shapely.linestrings(np.stack((a[once], b[once]), axis=1))
    return np.concatenate((lines[keep], segments))


def _stroke_quad_segs(r_mm: float, tol_mm: float) -> int:
    """Segments per quarter circle for a stroke's round ends and joins (at least 4).

    The buffer's arcs are inscribed, so a stroke's two end caps lose at most
    1 - (n / 2 pi) sin(2 pi / n) of pi r^2 (2.6 % for n = 16); the sides are exact.
    """
    return max(4, shp.segments_for_radius(r_mm, tol_mm) // 4)


def _outline_points(shape: BaseGeometry) -> np.ndarray:
    return np.asarray(shapely.get_coordinates(shape.convex_hull if not isinstance(shape, Polygon)
                                              else shape.exterior), dtype=float)


def _swept_hull(info: shp.ApertureInfo, pts: np.ndarray) -> BaseGeometry:
    """A non-round aperture dragged along a polyline: the union of per-segment convex hulls."""
    base = _outline_points(info.shape)
    parts = [shapely.MultiPoint(np.vstack((base + pts[k], base + pts[k + 1]))).convex_hull
             for k in range(len(pts) - 1)]
    return shapely.union_all(parts) if parts else EMPTY


def _stamp(shape: BaseGeometry, simple: bool, xy: np.ndarray) -> list:
    """Copies of ``shape`` translated to each row of ``xy`` [mm]."""
    if len(xy) == 0:
        return []
    if simple:
        base = np.asarray(shape.exterior.coords)
        return shapely.polygons(base[None, :, :] + xy[:, None, :]).tolist()
    k = len(shapely.get_coordinates(shape))
    copies = np.full(len(xy), shape, dtype=object)
    shift = np.repeat(xy, k, axis=0)
    return shapely.transform(copies, lambda c: c + shift).tolist()


def _runs(objs: list, shapes: _Shapes) -> list[_Run]:
    runs: list[_Run] = []
    start = 0
    for k in range(1, len(objs) + 1):
        if k == len(objs) or objs[k].polarity_dark != objs[start].polarity_dark:
            geoms, nets = _run_geometries(objs[start:k], shapes)
            runs.append(_Run(bool(objs[start].polarity_dark), geoms, nets))
            start = k
    return runs


class _Image:
    """The layer image: runs of one polarity in file order (dark adds, clear cuts what came
    before), composed once at the end; per-net copper kept."""

    def __init__(self):
        self.runs: list[tuple[bool, list]] = []
        self.net_parts: dict[str, list] = {}
        self.bounds = [math.inf, math.inf, -math.inf, -math.inf]
        self.cleared = False          # a clear run came after some dark copper
        self._has_dark = False
        self._run_no = 0
        self._last_clear = -1         # run number of the last clear run
        self._net_runs: dict[str, list[int]] = {}   # net -> run number of each of its parts
        self._clear: list = []        # clear shapes after some dark copper, and their run numbers
        self._clear_no: list[int] = []

    def apply(self, run: _Run, offset=(0.0, 0.0)):
        geoms = run.geoms
        if not geoms:
            return
        if offset != (0.0, 0.0):
            arr = np.array(geoms, dtype=object)
            geoms = shapely.transform(arr, lambda c: c + np.asarray(offset)).tolist()
        b = shapely.total_bounds(np.asarray(geoms, dtype=object))
        if not np.isfinite(b[0]):
            return
        self.bounds = [min(self.bounds[0], b[0]), min(self.bounds[1], b[1]),
                       max(self.bounds[2], b[2]), max(self.bounds[3], b[3])]
        self.runs.append((run.dark, geoms))
        self._run_no += 1
        if run.dark:
            self._has_dark = True
            for g, net in zip(geoms, run.nets):
                if net is not None:
                    parts = self.net_parts.get(net)
                    if parts is None:
                        parts = self.net_parts[net] = []
                        self._net_runs[net] = []
                    parts.append(g)
                    self._net_runs[net].append(self._run_no)
        elif self._has_dark:
            self.cleared = True
            self._last_clear = self._run_no
            self._clear.extend(geoms)
            self._clear_no.extend([self._run_no] * len(geoms))

    def net_copper(self, cut: bool = True) -> dict[str, BaseGeometry]:
        """Each X2 net's copper: its parts, each cut by the clear shapes that come after it in
        the file (and only those: a pad drawn in a clearance hole after the hole stays whole,
        and another net's copper drawn later never adds to this one's). ``cut=False`` (a
        negative image): the parts as drawn."""
        out: dict[str, BaseGeometry] = {}
        tree = clear = clear_no = None
        for net, parts in self.net_parts.items():
            runs = self._net_runs[net]
            if cut and runs[0] < self._last_clear:
                if tree is None:
                    clear = np.asarray(self._clear, dtype=object)
                    clear_no = np.asarray(self._clear_no)
                    tree = shapely.STRtree(clear)
                part_no = np.asarray(runs)
                pi, ci = tree.query(np.asarray(parts, dtype=object), predicate="intersects")
                later = clear_no[ci] > part_no[pi]
                pi, ci = pi[later], ci[later]
                if len(pi):
                    parts = list(parts)
                    for k in np.unique(pi).tolist():
                        hits = clear[ci[pi == k]]
                        parts[k] = shapely.difference(parts[k], hits[0] if len(hits) == 1
                                                      else shapely.union_all(hits))
            out[net] = fu.union_many(parts)
        return out

    def geometry(self) -> BaseGeometry:
        return fu.compose(self.runs)


def _build_image(objects: list, sr_blocks: list[_SRBlock], f_sr: float, shapes: _Shapes) -> _Image:
    image = _Image()
    pos = 0
    for block in sorted(sr_blocks, key=lambda b: b.start):
        for run in _runs(objects[pos:block.start], shapes):
            image.apply(run)
        block_runs = _runs(objects[block.start:block.end], shapes)
        if all(r.dark for r in block_runs):
            # all dark: one run per block, copies translated (order cannot matter)
            geoms = [g for r in block_runs for g in r.geoms]
            nets = [n for r in block_runs for n in r.nets]
            copies = _Run(True, [], [])
            for dx, dy in block.offsets:
                off = np.array((dx * f_sr, dy * f_sr))
                arr = np.array(geoms, dtype=object)
                moved = shapely.transform(arr, lambda c, off=off: c + off).tolist() if geoms else []
                copies.geoms.extend(moved)
                copies.nets.extend(nets)
            image.apply(copies)
        else:
            for dx, dy in block.offsets:
                for run in block_runs:
                    image.apply(run, (dx * f_sr, dy * f_sr))
        pos = block.end
    for run in _runs(objects[pos:], shapes):
        image.apply(run)
    return image


def _pin_flashes_and_values(objects: list, sr_blocks: list[_SRBlock], f_sr: float):
    pins: list[PinFlash] = []
    seen: set = set()
    values: dict[str, str] = {}
    footprints: dict[str, str] = {}
    copies = [((0.0, 0.0),)] * len(objects)
    for block in sr_blocks:
        for k in range(block.start, block.end):
            copies[k] = tuple(block.offsets)
    region_pins = []
    for k, obj in enumerate(objects):
        attrs = _attrs(obj)
        if not attrs:
            continue
        c = _attr_fields(attrs, ".C")
        cval = _attr_fields(attrs, ".CVal")
        if c and cval and c[0]:
            values.setdefault(c[0], ",".join(cval))
        cftp = _attr_fields(attrs, ".CFtp") or _attr_fields(attrs, ".CPkg")   # X3 footprint / package
        if c and cftp and c[0]:
            footprints.setdefault(c[0], ",".join(cftp))
        p = _attr_fields(attrs, ".P")
        if not p or len(p) < 2:
            continue
        net = _object_net(obj)
        function = p[2] if len(p) > 2 and p[2] else None
        f = unit_factor(obj.unit)
        if isinstance(obj, go.Flash):
            x, y = obj.x * f, obj.y * f
        elif isinstance(obj, go.Region) and obj.polarity_dark:
            g = region_polygon(obj, f, DEFAULT_TOL_MM)
            if g.is_empty:
                continue
            pt = g.centroid
            region_pins.append((p[0], p[1], net, pt.x, pt.y, function, copies[k]))
            continue
        else:
            continue
        for dx, dy in copies[k]:
            pins.append(PinFlash(p[0], p[1], net, x + dx * f_sr, y + dy * f_sr, function))
            seen.add((p[0], p[1]))
    for ref, pin, net, x, y, function, offs in region_pins:
        if (ref, pin) in seen:
            continue
        for dx, dy in offs:
            pins.append(PinFlash(ref, pin, net, x + dx * f_sr, y + dy * f_sr, function))
    return pins, values, footprints


def read_gerber(path, limits: InputLimits = DEFAULT_LIMITS, *, tol_mm: float = DEFAULT_TOL_MM,
                negative_extent: BaseGeometry | None = None) -> GerberLayer:
    """Read one Gerber layer into shapely geometry in mm.

    Parameters
    ----------
    path : the Gerber file
    limits : size and object-count limits for untrusted input
    tol_mm : chord tolerance (sagitta) for arcs and circles [mm] (default 0.005)
    negative_extent : the area a negative image is inverted within [mm]; default the bounding
        box of everything the file draws (what a photoplotter's film frame would show)

    Raises
    ------
    InputError : unreadable, truncated, malformed or over-limit files (one line, names the file)
    """
    path = Path(path)
    text = _read_text(path, limits, "Gerber")
    target, parser, notes = _parse(path, text, limits)
    objects = list(target.objects)
    shapes = _Shapes(tol_mm)
    f_sr = unit_factor(target.unit)
    try:
        image = _build_image(objects, parser.sr_blocks, f_sr, shapes)
        geometry = image.geometry()
        pins, values, footprints = _pin_flashes_and_values(objects, parser.sr_blocks, f_sr)
    except _ApertureFailure as e:
        number, line = parser.aperture_lines.get(id(e.aperture), (None, None))
        macro = getattr(getattr(e.aperture, "macro", None), "name", None)
        what = "divides by zero" if isinstance(e.cause, ZeroDivisionError) else "gives no shape that can be drawn"
        name = f"aperture D{number}" if number is not None else "an aperture"
        raise InputError(f"{name} {f'(macro {macro}) ' if macro else ''}{what}", path=str(path),
                         line=line) from None
    except (ValueError, TypeError, IndexError, KeyError, ZeroDivisionError) as e:
        raise InputError(f"cannot build the layer's geometry from its statements ({type(e).__name__})",
                         path=str(path)) from None
    except shapely.errors.GEOSException as e:
        raise InputError(f"geometry error while building the layer: {e}", path=str(path)) from None
    except _RetracedContour as e:
        raise InputError(str(e), path=str(path)) from None

    attributes = {}
    for name, value in target.file_attrs.items():
        key = name[1:] if name.startswith(".") else name
        attributes[key] = ",".join(_unescape(str(v)) for v in value)
    if parser.image_negative:
        attributes.setdefault("ImagePolarity", "Negative")

    function = attributes.get("FileFunction", "")
    negative = parser.image_negative or (
        function.lower().startswith(("copper", "plane")) and attributes.get("FilePolarity", "").lower() == "negative")
    if negative:
        if negative_extent is not None:
            frame = negative_extent
        elif math.isfinite(image.bounds[0]):
            frame = box(*image.bounds)
        else:
            frame = EMPTY
        geometry = shapely.difference(frame, geometry) if not frame.is_empty else EMPTY

    net_copper = image.net_copper(cut=not negative)

    return GerberLayer(
        path=str(path),
        geometry=geometry,
        attributes=attributes,
        net_copper=net_copper,
        pin_flashes=pins,
        component_values=values,
        component_footprints=footprints,
        object_count=len(objects) + parser.sr_extra,
        units="inch" if target.unit == Inch else "mm",
        negative=negative,
        chord_tolerance_mm=tol_mm,
        warnings=notes,
    )


# ----------------------------------------------------------------------------------------------
# board outline


def read_profile(path, limits: InputLimits = DEFAULT_LIMITS, *, join_tol_mm: float = 0.01,
                 tol_mm: float = DEFAULT_TOL_MM) -> Polygon:
    """The board outline from a profile / edge-cuts / outline layer, as a Polygon in mm.

    Drawn lines and arcs are taken along their centre lines, snapped together end to end within
    ``join_tol_mm`` and polygonised; the largest closed face is the board and closed paths inside
    it are its cut-outs (holes). An outline drawn as regions works too. A coarser snap (0.1 mm) is
    tried as well, and the larger closed board wins (some writers leave small gaps).

    Raises
    ------
    InputError : no closed outline in the file, or the file itself is bad
    """
    path = Path(path)
    text = _read_text(path, limits, "Gerber")
    target, parser, _notes = _parse(path, text, limits)
    objects = list(target.objects)
    f_sr = unit_factor(target.unit)
    offsets_of = [((0.0, 0.0),)] * len(objects)
    for block in parser.sr_blocks:
        for k in range(block.start, block.end):
            offsets_of[k] = tuple(block.offsets)
    lines, regions = [], []
    seg_xy, seg_off, seg_at = [], [], []   # straight lines, built in one vectorised call
    for k, obj in enumerate(objects):
        f = unit_factor(obj.unit)
        if isinstance(obj, go.Line):
            x1, y1, x2, y2 = obj.x1 * f, obj.y1 * f, obj.x2 * f, obj.y2 * f
            if abs(x1 - x2) <= 1e-8 + 1e-5 * abs(x2) and abs(y1 - y2) <= 1e-8 + 1e-5 * abs(y2):
                continue      # zero length (the tolerance numpy's allclose used)
            for dx, dy in offsets_of[k]:
                seg_xy.append((x1, y1, x2, y2))
                seg_off.append((dx * f_sr, dy * f_sr))
                seg_at.append(len(lines))
                lines.append(None)      # filled below, file order kept
            continue
        elif isinstance(obj, go.Arc):
            x1, y1 = obj.x1 * f, obj.y1 * f
            pts = arc_points(x1, y1, obj.x2 * f, obj.y2 * f, x1 + obj.cx * f, y1 + obj.cy * f,
                             obj.clockwise, tol_mm)
        elif isinstance(obj, go.Region) and obj.polarity_dark:
            try:
                g = region_polygon(obj, f, tol_mm)
            except _RetracedContour as e:
                raise InputError(str(e), path=str(path)) from None
            for dx, dy in offsets_of[k]:
                regions.append(shapely.affinity.translate(g, dx * f_sr, dy * f_sr))
            continue
        else:
            continue
        for dx, dy in offsets_of[k]:
            lines.append(shapely.LineString(pts + np.array((dx * f_sr, dy * f_sr))))
    if len(lines) > limits.max_profile_segments:
        raise InputError(f"the outline layer draws {len(lines)} lines and arcs, over the limit of "
                         f"{limits.max_profile_segments} for an outline", path=str(path))
    if seg_xy:
        a = np.asarray(seg_xy, dtype=float) + np.tile(np.asarray(seg_off, dtype=float), 2)
        for at, ln in zip(seg_at, shapely.linestrings(a.reshape(-1, 2, 2)).tolist()):
            lines[at] = ln

    try:
        return _profile_polygon(lines, regions, join_tol_mm)
    except shapely.errors.GEOSException as e:
        raise InputError(f"geometry error while joining the outline: {e}", path=str(path)) from None
    except ValueError as best_empty:
        raise InputError(str(best_empty), path=str(path)) from None


def _profile_polygon(lines: list, regions: list, join_tol_mm: float) -> Polygon:
    best: BaseGeometry = EMPTY
    for grid in (join_tol_mm, 0.1):
        # a coarser snap can close gaps some writers leave (0.025 mm seen in real files); keep
        # whichever closes the larger board
        if not lines:
            break
        snapped = shapely.set_precision(np.array(lines, dtype=object), grid)
        # a line drawn again adds nothing to the outline, but noding n copies of it costs n^2
        # (20,000 copies of two lines reached 23.8 GB in 96 s; found by fuzzing): each line once, either way round
        _, once = np.unique(shapely.to_wkb(shapely.normalize(snapped)), return_index=True)
        snapped = snapped[np.sort(once)]
        noded = shapely.union_all(snapped)
        faces = list(shapely.polygonize([noded]).geoms) if not noded.is_empty else []
        faces = [p for p in faces if p.area > 0]
        if faces:
            candidate = _outer_with_cutouts(faces)
            if candidate.area > best.area * 1.01:
                best = candidate
    if regions:
        reg = shp._polygonal(shapely.union_all(regions))
        reg_best = max(getattr(reg, "geoms", [reg]), key=lambda p: p.area) if not reg.is_empty else EMPTY
        if reg_best.area > best.area:
            best = reg_best
    drawn_bounds = shapely.total_bounds(np.array(lines + regions, dtype=object)) if (lines or regions) else None
    if best.is_empty:
        raise ValueError("no closed board outline in this layer (its lines do not join into a closed path"
                         f"{_gap_hint(lines, join_tol_mm)})")
    # the board spans the drawing; a small closed loop inside an open outline is not the board
    drawn_box = box(*drawn_bounds) if drawn_bounds is not None and np.isfinite(drawn_bounds[0]) else EMPTY
    if not drawn_box.is_empty and box(*best.bounds).area < 0.25 * drawn_box.area:
        raise ValueError("no closed board outline in this layer (the drawn outline is open): the largest closed path spans "
                         f"{box(*best.bounds).area:.1f} of {drawn_box.area:.1f} mm2 of the drawing"
                         f"{_gap_hint(lines, join_tol_mm)}")
    return best


def _gap_hint(lines: list, grid: float) -> str:
    """Where the drawn path stops: the first line end that no other line meets."""
    if not lines:
        return ""
    arr = np.asarray(lines, dtype=object)
    first = shapely.get_coordinates(shapely.get_point(arr, 0))
    last = shapely.get_coordinates(shapely.get_point(arr, -1))
    keys = np.rint(np.column_stack((first, last)).reshape(-1, 2) / grid).astype(np.int64)
    # file order of first appearance, as the dictionary it replaces kept
    uniq, first_at, counts = np.unique(keys, axis=0, return_index=True, return_counts=True)
    odd_rows = np.flatnonzero(counts % 2)
    odd = [tuple(uniq[r]) for r in odd_rows[np.argsort(first_at[odd_rows], kind="stable")]]
    odd = [(int(a), int(b)) for a, b in odd]
    if not odd:
        return ""
    x, y = odd[0][0] * grid, odd[0][1] * grid
    return f"; an open end at x={x:.3f} y={y:.3f} mm"


def _outer_with_cutouts(faces: list) -> Polygon:
    """The largest face is the board; faces inside it that are not already holes become cut-outs."""
    faces = sorted(faces, key=lambda p: p.area, reverse=True)
    board = Polygon(faces[0].exterior)
    holes = []
    for p in faces[1:]:
        if board.contains(p.representative_point()):
            holes.append(Polygon(p.exterior))
    if holes:
        board = shapely.difference(board, shapely.union_all(holes))
        if board.geom_type == "MultiPolygon":
            board = max(board.geoms, key=lambda p: p.area)
    return board


# ----------------------------------------------------------------------------------------------
# sniffing

_GERBER_HINTS = re.compile(r"%FS[LTD]?[AI]|%MO(MM|IN)|%ADD\d+|G0?4[ *]|%TF\.")
_GERBER_OPS = re.compile(r"D0?[123]\*|M0?2\*|%ADD\d+")


def text_head(path, size: int = 65536) -> str | None:
    """The first ``size`` bytes of a file as text, or None when it is unreadable, empty or
    binary (a NUL byte): the cheap look that the format sniffers share."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(size)
    except OSError:
        return None
    if not head or b"\x00" in head:
        return None
    return head.decode("latin-1")


def sniff_gerber(path) -> bool:
    """Cheap content check: does the file start like a Gerber file? (reads at most 64 KB)"""
    text = text_head(path)
    if text is None:
        return False
    if re.search(r"^\s*M48\s*$", text, re.M):      # an Excellon header
        return False
    return bool(_GERBER_HINTS.search(text)) and bool(_GERBER_OPS.search(text))
