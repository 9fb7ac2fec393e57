"""Copper islands against the netlist: which pads the copper really joins.

Copper islands are the polygons of each layer's geometry. Plated holes (drills) and plated
drilled pads of the netlist join the islands they pierce on every layer; the joined islands form
copper groups (union-find). How a netlist pad is put on an island depends on its kind, because
a record's size is not always its copper's (it may be the outer pad, the mask or paste opening):

- a plated drilled pad: the island under its centre on each layer; where no copper is under
  the centre (an inner layer whose unused pad was removed), only an island its hole touches;
- an unplated hole: joins nothing, and needs no copper; nor does a pad with neither net nor
  pin number (the way IPC-D-356 writers give mounting holes, connector shells, mechanical pads);
- a surface pad: one island on one outer layer (a record that says both sides, or an inner
  layer, is read on the outer layer it lands on); off copper, the island its size touches that
  is nearest its centre (not the one it overlaps most: at fine pitch that is the neighbour's).

Where the copper carries Gerber X2 net attributes (``.N``) they are a second opinion: a pad whose
centre is on another net's copper while its own net's copper lies within its size is put on its
own; where X2 still names another net, that is a finding of its own (``netlist-x2-mismatch``,
a warning). A surface part whose records put two or more pads on other nets' copper is read
mirrored, turned or on the other side when that puts every pad on its own net's copper (a
footprint not flipped for the bottom); the board's pads are replaced and an assumption says so.
A part's own copper that joins two of its nets on purpose (a net tie, a printed antenna's feed
and ground) is cut out and the board judged without it, when X2 gives that copper no net or,
without X2, its designator marks it; pads of one terminal at several places (a button's twin
pins) are joined by the part.

Findings (rule names as in the rule decks):

- ``netlist-open`` (error): one net's pads fall in more than one copper group;
- ``netlist-short`` (error): one copper group holds pads of two or more nets;
- ``netlist-alignment`` (error): netlist pads land on no copper, or on copper of the wrong nets. The
  offset, inch/mm scale or mirror that would align them is searched for and named; a transform is
  judged by the share of pads it puts on copper of their own net (on each island, the pads of its
  most common net count), because on a board of planes and pours a shifted pad still lands on
  *some* copper. When such a transform is found, or most pads land on no copper, opens and shorts
  are not judged (they would be noise) and ``aligned`` is False: measurement must stop;
- ``netlist-x2-mismatch`` (warning): the netlist and the copper's X2 net names disagree.

Pads with no net name (blank or N/C in the netlist) join copper but are never an open or a short.
What was decided without a finding is in ``ConnectivityResult.notes``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np
import shapely
import shapely.affinity
import shapely.ops
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from .board import Board, Pad
from .findings import Finding

RULE_OPEN = "netlist-open"
RULE_SHORT = "netlist-short"
RULE_ALIGNMENT = "netlist-alignment"
RULE_X2 = "netlist-x2-mismatch"

ALIGNED_MIN_FRACTION = 0.5      # below this share of pads on copper the netlist is misaligned
HINT_MIN_FRACTION = 0.9         # a transform is named when it lands at least this share ...
HINT_MIN_GAIN = 0.2             # ... and this much more than the netlist as given
SEARCH_MIN_UNLANDED = 0.1       # search for a transform when this share of pads is off copper
MAX_SAMPLE = 600                # pads used to score transforms
INCH_MM = 25.4


@dataclass
class CopperGroup:
    """Islands joined by copper, holes and pads; the pads that land on them."""

    id: int
    islands: list[tuple[int, int]] = field(default_factory=list)   # (layer index, island number)
    pads: list[int] = field(default_factory=list)                   # indices into board.pads

    def nets(self, board: Board) -> list[str]:
        return sorted({board.pads[i].net for i in self.pads if board.pads[i].net})


@dataclass
class Alignment:
    """A transform of netlist coordinates: (x, y) -> mirror, then scale about the origin, then offset."""

    scale: float = 1.0
    mirror_x_about: float | None = None     # x -> 2c - x
    mirror_y_about: float | None = None
    dx_mm: float = 0.0
    dy_mm: float = 0.0
    landed_fraction: float = 0.0            # share of sampled pads on copper of their own net, after
    baseline_fraction: float = 0.0          # ... and as given (the same measure)

    def apply(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        if self.mirror_x_about is not None:
            x = 2 * self.mirror_x_about - x
        if self.mirror_y_about is not None:
            y = 2 * self.mirror_y_about - y
        return x * self.scale + self.dx_mm, y * self.scale + self.dy_mm

    @property
    def is_identity(self) -> bool:
        return (self.scale == 1.0 and self.mirror_x_about is None and self.mirror_y_about is None
                and abs(self.dx_mm) < 1e-9 and abs(self.dy_mm) < 1e-9)

    def describe(self) -> str:
        parts = []
        if self.mirror_x_about is not None:
            parts.append(f"mirror x about x = {self.mirror_x_about:.3f} mm (a netlist seen from the bottom)")
        if self.mirror_y_about is not None:
            parts.append(f"mirror y about y = {self.mirror_y_about:.3f} mm")
        if self.scale != 1.0:
            if abs(self.scale - INCH_MM) < 1e-9:
                parts.append("scale by 25.4 (netlist coordinates are inches read as millimetres)")
            elif abs(self.scale - 1 / INCH_MM) < 1e-9:
                parts.append("scale by 1/25.4 (netlist coordinates are millimetres read as inches)")
            elif abs(self.scale - INCH_MM / 10) < 1e-9:
                parts.append("scale by 2.54 (netlist coordinates in 0.0001 inch read as 0.001 mm: "
                             "its UNITS record says mm but the numbers are inches)")
            elif abs(self.scale - 10 / INCH_MM) < 1e-9:
                parts.append("scale by 1/2.54 (netlist coordinates in 0.001 mm read as 0.0001 inch: "
                             "its UNITS record is missing or says inch but the numbers are mm)")
            else:
                parts.append(f"scale by {self.scale:g}")
        if abs(self.dx_mm) > 1e-9 or abs(self.dy_mm) > 1e-9:
            dx = self.dx_mm if abs(self.dx_mm) >= 5e-4 else 0.0
            dy = self.dy_mm if abs(self.dy_mm) >= 5e-4 else 0.0
            parts.append(f"offset by ({dx:+.3f}, {dy:+.3f}) mm")
        return ", then ".join(parts) if parts else "no change"


@dataclass
class ConnectivityResult:
    findings: list[Finding]
    checked: bool
    aligned: bool = True
    alignment_hint: str | None = None
    alignment: Alignment | None = None       # the transform found, when one was named
    not_checked_reason: str | None = None
    islands: dict[int, list[Polygon]] = field(default_factory=dict)      # layer index -> islands
    groups: list[CopperGroup] = field(default_factory=list)
    island_group: dict[tuple[int, int], int] = field(default_factory=dict)
    pad_islands: list[list[tuple[int, int]]] = field(default_factory=list)   # per board.pads index
    pad_group: list[int | None] = field(default_factory=list)
    landed_fraction: float = 1.0
    # what the check decided that is not a finding (a net tie's own copper set aside, pads that
    # need no copper), in plain words for the reports
    notes: list[str] = field(default_factory=list)
    # (pad index, layer index, X2 net names of the copper under the pad): the copper's own X2
    # net attribute names another net than the netlist does
    x2_disagreements: list[tuple[int, int, tuple[str, ...]]] = field(default_factory=list)
    x2_agreements: int = 0                   # pads whose copper's X2 net is the netlist's
    _pad_index: dict[Pad, int] = field(default_factory=dict, repr=False)

    def copper_group_of_pad(self, pad: Pad) -> int | None:
        """The copper group the pad lands on; None when it lands on no copper."""
        i = self._pad_index.get(pad)
        return None if i is None or not self.pad_group else self.pad_group[i]

    def island_of(self, pad: Pad, layer: int) -> Polygon | None:
        """The copper island under the pad on one layer (by layer index), or None."""
        i = self._pad_index.get(pad)
        if i is None:
            return None
        for lay, k in self.pad_islands[i]:
            if lay == layer:
                return self.islands[lay][k]
        return None

    def islands_of(self, pad: Pad) -> dict[int, Polygon]:
        """The copper island under the pad on each layer it lands on (layer index -> island)."""
        i = self._pad_index.get(pad)
        if i is None:
            return {}
        return {lay: self.islands[lay][k] for lay, k in self.pad_islands[i]}

    def group_copper(self, group: int) -> dict[int, BaseGeometry]:
        """The copper of one group, per layer index."""
        per_layer: dict[int, list[Polygon]] = {}
        for lay, k in self.groups[group].islands:
            per_layer.setdefault(lay, []).append(self.islands[lay][k])
        return {lay: shapely.union_all(polys) if len(polys) > 1 else polys[0]
                for lay, polys in sorted(per_layer.items())}


def net_copper(board: Board, result: ConnectivityResult, net: str) -> dict[int, BaseGeometry]:
    """The copper of a net, per layer index: every island of every group its pads land on.

    A net shorted to another shares that copper (the short is a finding of its own).
    """
    groups = sorted({result.pad_group[i] for i, p in enumerate(board.pads)
                     if p.net == net and result.pad_group[i] is not None})
    per_layer: dict[int, list[Polygon]] = {}
    for g in groups:
        for lay, k in result.groups[g].islands:
            per_layer.setdefault(lay, []).append(result.islands[lay][k])
    return {lay: shapely.union_all(polys) if len(polys) > 1 else polys[0]
            for lay, polys in sorted(per_layer.items())}


# --- the check -----------------------------------------------------------------------------

def _polygons(geom: BaseGeometry) -> list[Polygon]:
    if geom is None or geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    out = []
    for g in getattr(geom, "geoms", []):
        out.extend(_polygons(g))
    return [p for p in out if p.area > 0]


class _UnionFind:
    def __init__(self, n: int):
        self.parent = list(range(n))

    def find(self, a: int) -> int:
        root = a
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[a] != root:
            self.parent[a], a = root, self.parent[a]
        return root

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


class _Copper:
    """Islands and their STRtrees per layer, for point and shape queries."""

    def __init__(self, board: Board, islands: dict[int, list[Polygon]] | None = None):
        self.board = board
        self.layers = [layer.index for layer in board.layers]
        self.islands: dict[int, list[Polygon]] = {}
        self.trees: dict[int, shapely.STRtree] = {}
        self.offset: dict[int, int] = {}
        self.arrays: dict[int, np.ndarray] = {}
        n = 0
        for layer in board.layers:
            polys = _polygons(layer.geometry) if islands is None else islands[layer.index]
            self.islands[layer.index] = polys
            arr = np.array(polys, dtype=object)
            # a plane island can have 10^5 vertices: prepare it once, so that each point or hole
            # test against it is an indexed lookup rather than a walk around its boundary
            shapely.prepare(arr)
            self.arrays[layer.index] = arr
            self.trees[layer.index] = shapely.STRtree(polys)
            self.offset[layer.index] = n
            n += len(polys)
        self.count = n

    def without(self, bridges: list["_Bridge"]) -> "_Copper":
        """The same copper with each bridge's piece cut out of its island."""
        cut: dict[tuple[int, int], list[BaseGeometry]] = {}
        for b in bridges:
            cut.setdefault((b.layer, b.island), []).append(b.piece)
        islands = {}
        for lay in self.layers:
            polys = []
            for k, poly in enumerate(self.islands[lay]):
                if (lay, k) in cut:
                    rest = poly.difference(shapely.union_all(cut[(lay, k)]).buffer(1e-4))
                    polys.extend(_polygons(rest))
                else:
                    polys.append(poly)
            islands[lay] = polys
        return _Copper(self.board, islands)

    def node(self, layer: int, k: int) -> int:
        return self.offset[layer] + k

    def hits(self, layer: int, shapes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(shape index, island number) pairs where a shape touches an island of the layer."""
        arr = self.arrays.get(layer)
        if arr is None or len(arr) == 0 or len(shapes) == 0:
            return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        si, ii = self.trees[layer].query(shapes)            # bounding boxes only
        if len(si) == 0:
            return si, ii
        ok = shapely.intersects(arr[ii], shapes[si])        # prepared islands first
        return si[ok], ii[ok]

    def points_on(self, layer: int, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """For each point, the island number it lies on (boundary included), or -1."""
        out = np.full(len(x), -1, dtype=np.int64)
        if layer not in self.trees or not self.islands[layer] or len(x) == 0:
            return out
        pts = shapely.points(np.asarray(x, float), np.asarray(y, float))
        si, ii = self.hits(layer, pts)
        out[si] = ii
        return out


def _pad_shape(pad: Pad) -> BaseGeometry | None:
    """The pad's own footprint where the netlist gives its size (a rectangle) or its hole."""
    if pad.width_mm and pad.width_mm > 0:
        w = pad.width_mm
        h = pad.height_mm if pad.height_mm and pad.height_mm > 0 else w
        shape = shapely.box(-w / 2, -h / 2, w / 2, h / 2)
        if pad.rotation_deg:
            shape = shapely.affinity.rotate(shape, pad.rotation_deg, origin=(0, 0))
        return shapely.affinity.translate(shape, pad.x_mm, pad.y_mm)
    if pad.hole_mm and pad.hole_mm > 0:
        return Point(pad.x_mm, pad.y_mm).buffer(pad.hole_mm / 2, 16)
    return None


def check_connectivity(board: Board) -> ConnectivityResult:
    """Copper groups against the netlist: opens, shorts and misalignment. See the module docstring."""
    copper = _Copper(board)
    x2 = _X2Nets(board)
    result = _build(board, copper, x2)
    if not board.pads:
        result.checked = False
        result.not_checked_reason = "no netlist pads (no IPC-D-356 netlist and no X2 pin attributes)"
        return result
    reason = _why_x2_pads_cannot_be_checked(board)
    if reason:
        result.checked = False
        result.not_checked_reason = reason
        return result
    # a surface part whose records are mirrored (a footprint not flipped for the bottom side)
    # or name the other side: read the way that puts its pads on their own nets' copper
    readings, why = _part_readings(board, result, copper, x2)
    # many parts that fit only another way: the netlist as a whole does not fit (alignment judges it)
    if readings and len(why) <= max(READING_MAX_PARTS, READING_MAX_SHARE * len(board.components)):
        # the pads are replaced on the board itself: every later step (stages, measurements)
        # must use the positions that agree with the copper
        for i, pad in readings.items():
            board.pads[i] = pad
        for cached in ("nets", "components", "terminals"):
            board.__dict__.pop(cached, None)
        result = _build(board, copper, x2)
        result.notes.extend(why)
        board.assumptions.extend(why)
    # a part whose own copper joins two of its nets on purpose (a net tie, a printed antenna):
    # that copper is set aside and the board judged again without it
    bridges = _part_bridges(board, result, copper, x2)
    if bridges:
        cut = copper.without(bridges)
        again = _build(board, cut, x2)
        if _mixed_groups(board, again) < _mixed_groups(board, result):
            copper, result = cut, again
            result.notes.extend(b.note for b in bridges)
    return _judge(board, result, copper, x2)


def _build(board: Board, copper: "_Copper", x2: "_X2Nets") -> ConnectivityResult:
    """Pads on islands, islands joined into copper groups (no findings yet)."""
    pads = board.pads
    result = ConnectivityResult(findings=[], checked=bool(pads), islands=copper.islands)
    result._pad_index = {}
    for i, p in enumerate(pads):
        result._pad_index.setdefault(p, i)
    uf = _UnionFind(copper.count)

    pad_islands, x2_disagree, result.x2_agreements = _match_pads(board, copper, x2)
    result.x2_disagreements = x2_disagree
    # a plated drilled pad joins the islands under it on every layer (by its plating); a surface
    # pad lands on one island; an unplated hole joins nothing
    for i, isl in enumerate(pad_islands):
        if _kind(pads[i]) != "drilled":
            continue
        for (la, ka), (lb, kb) in zip(isl, isl[1:]):
            uf.union(copper.node(la, ka), copper.node(lb, kb))

    # plated holes and slots join the islands they pierce on every layer
    plated = [h for h in board.holes if h.plated]
    if plated:
        shapes = np.array([
            (shapely.LineString([(h.x_mm, h.y_mm), h.end]) if h.end is not None else Point(h.x_mm, h.y_mm))
            .buffer(max(h.diameter_mm / 2, 1e-3), 8) for h in plated], dtype=object)
        first_node = np.full(len(plated), -1, dtype=np.int64)
        for lay in copper.layers:
            si, ii = copper.hits(lay, shapes)
            for s_, k in zip(si.tolist(), ii.tolist()):
                node = copper.node(lay, k)
                if first_node[s_] < 0:
                    first_node[s_] = node
                else:
                    uf.union(int(first_node[s_]), node)

    # groups
    root_to_group: dict[int, int] = {}
    groups: list[CopperGroup] = []
    for lay in copper.layers:
        for k in range(len(copper.islands[lay])):
            r = uf.find(copper.node(lay, k))
            if r not in root_to_group:
                root_to_group[r] = len(groups)
                groups.append(CopperGroup(id=len(groups)))
            g = root_to_group[r]
            groups[g].islands.append((lay, k))
            result.island_group[(lay, k)] = g
    pad_group: list[int | None] = []
    for i, isl in enumerate(pad_islands):
        if isl:
            g = result.island_group[isl[0]]
            groups[g].pads.append(i)
            pad_group.append(g)
        else:
            pad_group.append(None)
    result.groups = groups
    result.pad_islands = pad_islands
    result.pad_group = pad_group

    return result


def _judge(board: Board, result: ConnectivityResult, copper: "_Copper", x2: "_X2Nets") -> ConnectivityResult:
    """Findings from the groups: alignment first, then opens, shorts and X2 disagreements."""
    pads = board.pads
    # alignment: pads on no copper, or so many opens and shorts that the netlist may simply sit
    # in the wrong place (on a board of planes and pours a shifted pad still lands on copper).
    # Unplated holes and pads with neither net nor pin number (mounting holes, shell and
    # mechanical pads) need no copper: they are not counted.
    optional = [i for i, p in enumerate(pads) if _optional(p)]
    counted = len(pads) - len(optional)
    optional_set = set(optional)
    unlanded = [i for i, g in enumerate(result.pad_group) if g is None and i not in optional_set]
    landed_fraction = 1.0 - len(unlanded) / counted if counted else 1.0
    result.landed_fraction = landed_fraction
    off = sum(1 for i in optional if result.pad_group[i] is None)
    summary = f"{len(pads) - len(unlanded) - off} of {len(pads)} netlist pads land on copper"
    if x2:
        summary += (f"; at {result.x2_agreements} of them the copper's X2 net attribute names the "
                    "netlist's net")
    result.notes.insert(0, summary)
    if off:
        result.notes.append(f"{off} unplated holes or pads with no net and no pin number (mounting holes, "
                            "connector shells) land on no copper; they need none")
    opens = _opens(board, result)
    shorts = _shorts(board, result, copper)
    named_nets = sum(1 for n in board.nets if n)
    suspicious = (counted and len(unlanded) / counted >= SEARCH_MIN_UNLANDED
                  or len(opens) + len(shorts) >= max(2, SEARCH_MIN_UNLANDED * named_nets))
    found = search_alignment(board, copper) if suspicious else None
    if (found is not None and not found.is_identity and found.landed_fraction >= HINT_MIN_FRACTION
            and found.landed_fraction - found.baseline_fraction >= HINT_MIN_GAIN):
        result.aligned = False
        result.alignment = found
        result.alignment_hint = (f"{found.describe()} puts {found.landed_fraction:.0%} of the pads on "
                                 f"copper of their own net (as given: {found.baseline_fraction:.0%})")
        skipped = len(opens) + len(shorts)
        result.findings.append(_alignment_finding(board, unlanded, landed_fraction, result.alignment_hint,
                                                  stopped=True, skipped=skipped, counted=counted))
        return result
    result.aligned = landed_fraction >= ALIGNED_MIN_FRACTION
    if unlanded:
        hint = None
        if not result.aligned:
            hint = ("no offset, inch/mm scale or mirror aligns the netlist with the copper: is it the "
                    "netlist of this board and revision?")
            result.alignment_hint = hint
        result.findings.append(_alignment_finding(board, unlanded, landed_fraction, hint,
                                                  stopped=not result.aligned,
                                                  skipped=0 if result.aligned else len(opens) + len(shorts),
                                                  counted=counted))
    if not result.aligned:
        return result
    result.findings.extend(opens)
    result.findings.extend(shorts)
    result.findings.extend(_x2_findings(board, result, x2))
    return result


def _why_x2_pads_cannot_be_checked(board: Board) -> str | None:
    """Pads from X2 pin attributes (no netlist) say less than a netlist; two cases say too little."""
    if board.netlist_file is not None:
        return None
    if len(board.layers) > 1 and not board.holes:
        return ("no netlist and no drill file: the pads come from X2 pin attributes, and without the "
                "holes nothing says where the layers are joined")
    places: dict[str, set[tuple[float, float]]] = {}
    for p in board.pads:
        if p.ref and not p.is_via:
            places.setdefault(p.terminal, set()).add((round(p.x_mm, 2), round(p.y_mm, 2)))
    repeated = sorted(t for t, where in places.items() if len(where) > 1)
    if repeated:
        return (f"no netlist, and the X2 pin attributes name {len(repeated)} terminals at more than one "
                f"place (e.g. {', '.join(repeated[:3])}): a panel of several boards?")
    return None


def _kind(pad: Pad) -> str:
    """``"unplated"`` (a hole without plating: joins nothing), ``"drilled"`` (a plated hole: joins
    its layers) or ``"surface"`` (no hole: one island on one outer layer)."""
    if pad.hole_mm and pad.hole_mm > 0:
        return "drilled" if pad.plated else "unplated"
    return "surface"


def _unnumbered(pin: str) -> bool:
    """A pin field that names no pin: blank, or only punctuation (``-``, ``""``, ``~``)."""
    return not any(ch.isalnum() for ch in (pin or ""))


def _optional(pad: Pad) -> bool:
    """A pad that needs no copper: an unplated hole, or a pad with neither net nor pin number
    (IPC-D-356 writes mounting holes, shells and other mechanical pads so)."""
    if pad.is_via:
        return False
    return _kind(pad) == "unplated" or (not pad.net and _unnumbered(pad.pin))


def _x2_key(name: str) -> str:
    """A net name as both files can be compared: case folded, and the characters that netlist
    writers put for a space (``?``, ``_``) made one."""
    return name.upper().replace("?", " ").replace("_", " ")


class _X2Nets:
    """The copper's own net names (Gerber X2 ``.N``) matched to the netlist's names.

    The IPC-D-356 net field holds 14 characters: a writer cuts a longer name to its last 14 and
    upper-cases it; a netlist name matches the X2 names equal to it or, when it fills the field,
    ending in it (all of them, when a cut name is shared: any then agrees).
    """

    NO_NET = {"", "N/C"}

    def __init__(self, board: Board):
        self.layers: dict[int, tuple[list[str], np.ndarray, shapely.STRtree]] = {}
        names: set[str] = set()
        for layer in board.layers:
            nc = {n: g for n, g in (layer.net_copper or {}).items()
                  if n not in self.NO_NET and g is not None and not g.is_empty}
            if not nc:
                continue
            keys = sorted(nc)
            geoms = np.array([nc[k] for k in keys], dtype=object)
            shapely.prepare(geoms)
            self.layers[layer.index] = (keys, geoms, shapely.STRtree(geoms))
            names.update(keys)
        by_key: dict[str, set[str]] = {}
        for n in names:
            by_key.setdefault(_x2_key(n), set()).add(n)
        self._by_key = by_key
        self._cache: dict[str, frozenset[str]] = {}
        # full names restored from X2 for cut netlist names (loopcheck.netnames), e.g. TAIL#1
        self._full = dict(getattr(board, "net_full_names", None) or {})

    def __bool__(self) -> bool:
        return bool(self.layers)

    def names_for(self, net: str) -> frozenset[str]:
        """The X2 names that stand for a netlist net (empty: X2 does not know it)."""
        if net in self._cache:
            return self._cache[net]
        key = _x2_key(net)
        found = set(self._by_key.get(key, ()))
        if not found and len(net) >= 14:
            for k, ns in self._by_key.items():
                if k.endswith(key):
                    found |= ns
        if net in self._full:
            found.add(self._full[net])
        self._cache[net] = frozenset(found)
        return self._cache[net]

    def nets_at(self, lay: int, x: np.ndarray, y: np.ndarray) -> list[list[str]]:
        """For each point, the X2 nets whose copper covers it on the layer."""
        out: list[list[str]] = [[] for _ in range(len(x))]
        entry = self.layers.get(lay)
        if entry is None or len(x) == 0:
            return out
        keys, geoms, tree = entry
        pts = shapely.points(np.asarray(x, float), np.asarray(y, float))
        pi, gi = tree.query(pts)
        if len(pi):
            ok = shapely.intersects(geoms[gi], pts[pi])
            for a, g in zip(pi[ok].tolist(), gi[ok].tolist()):
                out[a].append(keys[g])
        return out

    def copper_of(self, lay: int, names: frozenset[str]) -> list[BaseGeometry]:
        entry = self.layers.get(lay)
        if entry is None:
            return []
        keys, geoms, _ = entry
        return [geoms[k] for k, n in enumerate(keys) if n in names]


def _match_pads(board: Board, copper: _Copper, x2: _X2Nets):
    """Each pad's islands, and the pads where X2 names another net for the copper under them.

    - a plated drilled pad: on each of its layers the island under its centre; where no copper
      is under the centre (an inner layer whose unused pad was removed), the island its drilled
      hole touches (the plating meets it), never one that only its netlist size reaches (that size
      is its outer pad's, or its mask opening's);
    - an unplated hole: the island under its centre, if any (it needs none);
    - a surface pad: one island on one layer. Its record's layer first; an access code of both
      sides or of an inner layer (no surface pad is there) is read as the outer layer the pad
      lands on. Where its centre misses copper (a pad drawn off its anchor), the island its
      netlist size touches that is nearest the centre.
    Where the copper carries X2 net attributes and the island under the centre is another net's
    while the pad's own net's copper lies within its netlist size, that copper is taken.
    """
    pads = board.pads
    n_layers = len(copper.layers)
    outer = {copper.layers[0], copper.layers[-1]} if copper.layers else set()
    kinds = [_kind(p) for p in pads]
    cand: list[list[int]] = []
    for p, kind in zip(pads, kinds):
        lays = [lay for lay in p.layers if lay in copper.islands]
        if kind == "surface" and (len(lays) > 1 or (lays and lays[0] not in outer)) and n_layers > 1:
            stated = lays
            lays = [lay for lay in copper.layers if lay in outer]
            if any(lay in outer for lay in stated):      # both sides: the primary side first
                lays.sort(key=lambda lay: (lay not in stated, lay))
            else:                                        # an inner layer: read as the secondary side
                lays.sort(key=lambda lay: -lay)
        cand.append(lays)

    xs = np.array([p.x_mm for p in pads]) if pads else np.zeros(0)
    ys = np.array([p.y_mm for p in pads]) if pads else np.zeros(0)
    found: dict[tuple[int, int], int] = {}          # (pad, layer) -> island
    x2_here: dict[tuple[int, int], list[str]] = {}
    for lay in copper.layers:
        on = [i for i in range(len(pads)) if lay in cand[i]]
        if not on:
            continue
        hit = copper.points_on(lay, xs[on], ys[on])
        if x2 and lay in x2.layers:
            named = [i for i in on if pads[i].net]
            for i, nets in zip(named, x2.nets_at(lay, xs[named], ys[named])):
                x2_here[(i, lay)] = nets
        for i, k in zip(on, hit.tolist()):
            kind = kinds[i]
            p = pads[i]
            if k >= 0:
                if x2 and p.net and kind != "unplated":
                    k = _x2_prefer(copper, x2, lay, p, k, x2_here.get((i, lay), []))
                found[(i, lay)] = k
                continue
            if kind == "unplated":
                continue
            if kind == "drilled":
                shape = Point(p.x_mm, p.y_mm).buffer(p.hole_mm / 2, 16)
            else:
                shape = _pad_shape(p)
            k2 = _island_near(copper, x2, lay, p, shape)
            if k2 is not None:
                found[(i, lay)] = k2

    pad_islands: list[list[tuple[int, int]]] = [[] for _ in pads]
    disagree: list[tuple[int, int, tuple[str, ...]]] = []
    agree = 0
    for i, p in enumerate(pads):
        lays = [lay for lay in cand[i] if (i, lay) in found]
        if kinds[i] == "surface" and len(lays) > 1:
            lays = [_best_layer(copper, x2, p, lays, found, i, x2_here)]
        pad_islands[i] = [(lay, found[(i, lay)]) for lay in lays]
        if x2 and p.net and kinds[i] != "unplated":
            own = x2.names_for(p.net)
            agreed = False
            for lay in lays:
                here = x2_here.get((i, lay))
                if here and own & set(here):
                    agreed = True
                elif here and not _x2_own_within(copper, x2, lay, p, found[(i, lay)], own):
                    disagree.append((i, lay, tuple(sorted(here))))
            agree += agreed
    return pad_islands, disagree, agree


def _best_layer(copper, x2, p, lays, found, i, x2_here) -> int:
    """Of the outer layers a surface pad lands on, the one whose copper X2 names its net, else
    the first (the record's own side)."""
    if x2 and p.net:
        own = x2.names_for(p.net)
        for lay in lays:
            if own & set(x2_here.get((i, lay), [])):
                return lay
    return lays[0]


def _x2_own_within(copper, x2, lay, p, k, own) -> bool:
    island = copper.islands[lay][k]
    shape = _pad_shape(p) or Point(p.x_mm, p.y_mm).buffer(0.05)
    return any(g.intersects(shape) and g.intersects(island) for g in x2.copper_of(lay, own))


def _x2_prefer(copper: _Copper, x2: _X2Nets, lay: int, p: Pad, k: int, here: list[str]) -> int:
    """The island under the centre, unless X2 says it is another net's and the pad's own net's
    copper lies within the pad's netlist size: then the island of that copper."""
    own = x2.names_for(p.net)
    if not own or not here or own & set(here):
        return k
    shape = _pad_shape(p)
    if shape is None:
        return k
    best, best_area = k, 0.0
    for g in x2.copper_of(lay, own):
        part = g.intersection(shape)
        if part.is_empty:
            continue
        for k2 in copper.hits(lay, np.array([part], dtype=object))[1].tolist():
            area = copper.islands[lay][k2].intersection(part).area
            if area > best_area:
                best, best_area = int(k2), area
    return best


def _island_near(copper: _Copper, x2: _X2Nets, lay: int, p: Pad, shape: BaseGeometry | None) -> int | None:
    """The island a pad's shape touches when its centre misses copper: the one carrying the
    pad's own X2 net, else the one nearest the centre (not the one it overlaps most: a netlist
    size larger than the copper reaches over the neighbours of a fine-pitch part)."""
    if shape is None or not copper.islands[lay]:
        return None
    _, cand = copper.hits(lay, np.array([shape], dtype=object))
    if len(cand) == 0:
        return None
    cand = [int(c) for c in cand]
    if len(cand) == 1:
        return cand[0]
    if x2 and p.net:
        own = x2.copper_of(lay, x2.names_for(p.net))
        mine = [c for c in cand if any(g.intersects(copper.islands[lay][c]) and
                                       g.intersects(shape) for g in own)]
        if len(mine) == 1:
            return mine[0]
        if mine:
            cand = mine
    centre = Point(p.x_mm, p.y_mm)
    dist = shapely.distance(copper.arrays[lay][cand], centre)
    return cand[int(np.argmin(dist))]


# --- parts whose records are mirrored or on the other side -----------------------------------

READING_MIN_PADS = 2
READING_MAX_PARTS = 3          # parts re-read on any board ...
READING_MAX_SHARE = 0.1        # ... or this share of its parts, whichever is more


def _part_readings(board: Board, result: ConnectivityResult, copper: _Copper,
                   x2: _X2Nets) -> tuple[dict[int, Pad], list[str]]:
    """Surface parts whose pads land on other nets' copper, read another way when that way puts
    every pad on copper of its own net.

    A pad's evidence: the copper group it lands on holds pads of other parts; "own" when one of
    them is on its net (or X2 names its net there), "other" when none is. A part with at least
    two "other" pads (each a short, if the records are right) is tried mirrored in x or y about its centre,
    turned 180 degrees, and on the other outer side (a footprint not flipped for the bottom
    side, a record of the wrong side). A reading is taken only when it leaves no pad on other
    nets' copper and lands more pads on their own nets than the records as given.
    """
    pads = board.pads
    if len(copper.layers) < 1 or not result.groups:
        return {}, []
    group_nets: dict[int, dict[str, int]] = {}
    for i, g in enumerate(result.pad_group):
        if g is not None and pads[i].net:
            d = group_nets.setdefault(g, {})
            d[pads[i].net] = d.get(pads[i].net, 0) + 1
    parts: dict[str, list[int]] = {}
    for i, p in enumerate(pads):
        if p.ref and not p.is_via and _kind(p) == "surface" and p.net and len(p.layers) == 1:
            parts.setdefault(p.ref, []).append(i)
    top, bottom = copper.layers[0], copper.layers[-1]
    out: dict[int, Pad] = {}
    notes: list[str] = []
    for ref, idxs in parts.items():
        if len(idxs) < READING_MIN_PADS or len({pads[i].layers[0] for i in idxs}) != 1:
            continue
        own_counts: dict[tuple[int, str], int] = {}
        for i in idxs:
            g = result.pad_group[i]
            if g is not None:
                own_counts[(g, pads[i].net)] = own_counts.get((g, pads[i].net), 0) + 1

        def evidence(layer: int, xs: np.ndarray, ys: np.ndarray) -> tuple[int, int]:
            hit = copper.points_on(layer, xs, ys)
            x2_here = x2.nets_at(layer, xs, ys) if x2 and layer in x2.layers else None
            own = other = 0
            for n, (i, k) in enumerate(zip(idxs, hit.tolist())):
                net = pads[i].net
                if x2_here is not None and x2_here[n]:
                    if x2.names_for(net) & set(x2_here[n]):
                        own += 1
                    else:
                        other += 1
                    continue
                if k < 0:
                    continue
                g = result.island_group[(layer, k)]
                nets = dict(group_nets.get(g, {}))
                for (gg, nn), c in own_counts.items():      # leave the part's own pads out
                    if gg == g:
                        nets[nn] = nets.get(nn, 0) - c
                nets = {nn: c for nn, c in nets.items() if c > 0}
                if not nets:
                    continue
                if net in nets:
                    own += 1
                else:
                    other += 1
            return own, other

        xs = np.array([pads[i].x_mm for i in idxs])
        ys = np.array([pads[i].y_mm for i in idxs])
        layer = pads[idxs[0]].layers[0]
        own0, other0 = evidence(layer, xs, ys)
        if other0 < READING_MIN_PADS:
            continue
        cx, cy = (xs.min() + xs.max()) / 2, (ys.min() + ys.max()) / 2
        flipped = bottom if layer == top else top
        tries = []
        for side in ([layer, flipped] if flipped != layer else [layer]):
            for name, tx, ty in (("as given", xs, ys), ("mirrored in x", 2 * cx - xs, ys),
                                 ("mirrored in y", xs, 2 * cy - ys), ("turned 180 degrees", 2 * cx - xs, 2 * cy - ys)):
                if side == layer and name == "as given":
                    continue
                own, other = evidence(side, tx, ty)
                if other == 0 and own > own0 and own >= max(READING_MIN_PADS, len(idxs) // 2):
                    tries.append((own, -len(tries), side, name, tx, ty))
        if not tries:
            continue
        own, _, side, name, tx, ty = max(tries)
        for n, i in enumerate(idxs):
            out[i] = dataclasses.replace(pads[i], x_mm=float(tx[n]), y_mm=float(ty[n]), layers=(side,))
        side_text = "on the other side, " if side != layer else ""
        how = "as written" if name == "as given" else name
        notes.append(f"{ref}: its netlist records put {other0} of its {len(idxs)} pads on other nets' "
                     f"copper; read {side_text}{how} about the part's centre they put {own} on their own "
                     "nets' copper (a footprint not flipped for the bottom side, or a record of the "
                     "wrong side), and were read so")
    return out, notes


# --- a part's own copper that joins its nets on purpose ------------------------------------

# designator letters of parts made to join two nets with their own copper: net ties, printed
# antennas (feed and ground on one shape), solder jumpers closed by copper (common practice)
JOINING_PREFIXES = ("NT", "NETTIE", "AE", "ANT", "JP", "SJ")
PAD_CUT_MARGIN_MM = 0.05
BRIDGE_WINDOW_MM = 40.0       # a part's own copper lies within this of its pads (a 2.4 GHz printed
                              # antenna is about 15-30 mm long; from memory of common designs)
BRIDGE_MAX_PADS = 8           # net ties, antennas and jumpers have a few pads
BRIDGE_MAX_ISLANDS = 50       # more islands joining nets than this: the netlist does not fit


@dataclass
class _Bridge:
    """Copper of one part, joining pads of that part on different nets and nothing else."""

    ref: str
    layer: int
    island: int
    piece: BaseGeometry
    nets: tuple[str, ...]
    evidence: str

    @property
    def note(self) -> str:
        return (f"{self.ref}'s own copper joins {' and '.join(self.nets)} ({self.evidence}): a net tie or "
                "printed antenna, set aside; the nets are judged without it")


def _ref_prefix(ref: str) -> str:
    return "".join(ch for ch in ref if ch.isalpha()).upper()


def _part_bridges(board: Board, result: ConnectivityResult, copper: _Copper, x2: _X2Nets) -> list[_Bridge]:
    """Copper that joins two nets only through one part's own pads.

    For each island holding pads of two or more nets of one part: cut that part's pads (their
    netlist size and a small margin) out of the island. A piece left over that touches the part's
    pads of two nets, and no other pad, via or plated hole, is the part's own copper. It is taken
    as joining the nets on purpose when the layer's X2 attributes give it no net (footprint copper,
    not a trace or pour of a net), or, without X2, when the part's designator marks a net tie,
    antenna or copper-closed jumper. Everything else stays a short.
    """
    pads = board.pads
    out: list[_Bridge] = []
    by_island: dict[tuple[int, int], list[int]] = {}
    for i, isl in enumerate(result.pad_islands):
        for key in isl:
            by_island.setdefault(key, []).append(i)
    mixed = [(key, idxs) for key, idxs in by_island.items()
             if len({pads[i].net for i in idxs if pads[i].net}) >= 2]
    if not mixed or len(mixed) > BRIDGE_MAX_ISLANDS:      # none, or a netlist that does not fit
        return out
    plated = [h for h in board.holes if h.plated]
    hole_shapes = np.array([Point(h.x_mm, h.y_mm).buffer(max(h.diameter_mm / 2, 1e-3), 8) for h in plated],
                           dtype=object)
    hole_tree = shapely.STRtree(hole_shapes) if len(hole_shapes) else None
    for (lay, k), idxs in mixed:
        parts: dict[str, list[int]] = {}
        for i in idxs:
            if pads[i].ref and not pads[i].is_via:
                parts.setdefault(pads[i].ref, []).append(i)
        x2_here = bool(x2) and lay in x2.layers
        for ref, mine in parts.items():
            own_nets = {pads[i].net for i in mine if pads[i].net}
            if len(own_nets) < 2 or len(mine) > BRIDGE_MAX_PADS:
                continue
            if not x2_here and _ref_prefix(ref) not in JOINING_PREFIXES:
                continue                  # nothing could show the join is meant: a short
            shapes = [_pad_shape(pads[i]) for i in mine]
            if any(sh is None for sh in shapes):
                continue
            grown = [sh.buffer(PAD_CUT_MARGIN_MM, join_style="mitre") for sh in shapes]
            # the part's neighbourhood only: a plane island can be the whole board
            x0, y0, x1, y1 = shapely.union_all(grown).bounds
            m = BRIDGE_WINDOW_MM
            window = shapely.box(x0 - m, y0 - m, x1 + m, y1 + m)
            island = shapely.clip_by_rect(copper.islands[lay][k], *window.bounds)
            pieces = _polygons(island.difference(shapely.union_all(grown)))
            others = [i for i in idxs if pads[i].ref != ref or pads[i].is_via]
            other_pts = shapely.points([(pads[i].x_mm, pads[i].y_mm) for i in others]) if others else None
            edge = window.exterior
            for piece in pieces:
                touched = {pads[i].net for i, g in zip(mine, grown) if pads[i].net
                           and piece.distance(g.exterior) < 2 * PAD_CUT_MARGIN_MM}
                if len(touched) < 2 or piece.distance(edge) < 1e-6:     # goes on beyond the window
                    continue
                if other_pts is not None and shapely.intersects(piece, other_pts).any():
                    continue
                if hole_tree is not None and len(hole_tree.query(piece, predicate="intersects")):
                    continue
                evidence = _bridge_evidence(x2, lay, ref, piece)
                if evidence:
                    out.append(_Bridge(ref, lay, k, piece, tuple(sorted(touched)), evidence))
    return out


def _bridge_evidence(x2: _X2Nets, lay: int, ref: str, piece: BaseGeometry) -> str | None:
    """Why a part's own copper is taken as joining nets on purpose, or None."""
    entry = x2.layers.get(lay) if x2 else None
    if entry is not None:
        _, geoms, tree = entry
        named = sum(geoms[g].intersection(piece).area for g in tree.query(piece).tolist())
        if named < 0.5 * piece.area:
            return "its copper carries no X2 net attribute: footprint copper"
        return None
    prefix = _ref_prefix(ref)
    if prefix in JOINING_PREFIXES:
        return f"designator {prefix}: a net tie, antenna or jumper; no X2 net attributes to confirm"
    return None


def _x2_findings(board: Board, result: ConnectivityResult, x2: _X2Nets) -> list[Finding]:
    """One finding per netlist net whose pads sit on copper that X2 gives to another net."""
    if not result.x2_disagreements:
        return []
    by_net: dict[str, list[tuple[int, int, tuple[str, ...]]]] = {}
    for i, lay, here in result.x2_disagreements:
        by_net.setdefault(board.pads[i].net, []).append((i, lay, here))
    out = []
    for net, rows in sorted(by_net.items()):
        i, lay, _ = rows[0]
        p = board.pads[i]
        copper_nets = sorted({n for _, _, here in rows for n in here})
        idxs = sorted({r[0] for r in rows})
        known = "" if x2.names_for(net) else f" (X2 names no net {net})"
        out.append(Finding(
            rule=RULE_X2, severity="warning",
            message=(f"the netlist puts {_terminal_list(board, idxs, 6)} on net {net}, but the Gerber's X2 "
                     f"net attributes give the copper under {'it' if len(idxs) == 1 else 'them'} to "
                     f"{', '.join(copper_nets[:4])}{known}: one of the two files is from another "
                     "revision or a net was renamed; connectivity is judged from the netlist"),
            x_mm=round(p.x_mm, 4), y_mm=round(p.y_mm, 4), layer=_layer_name(board, lay),
            nets=tuple([net] + copper_nets[:4]),
            terminals=tuple(sorted({board.pads[j].terminal for j in idxs
                                    if board.pads[j].ref and not board.pads[j].is_via}))))
    return out


# --- findings ------------------------------------------------------------------------------

def _terminal_list(board: Board, idxs: list[int], limit: int = 8) -> str:
    names = sorted({board.pads[i].terminal for i in idxs if board.pads[i].ref and not board.pads[i].is_via})
    vias = sum(1 for i in idxs if board.pads[i].is_via or not board.pads[i].ref)
    shown = names[:limit]
    text = ", ".join(shown)
    if len(names) > limit:
        text += f", ... ({len(names) - limit} more)"
    if vias:
        text += (" + " if text else "") + f"{vias} via{'s' if vias != 1 else ''}"
    return text or "no pads"


def _layer_name(board: Board, index: int | None) -> str | None:
    for layer in board.layers:
        if layer.index == index:
            return layer.name
    return None


def _opens(board: Board, result: ConnectivityResult) -> list[Finding]:
    out = []
    by_net: dict[str, dict[int, list[int]]] = {}
    for i, p in enumerate(board.pads):
        g = result.pad_group[i]
        if not p.net or g is None:
            continue
        by_net.setdefault(p.net, {}).setdefault(g, []).append(i)
    # pads of one terminal (ref and pin number) at several places are joined inside the part
    # (a push button's two pins "2", a connector's twin shell tabs): their groups count as one
    terminal_groups: dict[tuple[str, str, str], set[int]] = {}
    for i, p in enumerate(board.pads):
        g = result.pad_group[i]
        if g is not None and p.net and p.ref and not p.is_via and not _unnumbered(p.pin):
            terminal_groups.setdefault((p.net, p.ref, p.pin), set()).add(g)
    for net, parts in sorted(by_net.items()):
        if len(parts) < 2:
            continue
        joined = _UnionFind(len(parts))
        index = {g: k for k, g in enumerate(parts)}
        for (tn, _, _), gs in terminal_groups.items():
            if tn == net and len(gs) > 1:
                gs = sorted(gs)
                for a in gs[1:]:
                    joined.union(index[gs[0]], index[a])
        merged: dict[int, list[int]] = {}
        for g, idxs in parts.items():
            merged.setdefault(joined.find(index[g]), []).extend(idxs)
        if len(merged) < len(parts):
            twins = sorted(f"{r}.{pin}" for (tn, r, pin), gs in terminal_groups.items() if tn == net and len(gs) > 1)
            result.notes.append(f"net {net}: pads of one pin at several places ({', '.join(twins[:4])}) are "
                                "joined inside the part, not by copper")
        if len(merged) < 2:
            continue
        parts = {k: sorted(v) for k, v in merged.items()}
        ordered = sorted(parts.values(), key=lambda idxs: (-len(idxs), min(idxs)))
        desc = "; ".join(f"[{_terminal_list(board, idxs)}]" for idxs in ordered)
        stray = ordered[-1]
        p = board.pads[stray[0]]
        terminals = tuple(sorted({board.pads[i].terminal for idxs in ordered for i in idxs
                                  if board.pads[i].ref and not board.pads[i].is_via}))
        out.append(Finding(
            rule=RULE_OPEN, severity="error",
            message=(f"net {net} is split into {len(parts)} copper groups that nothing joins: {desc}"),
            x_mm=round(p.x_mm, 4), y_mm=round(p.y_mm, 4), layer=_layer_name(board, p.layers[0]),
            nets=(net,), terminals=terminals))
    return out


def _mixed_groups(board: Board, result: ConnectivityResult) -> int:
    """How many copper groups hold pads of two or more nets (the shorts, before their finding)."""
    return sum(1 for g in result.groups if len({board.pads[i].net for i in g.pads if board.pads[i].net}) > 1)


def _shorts(board: Board, result: ConnectivityResult, copper: _Copper) -> list[Finding]:
    out = []
    for group in result.groups:
        by_net: dict[str, list[int]] = {}
        for i in group.pads:
            if board.pads[i].net:
                by_net.setdefault(board.pads[i].net, []).append(i)
        if len(by_net) < 2:
            continue
        nets = sorted(by_net)
        x, y, lay, pair = _meeting_point(board, result, group, by_net)
        desc = "; ".join(f"{n}: {_terminal_list(board, by_net[n], 5)}" for n in nets)
        where = f" near ({x:.3f}, {y:.3f}) mm on {_layer_name(board, lay)}" if x is not None else ""
        shown = " and ".join(nets) if len(nets) <= 3 else ", ".join(nets[:3]) + f" and {len(nets) - 3} more"
        terminals = tuple(sorted({board.pads[i].terminal for n in nets for i in by_net[n]
                                  if board.pads[i].ref and not board.pads[i].is_via}))
        out.append(Finding(
            rule=RULE_SHORT, severity="error",
            message=f"copper joins nets {shown}{where} ({desc})",
            x_mm=None if x is None else round(x, 4), y_mm=None if y is None else round(y, 4),
            layer=_layer_name(board, lay), nets=tuple(nets), terminals=terminals))
    return out


def _meeting_point(board: Board, result: ConnectivityResult, group: CopperGroup,
                   by_net: dict[str, list[int]]):
    """A point on the group's copper where two of its nets meet.

    With X2 net attributes on the layer: where the copper of one net touches the other's, or the
    unattributed copper that touches both. Otherwise: the point of the island nearest the midpoint
    of the closest pair of pads of different nets.
    """
    # the closest pair of pads of different nets (among the nets with most pads here: a group
    # that joins dozens of nets needs one place to look first, not every pair)
    nets = sorted(by_net, key=lambda n: (-len(by_net[n]), n))[:6]
    best = None
    for a_i, na in enumerate(nets):
        for nb in nets[a_i + 1:]:
            ia = np.array(by_net[na][:500])
            ib = np.array(by_net[nb][:500])
            xa = np.array([board.pads[k].x_mm for k in ia])
            ya = np.array([board.pads[k].y_mm for k in ia])
            xb = np.array([board.pads[k].x_mm for k in ib])
            yb = np.array([board.pads[k].y_mm for k in ib])
            d = (xa[:, None] - xb[None, :]) ** 2 + (ya[:, None] - yb[None, :]) ** 2
            k = int(np.argmin(d))
            u, v = divmod(k, len(ib))
            if best is None or d.flat[k] < best[0]:
                best = (float(d.flat[k]), int(ia[u]), int(ib[v]), na, nb)
    _, i, j, na, nb = best
    lays_i = {lay for lay, _ in result.pad_islands[i]}
    lays_j = {lay for lay, _ in result.pad_islands[j]}
    common = sorted(lays_i & lays_j) or sorted(lays_i)
    lay = common[0]
    layer = next(layer for layer in board.layers if layer.index == lay)
    island_geoms = [result.islands[l_][k] for l_, k in group.islands if l_ == lay]
    if not island_geoms:
        return None, None, lay, (na, nb)
    island = shapely.union_all(island_geoms)
    # X2 net copper, where the Gerbers carry it
    nc = layer.net_copper or {}
    pi, pj = board.pads[i], board.pads[j]
    if na in nc and nb in nc:
        # first near the closest pads of the two nets (a plane's whole copper is slow to grow),
        # then everywhere
        mx, my = (pi.x_mm + pj.x_mm) / 2, (pi.y_mm + pj.y_mm) / 2
        r = max(3.0, 0.6 * float(np.hypot(pi.x_mm - pj.x_mm, pi.y_mm - pj.y_mm)))
        for rect in ((mx - r, my - r, mx + r, my + r), None):
            found = _x2_meeting(nc, na, nb, island, rect)
            if found is not None:
                return found[0], found[1], lay, (na, nb)
    mid = Point((pi.x_mm + pj.x_mm) / 2, (pi.y_mm + pj.y_mm) / 2)
    near = shapely.ops.nearest_points(island, mid)[0]
    return near.x, near.y, lay, (na, nb)


def _x2_meeting(nc: dict[str, BaseGeometry], na: str, nb: str, island: BaseGeometry,
                rect: tuple[float, float, float, float] | None) -> tuple[float, float] | None:
    """Where X2 copper of two nets touches, or unattributed copper touches both (within rect)."""
    clip = (lambda g: g) if rect is None else (lambda g: shapely.clip_by_rect(g, *rect))  # noqa: E731
    isl = clip(island)
    if isl.is_empty:
        return None
    a = clip(nc[na]).intersection(isl)
    b = clip(nc[nb]).intersection(isl)
    if shapely.dwithin(a, b, 0.02):
        touch = a.buffer(0.01).intersection(b.buffer(0.01))
        if not touch.is_empty:
            c = touch.representative_point()
            return c.x, c.y
    attributed = shapely.union_all([clip(g) for g in nc.values()])
    loose = isl.difference(attributed.buffer(0.005))
    for part in _polygons(loose):
        if part.distance(a) > 0.02 or part.distance(b) > 0.02:
            continue
        c = part.representative_point()
        return c.x, c.y
    return None


def _alignment_finding(board: Board, unlanded: list[int], landed_fraction: float, hint: str | None,
                       stopped: bool, skipped: int, counted: int | None = None) -> Finding:
    n = len(board.pads) if counted is None else counted
    if unlanded:
        examples = []
        for i in unlanded[:5]:
            p = board.pads[i]
            examples.append(f"{p.terminal} at ({p.x_mm:.3f}, {p.y_mm:.3f}) on {_layer_name(board, p.layers[0])}")
        more = f", ... ({len(unlanded) - 5} more)" if len(unlanded) > 5 else ""
        message = f"{len(unlanded)} of {n} netlist pads land on no copper ({', '.join(examples)}{more})"
    else:
        message = f"the netlist's pads land on copper of the wrong nets ({landed_fraction:.0%} on some copper)"
    if hint:
        message += f"; {hint}"
    if stopped:
        message += "; measurement stops until the netlist and the copper agree"
        if skipped:
            message += f" ({skipped} opens and shorts this would cause are not reported)"
    where = unlanded or list(range(min(n, 1)))
    p = board.pads[where[0]]
    terminals = tuple(sorted({board.pads[i].terminal for i in unlanded
                              if board.pads[i].ref and not board.pads[i].is_via}))
    nets = tuple(sorted({board.pads[i].net for i in unlanded if board.pads[i].net}))
    return Finding(rule=RULE_ALIGNMENT, severity="error", message=message,
                   x_mm=round(p.x_mm, 4), y_mm=round(p.y_mm, 4), layer=_layer_name(board, p.layers[0]),
                   nets=nets if len(nets) <= 20 else (), terminals=terminals if len(terminals) <= 50 else ())


# --- alignment search ----------------------------------------------------------------------

def search_alignment(board: Board, copper: _Copper | None = None, *, seed: int = 0) -> Alignment | None:
    """The transform of the netlist's pads that lands the most of them on copper.

    Candidates: mirror in x or y about the origin or the board centre; scale about the origin by
    25.4 or 1/25.4 (inch against mm) or 2.54 or 1/2.54 (the IPC-D-356 units of 0.0001 inch against
    0.001 mm, a wrong or missing UNITS record); each with its best offset. Offsets are found two ways: votes of hole-to-through-pad
    differences (exact where the drills and the netlist share holes), and the peak of the
    cross-correlation of a pad-centre raster with a copper raster (FFT, cell 0.25 mm or coarser),
    refined on a finer grid by exact point-in-copper counts. Returns None when there are no pads.
    """
    copper = copper or _Copper(board)
    pads = board.pads
    if not pads:
        return None
    rng = np.random.default_rng(seed)
    # pads that need no copper (unplated holes, mechanical pads) say nothing about alignment
    idx = np.array([i for i, p in enumerate(pads) if not _optional(p)] or list(range(len(pads))))
    if len(idx) > MAX_SAMPLE:
        idx = np.sort(rng.choice(idx, MAX_SAMPLE, replace=False))
    sample = [pads[i] for i in idx]
    px = np.array([p.x_mm for p in sample])
    py = np.array([p.y_mm for p in sample])
    pad_layer = np.array([p.layers[0] if p.layers else -1 for p in sample])

    net_names = sorted({p.net for p in sample if p.net})
    net_index = {n: k for k, n in enumerate(net_names)}
    net_id = np.array([net_index.get(p.net, -1) for p in sample], dtype=np.int64)
    n_nets = max(len(net_names), 1)

    def score(x: np.ndarray, y: np.ndarray) -> float:
        """Share of pads on copper of their own net: on each island, the pads of its most common
        net count (a netlist squeezed or shifted onto one plane lands on copper, but not on the
        copper of its own nets). Pads without a net count when they land at all."""
        node = np.full(len(x), -1, dtype=np.int64)
        for lay in copper.layers:
            m = pad_layer == lay
            if m.any():
                k = copper.points_on(lay, x[m], y[m])
                node[m] = np.where(k >= 0, copper.offset[lay] + k, -1)
        landed = node >= 0
        named = landed & (net_id >= 0)
        good = int(np.count_nonzero(landed & (net_id < 0)))
        if named.any():
            keys, counts = np.unique(node[named] * n_nets + net_id[named], return_counts=True)
            islands = keys // n_nets
            order = np.lexsort((-counts, islands))
            first = np.ones(len(order), dtype=bool)
            first[1:] = islands[order][1:] != islands[order][:-1]
            good += int(counts[order][first].sum())
        return good / len(x)

    bounds = board.outline.geometry.bounds if not board.outline.geometry.is_empty else None
    if bounds is None:
        all_b = [layer.geometry.bounds for layer in board.layers if not layer.geometry.is_empty]
        if not all_b:
            return None
        bounds = (min(b[0] for b in all_b), min(b[1] for b in all_b),
                  max(b[2] for b in all_b), max(b[3] for b in all_b))
    cx, cy = (bounds[0] + bounds[2]) / 2, (bounds[1] + bounds[3]) / 2

    bases = [Alignment(), Alignment(scale=INCH_MM), Alignment(scale=1 / INCH_MM),
             Alignment(scale=INCH_MM / 10), Alignment(scale=10 / INCH_MM),
             Alignment(mirror_x_about=0.0), Alignment(mirror_x_about=cx),
             Alignment(mirror_y_about=0.0), Alignment(mirror_y_about=cy)]
    holes = [h for h in board.holes if h.plated and h.end is None]
    hx = np.array([h.x_mm for h in holes])
    hy = np.array([h.y_mm for h in holes])
    drilled = [k for k, p in enumerate(sample) if p.hole_mm]
    rasters = _CopperRaster(board, copper, pad_layer)

    best: Alignment | None = None
    best_exact = True
    for base in bases:
        bx, by = base.apply(px, py)
        cands = [(0.0, 0.0, True)]
        if len(holes) and drilled:
            cands.extend((dx, dy, True) for dx, dy in _hole_votes(hx, hy, bx[drilled], by[drilled], rng))
        peak = rasters.best_offset(bx, by)
        if peak is not None:
            cands.append((peak[0], peak[1], False))
        for dx, dy, exact in cands:
            s = score(bx + dx, by + dy)
            a = Alignment(scale=base.scale, mirror_x_about=base.mirror_x_about,
                          mirror_y_about=base.mirror_y_about, dx_mm=dx, dy_mm=dy, landed_fraction=s)
            if best is None or _better(a, best, exact, best_exact):
                best, best_exact = a, exact
    if best is not None and not best_exact:
        best = _refine(best, px, py, score, rasters.cell)
    if best is not None:
        best = _mirror_absorbs_offset(best)
        best.baseline_fraction = score(px, py)
    return best


def _mirror_absorbs_offset(a: Alignment) -> Alignment:
    """x -> 2c - x + dx is the mirror about c + dx/2: name that mirror rather than an offset."""
    if a.mirror_x_about is not None and a.scale == 1.0 and abs(a.dx_mm) > 0:
        a = dataclasses.replace(a, mirror_x_about=round(a.mirror_x_about + a.dx_mm / 2, 3), dx_mm=0.0)
    if a.mirror_y_about is not None and a.scale == 1.0 and abs(a.dy_mm) > 0:
        a = dataclasses.replace(a, mirror_y_about=round(a.mirror_y_about + a.dy_mm / 2, 3), dy_mm=0.0)
    return a


def _better(a: Alignment, b: Alignment, a_exact: bool = True, b_exact: bool = True) -> bool:
    """More pads landed wins; within 1 %, the simpler transform (fewer parts), then an exact
    offset (from holes) over a raster one, then the smaller offset."""
    if a.landed_fraction > b.landed_fraction + 0.01:
        return True
    if a.landed_fraction < b.landed_fraction - 0.01:
        return False
    ca, cb = _complexity(a), _complexity(b)
    if int(ca // 1000) != int(cb // 1000):
        return ca < cb
    if a_exact != b_exact:
        return a_exact
    return ca < cb


def _complexity(a: Alignment) -> float:
    parts = (a.scale != 1.0) + (a.mirror_x_about is not None) + (a.mirror_y_about is not None)
    return parts * 1000.0 + float(np.hypot(a.dx_mm, a.dy_mm))


def _hole_votes(hx, hy, bx, by, rng, top: int = 5) -> list[tuple[float, float]]:
    """The most common hole-minus-pad differences (0.01 mm bins)."""
    if len(hx) > 300:
        pick = rng.choice(len(hx), 300, replace=False)
        hx, hy = hx[pick], hy[pick]
    if len(bx) > 300:
        pick = rng.choice(len(bx), 300, replace=False)
        bx, by = bx[pick], by[pick]
    dx = (hx[:, None] - bx[None, :]).ravel()
    dy = (hy[:, None] - by[None, :]).ravel()
    keys = np.stack([np.round(dx * 100).astype(np.int64), np.round(dy * 100).astype(np.int64)], axis=1)
    uniq, counts = np.unique(keys, axis=0, return_counts=True)
    order = np.argsort(-counts)[:top]
    return [(float(uniq[k][0]) / 100, float(uniq[k][1]) / 100) for k in order if counts[k] >= 2]


class _CopperRaster:
    """Copper of the layers the pads sit on, rasterised once on a grid around the board."""

    def __init__(self, board: Board, copper: _Copper, pad_layer: np.ndarray, max_cells: int = 1024):
        self.copper = copper
        self.layers = [lay for lay in copper.layers if (pad_layer == lay).any() and copper.islands[lay]]
        self.pad_layer = pad_layer
        self._fft: dict[tuple[int, int, int], np.ndarray] = {}
        b = [board.layers[[l.index for l in board.layers].index(lay)].geometry.bounds for lay in self.layers]
        self.ok = bool(b)
        if not self.ok:
            self.cell = 0.25
            return
        x0, y0 = min(v[0] for v in b), min(v[1] for v in b)
        x1, y1 = max(v[2] for v in b), max(v[3] for v in b)
        span = max(x1 - x0, y1 - y0, 1.0)
        self.cell = max(0.25, span / max_cells)
        self.x0, self.y0 = x0, y0
        self.nx = int(np.ceil((x1 - x0) / self.cell)) + 1
        self.ny = int(np.ceil((y1 - y0) / self.cell)) + 1
        gx = x0 + (np.arange(self.nx) + 0.5) * self.cell
        gy = y0 + (np.arange(self.ny) + 0.5) * self.cell
        X, Y = np.meshgrid(gx, gy)
        self.masks = {}
        for lay in self.layers:
            geom = next(l.geometry for l in board.layers if l.index == lay)
            shapely.prepare(geom)
            self.masks[lay] = shapely.contains_xy(geom, X.ravel(), Y.ravel()).reshape(self.ny, self.nx)

    def best_offset(self, bx: np.ndarray, by: np.ndarray) -> tuple[float, float] | None:
        """The translation (mm) that puts the most pad centres on copper, at raster resolution."""
        if not self.ok:
            return None
        c = self.cell
        # pad raster on its own grid; the correlation's lag range covers any offset between grids
        px0, py0 = float(bx.min()), float(by.min())
        pnx = int(np.ceil((bx.max() - px0) / c)) + 1
        pny = int(np.ceil((by.max() - py0) / c)) + 1
        if pnx * pny > 4_000_000:
            return None
        H, W = self.ny + pny, self.nx + pnx
        total = None
        for lay in self.layers:
            m = self.pad_layer == lay
            if not m.any():
                continue
            pad_img = np.zeros((pny, pnx))
            ix = np.clip(((bx[m] - px0) / c).astype(int), 0, pnx - 1)
            iy = np.clip(((by[m] - py0) / c).astype(int), 0, pny - 1)
            np.add.at(pad_img, (iy, ix), 1.0)
            key = (lay, H, W)
            if key not in self._fft:
                self._fft[key] = np.fft.rfft2(self.masks[lay].astype(float), s=(H, W))
            fa = self._fft[key]
            fb = np.fft.rfft2(pad_img, s=(H, W))
            corr = np.fft.irfft2(fa * np.conj(fb), s=(H, W))
            total = corr if total is None else total + corr
        if total is None:
            return None
        k = int(np.argmax(total))
        ly, lx = divmod(k, W)
        # lag (lx, ly): mask[iy + ly, ix + lx] ~ pad[iy, ix]; negative lags wrap around
        if lx >= self.nx:
            lx -= W
        if ly >= self.ny:
            ly -= H
        dx = self.x0 + lx * c - px0
        dy = self.y0 + ly * c - py0
        return float(dx), float(dy)


def _refine(a: Alignment, px, py, score, cell: float) -> Alignment:
    """Centre the offset in the plateau of equal best scores on a grid finer than the raster."""
    base_x, base_y = Alignment(scale=a.scale, mirror_x_about=a.mirror_x_about,
                               mirror_y_about=a.mirror_y_about).apply(px, py)
    step = cell / 4
    offs = np.arange(-8, 9) * step
    grid = np.zeros((len(offs), len(offs)))
    for i, oy in enumerate(offs):
        for j, ox in enumerate(offs):
            grid[i, j] = score(base_x + a.dx_mm + ox, base_y + a.dy_mm + oy)
    top = grid.max()
    if top < a.landed_fraction - 1e-12:
        return a
    iy, ix = np.nonzero(grid >= top - 1e-12)
    dx = a.dx_mm + float(np.mean(offs[ix]))
    dy = a.dy_mm + float(np.mean(offs[iy]))
    s = score(base_x + dx, base_y + dy)
    if s + 1e-12 < top:       # the plateau is not convex: keep the best grid point nearest the centre
        k = int(np.argmin((offs[ix] - offs[ix].mean()) ** 2 + (offs[iy] - offs[iy].mean()) ** 2))
        dx, dy, s = a.dx_mm + float(offs[ix[k]]), a.dy_mm + float(offs[iy[k]]), top
    # an offset within a hundredth of a round number of 0.01 mm is reported as that
    return Alignment(scale=a.scale, mirror_x_about=a.mirror_x_about, mirror_y_about=a.mirror_y_about,
                     dx_mm=round(dx, 2), dy_mm=round(dy, 2), landed_fraction=s)
