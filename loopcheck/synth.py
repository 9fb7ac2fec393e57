"""Write fab outputs (Gerber X2 copper and profile, Excellon, IPC-D-356A) from a Python board.

The demo boards and many tests describe a board as plain dataclasses (components with pads,
traces, pours, vias) and let :func:`write_fab` turn it into the files a fab would receive. The
files follow the open standards, not any design program's habits:

- Gerber X2: "The Gerber Layer Format Specification", Ucamco, revision 2023.08 (X2 file
  attributes ``%TF%``, aperture attributes ``%TA%``, object attributes ``%TO%``; the X3
  component attribute ``%TO.CVal%``). Coordinates ``%FSLAX46Y46*%`` in mm (``%MOMM*%``) or
  inch (``%MOIN*%``).
- Excellon: the drill format as read by every fab, with a metric header, one tool per
  diameter and the Gerber X2 file attributes carried in ``; #@!`` comments (the convention
  the Gerber specification describes for drill files).
- IPC-D-356A, "Bare Substrate Electrical Test Data Format", IPC, 1998: fixed 80-column
  records (column table in :mod:`loopcheck.readers.ipc356`), 317 records for through pads and
  vias, 327 for surface pads, 389 for the board edge, 999 at the end.

Coordinates are board coordinates in mm, x right, y up, seen from the top. Copper layers are
numbered 1 (top) to N (bottom), as in the Gerber ``Copper,L<n>`` file function.

Pads are axis-aligned: ``w_mm`` is the extent along x and ``h_mm`` along y, so a rotated
part is described by swapping them. Clearances are the caller's business: a pour's
``holes`` are written as clear-polarity regions right after the pour, and whatever the caller
draws later (traces, pads, vias) is dark on top of it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .fileio import write_atomic

Point = tuple[float, float]

GENERATOR = "loopcheck,synth,0.1"
ROUND_Y = ("size", "blank", "zero")                       # netlist_round_y choices
LONG_NAMES = ("alias", "alias-short", "alias-comment", "cut", "cut-unique")   # netlist_long_names


@dataclass
class SynthPad:
    """One pad of a component. With ``hole_mm`` it is a plated through pad on every layer.

    ``pin`` fits the 4 columns IPC-D-356 gives it; ``x_mm``, ``y_mm`` [mm] the pad centre;
    ``w_mm`` [mm] extent along x (the diameter of a circle), ``h_mm`` [mm] along y.
    """

    pin: str
    net: str
    x_mm: float
    y_mm: float
    w_mm: float
    h_mm: float
    layer: str = "top"            # "top" or "bottom"; ignored for a through pad
    hole_mm: float | None = None  # drilled diameter of a plated through pad
    shape: str = "rect"           # "rect", "circle" (diameter w_mm) or "obround"


@dataclass
class SynthComponent:
    """A component: ``ref`` (at most 6 characters, the IPC-D-356 field), ``value`` ("10uF")
    written as the X3 ``%TO.CVal%`` attribute, and its pads."""

    ref: str
    value: str
    pads: list[SynthPad] = field(default_factory=list)


@dataclass
class SynthTrace:
    """A track of round-ended segments along ``points`` [mm] on copper layer ``layer``
    (1 = top), ``width_mm`` [mm] wide."""

    net: str
    layer: int
    width_mm: float
    points: list[Point]


@dataclass
class SynthPour:
    """A copper area: ``polygon`` (outer ring, [mm]) minus ``holes`` (rings, [mm]), on copper
    layer ``layer`` (1 = top). Written as a G36/G37 region, the holes as clear regions."""

    net: str
    layer: int
    polygon: list[Point]
    holes: list[list[Point]] = field(default_factory=list)


@dataclass
class SynthVia:
    """A plated through via at ``x_mm``, ``y_mm`` [mm], drilled ``drill_mm`` [mm], with a round
    pad of ``pad_mm`` [mm] on every copper layer."""

    net: str
    x_mm: float
    y_mm: float
    drill_mm: float
    pad_mm: float


@dataclass
class SynthBoard:
    """A whole board. Give ``width_mm`` and ``height_mm`` (a rectangle from the origin) or
    ``outline`` (a closed ring of points; the first point need not be repeated)."""

    name: str
    width_mm: float | None = None
    height_mm: float | None = None
    layer_count: int = 2
    components: list[SynthComponent] = field(default_factory=list)
    traces: list[SynthTrace] = field(default_factory=list)
    pours: list[SynthPour] = field(default_factory=list)
    vias: list[SynthVia] = field(default_factory=list)
    outline: list[Point] | None = None

    def outline_points(self) -> list[Point]:
        if self.outline:
            pts = [(float(x), float(y)) for x, y in self.outline]
            if pts[0] == pts[-1]:
                pts = pts[:-1]
            return pts
        if self.width_mm is None or self.height_mm is None:
            raise ValueError(f"board {self.name!r}: give width_mm and height_mm, or outline")
        w, h = float(self.width_mm), float(self.height_mm)
        return [(0.0, 0.0), (w, 0.0), (w, h), (0.0, h)]


# ----------------------------------------------------------------------------------------------
# pours with clearance (a help for describing boards; write_fab itself never moves copper)


def _pad_shape(pad: SynthPad):
    from shapely.geometry import LineString, Point as ShapelyPoint, box
    if pad.shape == "circle":
        return ShapelyPoint(pad.x_mm, pad.y_mm).buffer(pad.w_mm / 2, quad_segs=32)
    if pad.shape == "obround" and abs(pad.w_mm - pad.h_mm) > 1e-12:
        r = min(pad.w_mm, pad.h_mm) / 2
        dx, dy = (pad.w_mm / 2 - r, 0.0) if pad.w_mm > pad.h_mm else (0.0, pad.h_mm / 2 - r)
        return LineString([(pad.x_mm - dx, pad.y_mm - dy),
                           (pad.x_mm + dx, pad.y_mm + dy)]).buffer(r, quad_segs=32)
    if pad.shape == "obround":
        return ShapelyPoint(pad.x_mm, pad.y_mm).buffer(pad.w_mm / 2, quad_segs=32)
    return box(pad.x_mm - pad.w_mm / 2, pad.y_mm - pad.h_mm / 2,
               pad.x_mm + pad.w_mm / 2, pad.y_mm + pad.h_mm / 2)


def copper_shapes(board: SynthBoard, layer: int) -> list[tuple[str, object]]:
    """(net, shapely geometry in mm) of every trace, pad and via on copper layer ``layer``
    (1 = top), pours left out."""
    from shapely.geometry import LineString, Point as ShapelyPoint
    out: list[tuple[str, object]] = []
    for t in board.traces:
        if t.layer == layer:
            out.append((t.net, LineString(t.points).buffer(t.width_mm / 2, quad_segs=32)))
    for comp in board.components:
        for pad in comp.pads:
            if layer in _pad_layers(pad, board.layer_count):
                out.append((pad.net, _pad_shape(pad)))
    for via in board.vias:
        out.append((via.net, ShapelyPoint(via.x_mm, via.y_mm).buffer(via.pad_mm / 2, quad_segs=32)))
    return out


def pours_with_clearance(board: SynthBoard, net: str, layer: int, polygon: list[Point],
                         clearance_mm: float, holes: list[list[Point]] = ()) -> list[SynthPour]:
    """A pour of ``net`` on ``layer`` over ``polygon``, kept ``clearance_mm`` [mm] away from the
    board's traces, pads and vias of other nets on that layer (as they stand when called).

    Returns one SynthPour per separate piece (a pour cut in two by a trace is two pieces);
    append them to ``board.pours``. Curved clearances are polygons of 32 segments a quarter.
    """
    from shapely.geometry import Polygon, MultiPolygon
    from shapely.ops import unary_union
    area = Polygon(polygon, [list(h) for h in holes])
    others = [g for n, g in copper_shapes(board, layer) if n != net]
    if others:
        area = area.difference(unary_union(others).buffer(clearance_mm, quad_segs=32))
    pieces = area.geoms if isinstance(area, MultiPolygon) else ([area] if not area.is_empty else [])
    out = []
    for piece in pieces:
        if piece.is_empty or piece.geom_type != "Polygon":
            continue
        out.append(SynthPour(net, layer, [tuple(c) for c in piece.exterior.coords[:-1]],
                             [[tuple(c) for c in ring.coords[:-1]] for ring in piece.interiors]))
    return out


# ----------------------------------------------------------------------------------------------
# file names


def layer_file_name(name: str, index: int, layer_count: int) -> str:
    """``NAME-copper-L1-top.gbr``, ``NAME-copper-L2-inner.gbr``, ``NAME-copper-L4-bottom.gbr``."""
    if index == 1:
        where = "top"
    elif index == layer_count:
        where = "bottom"
    else:
        where = "inner"
    return f"{name}-copper-L{index}-{where}.gbr"


def _file_function(index: int, layer_count: int) -> str:
    side = "Top" if index == 1 else ("Bot" if index == layer_count else "Inr")
    return f"Copper,L{index},{side}"


# ----------------------------------------------------------------------------------------------
# Gerber X2


def _x2_field(text: str) -> str:
    r"""Escape an attribute field: ``,`` ``*`` ``%`` and ``\`` may not appear in a field; the
    Gerber specification (section 3.4.3) writes them as ``\uXXXX``."""
    out = []
    for ch in str(text):
        if ch in ",*%\\" or ord(ch) < 32:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return "".join(out)


class _GerberWriter:
    """Collects apertures and graphics for one Gerber X2 file and renders it."""

    def __init__(self, file_function: str, units: str, same_coordinates: str,
                 polarity: str = "Positive"):
        if units not in ("mm", "inch"):
            raise ValueError(f"gerber_units must be 'mm' or 'inch', not {units!r}")
        self.units = units
        self.header = [
            f"%TF.GenerationSoftware,{GENERATOR}*%",
            f"%TF.FileFunction,{file_function}*%",
            f"%TF.FilePolarity,{polarity}*%",
            # The field is optional in the specification; gerbonara 1.5 needs it.
            f"%TF.SameCoordinates,{_x2_field(same_coordinates)}*%",
            "%FSLAX46Y46*%",
            "%MOMM*%" if units == "mm" else "%MOIN*%",
            "%LPD*%",
        ]
        self.apertures: dict[tuple, int] = {}
        self.aperture_lines: list[str] = []
        self.body: list[str] = []
        self.current_aperture: int | None = None
        self.object_attrs: dict[str, str] = {}

    # numbers -----------------------------------------------------------------------------
    def _len(self, mm: float) -> str:
        v = mm if self.units == "mm" else mm / 25.4
        return f"{v:.6f}".rstrip("0").rstrip(".") or "0"

    def _xy(self, x_mm: float, y_mm: float) -> str:
        scale = 1.0 if self.units == "mm" else 1 / 25.4
        return f"X{round(x_mm * scale * 1e6)}Y{round(y_mm * scale * 1e6)}"

    # apertures ---------------------------------------------------------------------------
    def aperture(self, shape: str, w_mm: float, h_mm: float | None, function: str) -> int:
        if shape == "circle" or (shape == "obround" and h_mm is not None and abs(w_mm - h_mm) < 1e-9):
            key = ("C", self._len(w_mm), None, function)
        elif shape == "rect":
            key = ("R", self._len(w_mm), self._len(h_mm), function)
        elif shape == "obround":
            key = ("O", self._len(w_mm), self._len(h_mm), function)
        else:
            raise ValueError(f"unknown pad shape {shape!r} (rect, circle or obround)")
        if key not in self.apertures:
            code = 10 + len(self.apertures)
            self.apertures[key] = code
            self.aperture_lines.append(f"%TA.AperFunction,{function}*%")
            if key[0] == "C":
                self.aperture_lines.append(f"%ADD{code}C,{key[1]}*%")
            else:
                self.aperture_lines.append(f"%ADD{code}{key[0]},{key[1]}X{key[2]}*%")
            self.aperture_lines.append("%TD*%")
        return self.apertures[key]

    def _select(self, code: int) -> None:
        if code != self.current_aperture:
            self.body.append(f"D{code}*")
            self.current_aperture = code

    # object attributes ---------------------------------------------------------------------
    def attrs(self, **attrs: str | None) -> None:
        """Set exactly these object attributes (``N``, ``P``, ``C``, ``CVal``), deleting others."""
        wanted = {k: v for k, v in attrs.items() if v is not None}
        if wanted == self.object_attrs:
            return
        if self.object_attrs:
            self.body.append("%TD*%")
        for key, value in wanted.items():
            self.body.append(f"%TO.{key},{value}*%")
        self.object_attrs = wanted

    # graphics ----------------------------------------------------------------------------
    def flash(self, code: int, x_mm: float, y_mm: float) -> None:
        self._select(code)
        self.body.append(f"{self._xy(x_mm, y_mm)}D03*")

    def stroke(self, code: int, points: list[Point], closed: bool = False) -> None:
        if len(points) < 2:
            raise ValueError("a trace needs at least two points")
        self._select(code)
        self.body.append(f"{self._xy(*points[0])}D02*")
        for p in points[1:]:
            self.body.append(f"{self._xy(*p)}D01*")
        if closed:
            self.body.append(f"{self._xy(*points[0])}D01*")

    def region(self, ring: list[Point], clear: bool = False) -> None:
        if len(ring) < 3:
            raise ValueError("a region needs at least three points")
        pts = list(ring)
        if pts[0] == pts[-1]:
            pts = pts[:-1]
        if clear:
            self.body.append("%LPC*%")
        self.body.append("G36*")
        self.body.append(f"{self._xy(*pts[0])}D02*")
        for p in pts[1:]:
            self.body.append(f"{self._xy(*p)}D01*")
        self.body.append(f"{self._xy(*pts[0])}D01*")
        self.body.append("G37*")
        if clear:
            self.body.append("%LPD*%")

    def render(self) -> str:
        lines = list(self.header) + self.aperture_lines + ["G01*", "G75*"] + self.body
        if self.object_attrs:
            lines.append("%TD*%")
        lines.append("M02*")
        return "\n".join(lines) + "\n"


def _ring_area(ring: list[Point]) -> float:
    """Signed area of a ring [mm2] (shoelace formula)."""
    return 0.5 * sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(ring, ring[1:] + ring[:1]))


def _pad_layers(pad: SynthPad, layer_count: int) -> list[int]:
    if pad.hole_mm is not None:
        return list(range(1, layer_count + 1))
    if pad.layer == "top":
        return [1]
    if pad.layer == "bottom":
        return [layer_count]
    raise ValueError(f"pad {pad.pin}: layer must be 'top' or 'bottom', not {pad.layer!r}")


def _copper_layer_text(board: SynthBoard, index: int, units: str) -> str:
    n = board.layer_count
    g = _GerberWriter(_file_function(index, n), units, board.name)
    # Pours first with their clear holes, so that the traces and pads written after them are
    # dark on top (a clear region clears everything drawn before it on the layer). Larger pours
    # first, so that an island standing in another pour's hole is written after that hole.
    layer_pours = [p for p in board.pours if p.layer == index]
    layer_pours.sort(key=lambda p: -abs(_ring_area(p.polygon)))
    for pour in layer_pours:
        g.attrs(N=_x2_field(pour.net))
        g.body.append("%TA.AperFunction,Conductor*%")
        g.region(pour.polygon)
        g.body.append("%TD.AperFunction*%")
        if pour.holes:
            g.attrs()
            for hole in pour.holes:
                g.region(hole, clear=True)
    for trace in board.traces:
        if trace.layer != index:
            continue
        code = g.aperture("circle", trace.width_mm, None, "Conductor")
        g.attrs(N=_x2_field(trace.net))
        g.stroke(code, trace.points)
    for comp in board.components:
        for pad in comp.pads:
            if index not in _pad_layers(pad, n):
                continue
            function = "ComponentPad" if pad.hole_mm is not None else "SMDPad,CuDef"
            code = g.aperture(pad.shape, pad.w_mm, pad.h_mm, function)
            g.attrs(P=f"{_x2_field(comp.ref)},{_x2_field(pad.pin)}", N=_x2_field(pad.net),
                    C=_x2_field(comp.ref), CVal=_x2_field(comp.value) if comp.value else None)
            g.flash(code, pad.x_mm, pad.y_mm)
    for via in board.vias:
        code = g.aperture("circle", via.pad_mm, None, "ViaPad")
        g.attrs(N=_x2_field(via.net))
        g.flash(code, via.x_mm, via.y_mm)
    return g.render()


def _profile_text(board: SynthBoard, units: str) -> str:
    g = _GerberWriter("Profile,NP", units, board.name)
    code = g.aperture("circle", 0.05, None, "Profile")
    g.stroke(code, board.outline_points(), closed=True)
    return g.render()


# ----------------------------------------------------------------------------------------------
# Excellon


def _drill_text(board: SynthBoard) -> str:
    holes: list[tuple[float, float, float, str]] = []   # x, y, diameter, function
    for comp in board.components:
        for pad in comp.pads:
            if pad.hole_mm is not None:
                holes.append((pad.x_mm, pad.y_mm, pad.hole_mm, "ComponentDrill"))
    for via in board.vias:
        holes.append((via.x_mm, via.y_mm, via.drill_mm, "ViaDrill"))
    tools: dict[tuple[str, str], int] = {}
    for _, _, d, function in holes:
        key = (f"{d:.3f}", function)
        if key not in tools:
            tools[key] = len(tools) + 1
    lines = [
        "M48",
        f"; #@! TF.GenerationSoftware,{GENERATOR}",
        f"; #@! TF.FileFunction,Plated,1,{board.layer_count},PTH",
        "; #@! TF.FilePolarity,Positive",
        "FMAT,2",
        "METRIC,TZ",
    ]
    for (d, function), t in tools.items():
        lines.append(f"; #@! TA.AperFunction,Plated,PTH,{function}")
        lines.append(f"T{t:02d}C{d}")
    lines += ["%", "G05"]   # absolute coordinates are the default
    for (d, function), t in tools.items():
        lines.append(f"T{t:02d}")
        for x, y, dia, fn in holes:
            if (f"{dia:.3f}", fn) == (d, function):
                lines.append(f"X{x:.3f}Y{y:.3f}")
    lines.append("M30")
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------------------------
# IPC-D-356A


class _Ipc356Writer:
    """Formats IPC-D-356A records in the standard's fixed columns (1-based, inclusive)."""

    def __init__(self, units: str, offset_mm: Point, mirror: bool, round_y: str = "size",
                 long_names: str = "alias"):
        if units not in ("mm", "inch"):
            raise ValueError(f"netlist_units must be 'mm' or 'inch', not {units!r}")
        if round_y not in ROUND_Y:
            raise ValueError(f"netlist_round_y must be one of {', '.join(ROUND_Y)}, not {round_y!r}")
        if long_names not in LONG_NAMES:
            raise ValueError(f"netlist_long_names must be one of {', '.join(LONG_NAMES)}, not {long_names!r}")
        self.round_y = round_y
        self.long_names = long_names
        self.cut: dict[str, str] = {}
        self.units = units
        # CUST 1: SI, coordinates in 0.001 mm; CUST 0: inch, coordinates in 0.0001 inch.
        self.per_mm = 1000.0 if units == "mm" else 10000.0 / 25.4
        self.dx, self.dy = offset_mm
        self.mirror = mirror
        self.aliases: dict[str, str] = {}
        self.comments: list[str] = []

    def net_field(self, net: str) -> str:
        if self.long_names in ("cut", "cut-unique"):
            return self._cut_name(net)
        if len(net) <= 14 and " " not in net:
            return net
        if net not in self.aliases:
            k = len(self.aliases) + 1
            self.aliases[net] = {"alias": f"NNAME{k}", "alias-short": f"M{k:04d}",
                                 "alias-comment": f"m{k:04d}"}[self.long_names]
        return self.aliases[net]

    def _cut_name(self, net: str) -> str:
        """A writer without aliases: upper case, ``?`` for anything but printable ASCII, the
        last 14 characters; "cut-unique" makes a repeated tail unique as its last 10 + ``#n``."""
        if net in self.cut:
            return self.cut[net]
        name = "".join(ch if 33 <= ord(ch) <= 126 else "?" for ch in net).upper()[-14:]
        if self.long_names == "cut-unique" and name in self.cut.values():
            base, k = name[-10:], 1
            while f"{base}#{k}" in self.cut.values():
                k += 1
            name = f"{base}#{k}"
        self.cut[net] = name
        return name

    def alias_records(self) -> list[str]:
        if self.long_names == "alias-comment":
            return [f"C  NNAME{alias} {net}"[:80] for net, alias in self.aliases.items()]
        if self.long_names == "alias-short":
            return [f"P  NNAME{alias:<6}{net}"[:80] for net, alias in self.aliases.items()]
        return [f"P  {alias:<11}{net}"[:80] for net, alias in self.aliases.items()]

    def _n(self, mm: float) -> int:
        return round(mm * self.per_mm)

    def _size(self, mm: float | None, what: str) -> str:
        if mm is None:
            return "    "
        v = self._n(mm)
        if v > 9999:
            self.comments.append(f"C  {what} {mm:.3f} mm exceeds the 4-digit field; written as 9999")
            v = 9999
        return f"{v:4d}"

    def _coord(self, mm: float) -> str:
        v = self._n(mm)
        if abs(v) > 999999:
            raise ValueError(f"coordinate {mm} mm does not fit the 6-digit IPC-D-356 field")
        return ("-" if v < 0 else "+") + f"{abs(v):06d}"

    def place(self, x_mm: float, y_mm: float) -> Point:
        if self.mirror:
            x_mm = -x_mm
        return x_mm + self.dx, y_mm + self.dy

    def test_record(self, *, code: str, net: str, ref: str, pin: str, hole_mm: float | None,
                    access: int, x_mm: float, y_mm: float, w_mm: float | None,
                    h_mm: float | None, rotation: int = 0, soldermask: int = 0,
                    round_feature: bool = False) -> str:
        if len(ref) > 6:
            raise ValueError(f"reference {ref!r} is longer than the 6 columns IPC-D-356 gives it")
        if len(pin) > 4:
            raise ValueError(f"pin {pin!r} of {ref} is longer than the 4 columns IPC-D-356 gives it")
        x, y = self.place(x_mm, y_mm)
        cols = [" "] * 80
        def put(col: int, text: str) -> None:   # col is 1-based, as in the standard
            cols[col - 1:col - 1 + len(text)] = list(text)
        put(1, code)
        put(4, f"{self.net_field(net):<14}")
        put(21, f"{ref:<6}")
        put(27, "-")
        put(28, f"{pin:<4}")
        if hole_mm is not None:
            put(33, "D" + self._size(hole_mm, f"hole of {ref}.{pin}").replace(" ", "0") + "P")
        put(39, f"A{access:02d}")
        put(42, "X" + self._coord(x))
        put(50, "Y" + self._coord(y))
        put(58, "X" + self._size(w_mm, f"pad width of {ref}.{pin}").replace(" ", "0"))
        if round_feature and self.round_y == "blank":
            put(63, "Y    ")
        elif round_feature and self.round_y == "zero":
            put(63, "Y0000")
        else:
            put(63, "Y" + self._size(h_mm, f"pad height of {ref}.{pin}").replace(" ", "0"))
        put(68, f"R{rotation:03d}")
        put(73, f"S{soldermask}")
        return "".join(cols).rstrip()

    def _free_records(self, head: str, cont: str, words: list[str]) -> list[str]:
        """Free-form X/Y words after a fixed head, wrapped at 80 columns on ``cont`` lines."""
        lines = []
        current = head
        for word in words:
            if len(current) + 1 + len(word) > 80:
                lines.append(current)
                current = cont
            current += " " + word
        lines.append(current)
        return lines

    def _point_words(self, points: list[Point]) -> list[str]:
        words = []
        for px, py in points:
            x, y = self.place(px, py)
            words.append(f"X{self._n(x)}Y{self._n(y)}")
        return words

    def outline_records(self, points: list[Point]) -> list[str]:
        # 389 BOARD_EDGE (cols 4-17): the first X/Y word gives the line width, then the ring.
        words = ["X0000"] + self._point_words(list(points) + [points[0]])
        return self._free_records(f"389{'BOARD_EDGE':<14}    ", "089" + " " * 18, words)

    def conductor_records(self, trace: SynthTrace) -> list[str]:
        # 378: net in cols 4-17, "L" + layer in cols 19-21, then width and the path's points.
        head = f"378{self.net_field(trace.net):<14} L{trace.layer:02d}"
        words = [f"X{self._n(trace.width_mm):04d}"] + self._point_words(trace.points)
        return self._free_records(head, "078" + " " * 18, words)


def _netlist_text(board: SynthBoard, units: str, offset_mm: Point, mirror: bool,
                  conductors: bool = False, round_y: str = "size", long_names: str = "alias") -> str:
    w = _Ipc356Writer(units, offset_mm, mirror, round_y, long_names)
    n = board.layer_count
    records: list[str] = []
    for comp in board.components:
        for pad in comp.pads:
            h = pad.w_mm if pad.shape == "circle" else pad.h_mm
            if pad.hole_mm is not None:
                records.append(w.test_record(code="317", net=pad.net, ref=comp.ref, pin=pad.pin,
                                             hole_mm=pad.hole_mm, access=0, x_mm=pad.x_mm,
                                             y_mm=pad.y_mm, w_mm=pad.w_mm, h_mm=h,
                                             round_feature=pad.shape == "circle"))
            else:
                access = 1 if pad.layer == "top" else n
                records.append(w.test_record(code="327", net=pad.net, ref=comp.ref, pin=pad.pin,
                                             hole_mm=None, access=access, x_mm=pad.x_mm,
                                             y_mm=pad.y_mm, w_mm=pad.w_mm, h_mm=h,
                                             round_feature=pad.shape == "circle"))
    for via in board.vias:
        records.append(w.test_record(code="317", net=via.net, ref="VIA", pin="", hole_mm=via.drill_mm,
                                     access=0, x_mm=via.x_mm, y_mm=via.y_mm, w_mm=via.pad_mm,
                                     h_mm=via.pad_mm, round_feature=True))
    if conductors:
        for trace in board.traces:
            records += w.conductor_records(trace)
    records += w.outline_records(board.outline_points())
    head = [
        f"C  IPC-D-356A netlist of {board.name}, written by loopcheck synth 0.1",
        f"P  JOB {board.name}",
        "P  UNITS CUST 1" if units == "mm" else "P  UNITS CUST 0",
        f"P  TITLE {board.name}",
        "P  NUM 1",
        "P  REV A",
        "P  VER IPC-D-356A",
        "P  IMAGE PRIMARY",
    ]
    lines = head + w.alias_records() + w.comments + records + ["999"]
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------------------------


def _write_whole(path: Path, text: str) -> None:
    """Write the file whole or not at all; fab outputs are ASCII with LF line ends."""
    write_atomic(path, text.encode("ascii"))


def _check(board: SynthBoard) -> None:
    n = board.layer_count
    if n < 1:
        raise ValueError(f"board {board.name!r}: layer_count must be at least 1")
    for item in list(board.traces) + list(board.pours):
        if not 1 <= item.layer <= n:
            raise ValueError(f"board {board.name!r}: layer {item.layer} outside 1..{n} ({item.net})")
    board.outline_points()


def write_fab(board: SynthBoard, folder: str | Path, *, netlist_units: str = "mm",
              netlist_offset_mm: Point = (0.0, 0.0), netlist_mirror: bool = False,
              gerber_units: str = "mm", netlist: bool = True,
              netlist_conductors: bool = False, netlist_round_y: str = "size",
              netlist_long_names: str = "alias") -> dict[str, Path]:
    """Write the board's fab outputs into ``folder`` (created if missing).

    Parameters
    ----------
    board : the board description.
    folder : where the files go.
    netlist_units : "mm" (``UNITS CUST 1``) or "inch" (``UNITS CUST 0``) for the netlist.
    netlist_offset_mm : (dx, dy) [mm] added to every netlist coordinate, to make a netlist that
        does not line up with the copper (a test of the alignment check).
    netlist_mirror : write netlist x as -x before the offset (a netlist seen from the bottom).
    gerber_units : "mm" or "inch" for the Gerber files.
    netlist : False to leave the netlist out.
    netlist_conductors : also write each trace as a 378 conductor record.
    netlist_round_y : a round feature's (circle pad, via) Y size: "size" (written = X, the
        default), "blank" (left blank, as the standard allows) or "zero" (0, as some writers do).
    netlist_long_names : names longer than 14 characters (or with spaces): "alias" (the
        standard's ``P  NNAME<n>`` records, ``NNAME<n>`` in the net field; the default),
        "alias-short" (``P  NNAMEM<nnnn>`` and only ``M<nnnn>`` in the net field),
        "alias-comment" (the alias in a ``C  NNAMEm<nnnn>`` comment line, ``m<nnnn>`` in the
        field), "cut" (no aliases: every name upper-cased, non-printable characters as ``?``,
        cut to its last 14 characters, so two names with the same tail become one) or
        "cut-unique" (as "cut", but a repeated tail is made unique as its last 10 + ``#n``).

    Returns
    -------
    dict mapping "L1" ... "L<N>", "profile", "drill" and "netlist" to the written paths.
    """
    _check(board)
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    texts: dict[str, tuple[str, str]] = {}
    for i in range(1, board.layer_count + 1):
        texts[f"L{i}"] = (layer_file_name(board.name, i, board.layer_count),
                          _copper_layer_text(board, i, gerber_units))
    texts["profile"] = (f"{board.name}-profile.gbr", _profile_text(board, gerber_units))
    texts["drill"] = (f"{board.name}-plated.drl", _drill_text(board))
    if netlist:
        texts["netlist"] = (f"{board.name}-netlist.ipc",
                            _netlist_text(board, netlist_units, netlist_offset_mm, netlist_mirror,
                                          netlist_conductors, netlist_round_y, netlist_long_names))
    out: dict[str, Path] = {}
    for key, (name, text) in texts.items():
        path = folder / name
        _write_whole(path, text)
        out[key] = path
    return out
