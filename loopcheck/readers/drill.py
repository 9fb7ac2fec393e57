"""Excellon drill reader: holes and slots in mm, plated or not, through gerbonara.

gerbonara's ``ExcellonParser`` does the parsing (number formats, units, tool tables, routed slots
G00 / M15 / G01 / M16). This module adds what it lacks:
  * G85 canned slots (``X..Y..G85X..Y..``), rewritten before parsing into the routed form
    gerbonara understands (line numbers in errors still point at the original file); routed
    arcs (G02/G03, which gerbonara 1.5.0 fails on) become straight slots along their chords;
  * plating from X2-style comments (``; #@! TF.FileFunction,Plated,...`` / ``NonPlated``, tool
    attributes ``; #@! TA.AperFunction,Plated,...``), from gerbonara's own flag (the
    ``;TYPE=PLATED`` / ``;TYPE=NON_PLATED`` comments some exports write, tool-table notes), then from the file name
    (NPTH, unplated, non-plated -> not plated; PTH, plated -> plated);
  * drill data written as Gerber (flashes of round apertures), which some programs export.

A hole whose plating none of these settle counts as plated (common practice: drill files
without plating marks carry the plated holes), and the file's ``plated`` is then None.

References
----------
IPC-NC-349 (1985), "Computer numerical control formatting for drillers and routers" (the
Excellon format family); Ucamco, "The Gerber Layer Format Specification" 2023.08, 5.6.10
(.FileFunction Plated / NonPlated) and "XNC Format Specification" 2021 (G85 slots, X2 comments).
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

from gerbonara import graphic_objects as go
from gerbonara.excellon import ExcellonParser
from gerbonara.apertures import CircleAperture
from gerbonara.cam import FileSettings
from gerbonara.utils import MM, Inch

from ..board import Hole
from ..errors import InputError
from ..limits import DEFAULT_LIMITS, InputLimits
from . import drill_format
from .aperture_shapes import unit_factor
from .drill_format import DrillFormat
from .gerber import _read_text, sniff_gerber, text_head


@dataclass
class DrillFile:
    path: str
    holes: list[Hole]
    plated: bool | None                  # all plated / all not plated / mixed or unknown
    attributes: dict[str, str] = field(default_factory=dict)   # X2 file attributes in comments
    units: str = "mm"
    slot_count: int = 0
    notes: list[str] = field(default_factory=list)
    number_format: DrillFormat | None = None     # the format the file was read with
    # the plausible formats when neither the file, a parameter file beside it nor the caller
    # gave it: the file was read with the first; the board loader checks them against the copper
    format_candidates: list[DrillFormat] = field(default_factory=list)


_NPTH_NAME = re.compile(r"npth|non[-_ ]?plated|unplated|nonplated|[-_.]np[-_.]", re.I)
_PTH_NAME = re.compile(r"(?<![a-z])pth|plated", re.I)
_X2_COMMENT = re.compile(r"^;\s*(?:#@!\s*)?(?P<kind>TF|TA)\.?(?P<name>[A-Za-z][\w.]*),(?P<value>.*?)\*?%?\s*$")
_TOOL_DEF = re.compile(r"^T0*(?P<num>\d+)(?=[A-Z])(?:[A-BD-Z][\d.+-]*)*C")
_ROUTED_ARC = re.compile(r"^G0[23](?P<xy>(?:[XY][+-]?[\d.]*)+)(?:[AIJ][+-]?[\d.]*)+\s*$")
# a tool definition with feed, speed or other parameters besides C: only the diameter is kept
# (the parameters are machine settings, often written without a decimal point, which the
# number format would otherwise have to cover)
_TOOL_WITH_PARAMS = re.compile(r"^(?P<t>T\d+)(?P<params>(?:[A-Z][+-]?[\d.]*)*C[+-]?[\d.]+(?:[A-Z][+-]?[\d.]*)*)\s*$")
_G85 = re.compile(r"^(?P<a>(?:[XY][+-]?[\d.]*)+)G85(?P<b>(?:[XY][+-]?[\d.]*)+)\s*$")


def _plating_from_name(path: Path) -> bool | None:
    name = path.name
    if _NPTH_NAME.search(name):
        return False
    if _PTH_NAME.search(name):
        return True
    return None


def _plating_word(value: str) -> bool | None:
    v = value.split(",")[0].strip().lower()
    if v in ("plated",):
        return True
    if v in ("nonplated", "non-plated", "non_plated"):
        return False
    return None


def _prescan(lines: list[str]):
    """File attributes, per-tool plating from TA attributes, and G85 slots rewritten."""
    attributes: dict[str, str] = {}
    tool_plating: dict[int, bool] = {}
    pending: bool | None = None
    out: list[str] = []
    origin: list[int] = []      # original line number of each rewritten line
    arcs = 0
    for n, raw in enumerate(lines, start=1):
        line = raw.strip()
        m = _X2_COMMENT.match(line)
        if m:
            if m["kind"] == "TF":
                attributes[m["name"].lstrip(".")] = m["value"].strip()
            elif m["name"].lstrip(".") == "AperFunction":
                pending = _plating_word(m["value"])
        elif (t := _TOOL_DEF.match(line)) and pending is not None:
            tool_plating[int(t["num"])] = pending
        tp = _TOOL_WITH_PARAMS.match(line)
        if tp and not re.fullmatch(r"C[\d.]+", tp["params"]):
            c = re.search(r"C([+-]?[\d.]+)", tp["params"])
            out.append(f"{tp['t']}C{c[1]}")
            origin.append(n)
            continue
        g = _G85.match(line)
        if g:
            # a canned slot: route from the first point to the second with the current tool
            for stmt in (f"G00{g['a']}", "M15", f"G01{g['b']}", "M16", "G05"):
                out.append(stmt)
                origin.append(n)
            continue
        a = _ROUTED_ARC.match(line)
        if a:
            # gerbonara 1.5.0 fails on routed arcs; a slot is kept straight, so take the chord
            out.append(f"G01{a['xy']}")
            origin.append(n)
            arcs += 1
            continue
        out.append(raw)
        origin.append(n)
    return attributes, tool_plating, out, origin, arcs


def read_excellon(path, limits: InputLimits = DEFAULT_LIMITS, number_format: DrillFormat | None = None
                  ) -> DrillFile:
    """Read one drill file (Excellon, or drill data written as Gerber) into holes in mm.

    Parameters
    ----------
    path : the drill file
    limits : limits for untrusted input
    number_format : the format to read it with where the file does not say (the project file's
        words, or a candidate the board loader tries); None: the file, then a parameter file
        beside it (``nc_param.txt`` ...), then the most common habit, with the other plausible
        formats listed in ``format_candidates`` (see :mod:`loopcheck.readers.drill_format`)

    Raises
    ------
    InputError : unreadable, malformed or over-limit files (one line, names the file and line)
    """
    path = Path(path)
    text = _read_text(path, limits, "drill")
    if not sniff_excellon_text(text) and sniff_gerber(path):
        return _read_gerber_drill(path, limits)
    known = drill_format.in_file(text)
    if number_format is not None:
        known = number_format.merged(known) if number_format.source != "guessed" else \
            DrillFormat(number_format.units, number_format.integer_digits, number_format.decimal_digits,
                        number_format.zeros, "guessed")
    elif (side := drill_format.beside(path)) is not None:
        known = known.merged(side)
    digits_needed = drill_format.needs_digits(text)
    cands: list[DrillFormat] = []
    if known.units is None or (digits_needed and not known.has_digits and
                               not (known.integer_digits is not None and known.decimal_digits is not None)):
        cands = drill_format.candidates(known, digits_needed)
        known = cands[0]
    attributes, tool_plating, lines, origin, arcs = _prescan(text.splitlines())
    _check_repeats(path, lines, origin, limits)
    parser = ExcellonParser(_settings(known))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            parser.do_parse("\n".join(lines), filename=path.name)
        except Exception as e:  # gerbonara raises SyntaxError, ValueError, NameError ... on bad input
            line = None
            if parser.lineno is not None and 0 < parser.lineno <= len(origin):
                line = origin[parser.lineno - 1]
            raise InputError(_statement_error(e, parser, lines), path=str(path), line=line) from None
    if len(parser.objects) > limits.max_objects_per_layer:
        raise InputError(f"more than {limits.max_objects_per_layer} holes in one file (limit)", path=str(path))

    file_plating = _plating_word(attributes.get("FileFunction", "")) if "FileFunction" in attributes else None
    name_plating = _plating_from_name(path)
    tool_numbers = {id(tool): num for num, tool in parser.tools.items()}
    holes: list[Hole] = []
    slots = 0
    for obj in parser.objects:
        tool = obj.aperture
        f = unit_factor(obj.unit)
        d = tool.diameter * unit_factor(tool.unit) if tool.diameter is not None else 0.0
        plated = tool_plating.get(tool_numbers.get(id(tool), -1))
        if plated is None:
            plated = file_plating
        if plated is None:
            plated = tool.plated
        if plated is None:
            plated = name_plating
        if plated is None:
            plated = True
        if isinstance(obj, go.Flash):
            holes.append(Hole(obj.x * f, obj.y * f, d, bool(plated), None, str(path)))
        elif isinstance(obj, (go.Line, go.Arc)):
            # a routed slot; an arc is kept as its chord (rare in drill data)
            holes.append(Hole(obj.x1 * f, obj.y1 * f, d, bool(plated), (obj.x2 * f, obj.y2 * f), str(path)))
            slots += 1
    plated_set = {h.plated for h in holes}
    decided = file_plating is not None or name_plating is not None or any(
        t.plated is not None for t in parser.tools.values()) or bool(tool_plating)
    file_plated = plated_set.pop() if len(plated_set) == 1 and decided else None
    unit = parser.settings.unit
    notes = [f"{arcs} routed arcs (G02/G03) taken as straight slots along their chords"] if arcs else []
    return DrillFile(str(path), holes, file_plated, attributes,
                     units="inch" if unit is not None and unit_factor(unit) != 1.0 else "mm",
                     slot_count=slots, notes=notes, number_format=known, format_candidates=cands)


def _settings(fmt: DrillFormat) -> FileSettings | None:
    """gerbonara settings for a known format (statements in the file still apply on top)."""
    if fmt.units is None and fmt.integer_digits is None and fmt.decimal_digits is None:
        return None
    digits = (fmt.integer_digits, fmt.decimal_digits)
    if None in digits:
        digits = (None, None)
    settings = FileSettings(number_format=digits, zeros=fmt.zeros or "leading")
    if fmt.units is not None:
        settings.unit = MM if fmt.units == "mm" else Inch
    return settings


def _statement_error(exc: Exception, parser: ExcellonParser, lines: list[str]) -> str:
    """Our own words for a statement the parser refused (its exception text is not shown)."""
    cause = exc.__cause__ or exc
    text = str(cause)
    stmt = ""
    if parser.lineno is not None and 0 < parser.lineno <= len(lines):
        stmt = " ".join(lines[parser.lineno - 1].split())[:80]
    if m := re.search(r"Undefined tool index (\d+)", text):
        return f"tool T{m[1]} is selected but never defined in the header (statement {stmt!r})"
    if m := re.search(r"Unsupported FMAT format version (\w*)", text):
        return (f"FMAT,{m[1]}: only the FMAT,2 command set is read (statement {stmt!r}); "
                f"export the drill file in the current Excellon format")
    if "No number format set" in text:
        return (f"coordinates without a decimal point and no number format (statement {stmt!r}); give it "
                f"in the project file's [files], e.g. \"NAME\" = \"drill inch 2.4 omit-leading\"")
    if "Unknown excellon statement" in text:
        return f"statement not understood as Excellon: {stmt!r}"
    if "G93" in text or "zero set" in text:
        return f"a G93 zero-set with a non-zero offset is not supported (statement {stmt!r})"
    return f"statement not understood as Excellon: {stmt!r}"


_REPEAT = re.compile(r"R(\d+)")


def _check_repeats(path: Path, lines: list[str], origin: list[int], limits: InputLimits) -> None:
    """Refuse Excellon repeat codes (``R<n>X..Y..``: the last hole n more times) that would
    expand past the step-and-repeat limit before the parser expands them into memory."""
    total = 0
    for i, line in enumerate(lines):
        m = _REPEAT.match(line.strip())
        if m is None:
            continue
        total += int(m[1][:12])
        if total > limits.max_step_repeat_objects:
            raise InputError(f"repeat codes (R) would make more than {limits.max_step_repeat_objects} "
                             "holes (limit)", path=str(path), line=origin[i] if i < len(origin) else None)


def _read_gerber_drill(path: Path, limits: InputLimits) -> DrillFile:
    """Drill data written as Gerber: each flash of a round aperture is a hole, each stroke a slot."""
    from .gerber import _parse

    text = _read_text(path, limits, "drill")
    target, _parser, _notes = _parse(path, text, limits)
    attributes = {k.lstrip("."): ",".join(map(str, v)) for k, v in target.file_attrs.items()}
    plated = _plating_word(attributes.get("FileFunction", ""))
    if plated is None:
        plated = _plating_from_name(path)
    holes = []
    slots = 0
    for obj in target.objects:
        ap = getattr(obj, "aperture", None)
        if not isinstance(ap, CircleAperture):
            continue
        f = unit_factor(obj.unit)
        d = ap.diameter * unit_factor(ap.unit)
        if isinstance(obj, go.Flash):
            holes.append(Hole(obj.x * f, obj.y * f, d, True if plated is None else plated, None, str(path)))
        elif isinstance(obj, go.Line):
            holes.append(Hole(obj.x1 * f, obj.y1 * f, d, True if plated is None else plated,
                              (obj.x2 * f, obj.y2 * f), str(path)))
            slots += 1
    return DrillFile(str(path), holes, plated, attributes,
                     units="inch" if unit_factor(target.unit) != 1.0 else "mm", slot_count=slots)


_EXCELLON_HINTS = re.compile(r"^\s*(M48|M72|M71|METRIC|INCH|FMAT|T0*\d+C[\d.]+|;\s*DRILL|;\s*#@!\s*TF)", re.M)


def sniff_excellon_text(text: str) -> bool:
    head = text[:65536]
    if re.search(r"%FS[LTD]?[AI]|%MO(MM|IN)|%ADD", head):
        return False
    return bool(_EXCELLON_HINTS.search(head))


def sniff_excellon(path) -> bool:
    """Cheap content check: does the file look like an Excellon drill file? (reads 64 KB)"""
    text = text_head(path)
    return text is not None and sniff_excellon_text(text)
