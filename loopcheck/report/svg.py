"""SVG drawings of the board for the HTML report: copper per layer, the outline, the hot loop,
the routes the measurements followed, and a marker per finding. Drawing only: every shape comes
from the Board or from a Measurement's drawings; copper is simplified for file size.

Board coordinates are mm with y up; SVG has y down, so every y is written negated.
"""

from __future__ import annotations

from dataclasses import dataclass
from html import escape

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from ..board import Board
from ..findings import Drawing, Finding, Measurement

LAYER_COLOURS = ("#d08a4e", "#4f86b5", "#8f72b8", "#5e9e72", "#b8a14f", "#b5607a")
SEVERITY_COLOURS = {"error": "#c62828", "warning": "#e08a00", "note": "#2f6db5"}
WAIVED_COLOUR = "#7a7a7a"


def layer_colour(index: int, count: int) -> str:
    if count > 1 and index == count - 1:
        return LAYER_COLOURS[1]
    if index == 0:
        return LAYER_COLOURS[0]
    return LAYER_COLOURS[2 + (index - 1) % (len(LAYER_COLOURS) - 2)]


@dataclass(frozen=True)
class Frame:
    """The drawn region in board mm, with a margin."""

    minx: float
    miny: float
    maxx: float
    maxy: float

    @classmethod
    def of(cls, board: Board, margin_frac: float = 0.04) -> "Frame":
        geoms = [board.outline.geometry] if board.outline is not None else []
        geoms += [layer.geometry for layer in board.layers if not layer.geometry.is_empty]
        xs0, ys0, xs1, ys1 = [], [], [], []
        for g in geoms:
            if g is None or g.is_empty:
                continue
            a, b, c, d = g.bounds
            xs0.append(a), ys0.append(b), xs1.append(c), ys1.append(d)
        if not xs0:
            return cls(0.0, 0.0, 10.0, 10.0)
        minx, miny, maxx, maxy = min(xs0), min(ys0), max(xs1), max(ys1)
        m = margin_frac * max(maxx - minx, maxy - miny, 1.0)
        return cls(minx - m, miny - m, maxx + m, maxy + m)

    @property
    def width(self) -> float:
        return self.maxx - self.minx

    @property
    def height(self) -> float:
        return self.maxy - self.miny

    @property
    def unit(self) -> float:
        """A stroke unit that looks the same on a small and a large board."""
        return max(self.width, self.height) / 400.0


def _xy(x: float, y: float) -> str:
    return f"{x:.3f},{-y:.3f}"


def geometry_path(geom: BaseGeometry, tolerance: float) -> str:
    """SVG path data (even-odd fill) of a polygonal geometry, simplified to ``tolerance`` mm.

    Each polygon is simplified on its own (a whole-layer topology-preserving simplify takes
    seconds on a large board); polygons smaller than a tolerance square are left out. Lines and
    points are drawn as thin outlines. Coordinates to 0.01 mm.
    """
    if geom is None or geom.is_empty:
        return ""
    parts = shapely.get_parts(shapely.get_parts(geom))       # flatten collections
    kinds = shapely.get_type_id(parts)
    lines = parts[(kinds != 3) & (kinds != 6)]
    if len(lines):
        parts = np.concatenate([parts[kinds == 3],
                                shapely.get_parts(shapely.buffer(lines, tolerance or 0.05))])
    else:
        parts = parts[kinds == 3]
    if tolerance > 0 and len(parts):
        parts = shapely.simplify(parts, tolerance, preserve_topology=True)
        parts = parts[~shapely.is_empty(parts) & (shapely.area(parts) > tolerance * tolerance)]
    if not len(parts):
        return ""
    rings = shapely.get_rings(shapely.get_parts(parts))
    coords, index = shapely.get_coordinates(rings, return_index=True)
    if not len(coords):
        return ""
    starts = np.r_[0, np.flatnonzero(np.diff(index)) + 1]
    ends = np.r_[starts[1:], len(index)]
    xs = np.char.mod("%.2f", coords[:, 0])
    ys = np.char.mod("%.2f", -coords[:, 1])
    pairs = np.char.add(np.char.add(xs, ","), ys)
    out = []
    for a, b in zip(starts, ends):
        if b - a >= 4:                          # a closed ring repeats its first point
            out.append("M" + " L".join(pairs[a:b - 1].tolist()) + " Z")
    return " ".join(out)


def _points(points) -> str:
    return " ".join(_xy(float(x), float(y)) for x, y in points)


def drawing_element(d: Drawing, css_class: str, unit: float, title: str = "") -> str:
    t = f"<title>{escape(title)}</title>" if title else ""
    if d.kind == "polygon" and len(d.points) >= 3:
        return f'<polygon class="{css_class}" points="{_points(d.points)}">{t}</polygon>'
    if d.kind == "polyline" and len(d.points) >= 2:
        return f'<polyline class="{css_class}" points="{_points(d.points)}">{t}</polyline>'
    if d.points:
        x, y = d.points[0]
        return (f'<circle class="{css_class}" cx="{x:.3f}" cy="{-y:.3f}" r="{3 * unit:.3f}">'
                f'{t}</circle>')
    return ""


def _overlay_class(quantity: str, kind: str) -> str | None:
    """The CSS class a measurement's drawing is drawn with; None: not drawn on the board."""
    if quantity == "hot_loop.area":
        return "hot-loop" if kind == "polygon" else "route route-hot-loop"
    if quantity == "input_cap.path_length":
        return "route route-input-cap"
    if quantity == "input_cap.straight_distance":
        return "route route-straight"
    if quantity == "controller_decoupling.path_length":
        return "route route-decoupling"
    if quantity.startswith("sense."):
        return "sense-pair" if kind == "polygon" else "route route-sense"
    if quantity.startswith("path.") and quantity.endswith(".temperature_rise"):
        return "route route-path"
    return None


def _spread(findings: list[Finding], r: float) -> dict[int, tuple[float, float]]:
    """Board positions of the markers, nudged apart where findings share a spot (so each
    marker can be seen and clicked): a row centred on the spot."""
    groups: dict[tuple[int, int], list[int]] = {}
    for i, f in enumerate(findings):
        if f.x_mm is None or f.y_mm is None:
            continue
        key = (round(f.x_mm / (1.5 * r)), round(f.y_mm / (1.5 * r)))
        groups.setdefault(key, []).append(i)
    out: dict[int, tuple[float, float]] = {}
    for members in groups.values():
        n = len(members)
        x0 = findings[members[0]].x_mm
        y0 = findings[members[0]].y_mm
        for k, i in enumerate(members):
            out[i] = (x0 + (k - (n - 1) / 2) * 2.2 * r, y0)
    return out


COPPER_ID = "lc-copper-"


def default_tolerance(board: Board) -> float:
    """Copper drawing tolerance: 1/2500 of the board's extent (0.04 mm on a 100 mm board)."""
    fr = Frame.of(board)
    return max(fr.width, fr.height) / 2500.0


def copper_defs(board: Board, tolerance: float | None = None) -> str:
    """Each copper layer's drawing once, as SVG definitions that board_svg(layer_href=True)
    refers to: one page can show the layers in several views without repeating them."""
    tol = tolerance if tolerance is not None else default_tolerance(board)
    paths = "".join(f'<path id="{COPPER_ID}{layer.index}" fill-rule="evenodd" '
                    f'd="{geometry_path(layer.geometry, tol)}"/>' for layer in board.layers)
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="0" height="0" aria-hidden="true" '
            f'style="position:absolute"><defs>{paths}</defs></svg>')


def board_svg(board: Board, measurements: list[Measurement], findings: list[Finding],
              finding_ids: list[str], layers: list[int] | None = None, markers: bool = True,
              overlays: bool = True, css_id: str = "board-view", tolerance: float | None = None,
              value_labels: dict[int, str] | None = None, layer_href: bool = False) -> str:
    """One SVG: the chosen copper layers (all by default) bottom first, the outline, overlays
    from the measurements' drawings, and one marker per finding (unlocated ones in a strip
    below the board). ``value_labels`` maps id(measurement) to a label drawn at the loop.
    ``layer_href``: refer to the copper drawn once by ``copper_defs`` instead of repeating it."""
    fr = Frame.of(board)
    u = fr.unit
    tol = tolerance if tolerance is not None else default_tolerance(board)
    chosen = list(range(len(board.layers))) if layers is None else layers
    unlocated = [i for i, f in enumerate(findings) if f.x_mm is None or f.y_mm is None]
    strip = (14 * u) if (markers and unlocated) else 0.0
    vb = f"{fr.minx:.3f} {-fr.maxy:.3f} {fr.width:.3f} {fr.height + strip:.3f}"
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" id="{css_id}" class="board-svg" '
           f'viewBox="{vb}" preserveAspectRatio="xMidYMid meet" role="img" '
           f'aria-label="copper layers of {escape(board.name)}" '
           f'style="--u:{u:.4f}px">']
    out.append(f'<rect class="backdrop" x="{fr.minx:.3f}" y="{-fr.maxy:.3f}" '
               f'width="{fr.width:.3f}" height="{fr.height:.3f}"/>')
    if board.outline is not None and not board.outline.geometry.is_empty:
        out.append(f'<path class="outline" d="{geometry_path(board.outline.geometry, tol)}" '
                   f'stroke-width="{1.2 * u:.3f}"/>')
    n = len(board.layers)
    for idx in sorted(chosen, reverse=True):           # bottom first, top drawn last
        layer = board.layers[idx]
        colour = layer_colour(idx, n)
        if layer_href:
            shape = (f'<use href="#{COPPER_ID}{idx}" class="copper" fill="{colour}">'
                     f'<title>{escape(layer.name)} copper</title></use>')
        else:
            d = geometry_path(layer.geometry, tol)
            shape = (f'<path class="copper" fill="{colour}" fill-rule="evenodd" d="{d}">'
                     f'<title>{escape(layer.name)} copper</title></path>')
        out.append(f'<g class="layer layer-{idx}" data-layer="{escape(layer.name)}">{shape}</g>')
    if overlays:
        out.append(f'<g class="overlays" stroke-width="{1.6 * u:.3f}">')
        drawn: set[tuple] = set()
        for m in measurements:
            for d in m.drawings:
                cls = _overlay_class(m.quantity, d.kind)
                key = (cls, d.kind, tuple(map(tuple, d.points)))
                if cls is None or key in drawn:
                    continue
                drawn.add(key)
                title = f"{m.stage + ': ' if m.stage else ''}{m.label}"
                out.append(drawing_element(d, cls, u, title))
            if m.quantity == "hot_loop.area" and value_labels and id(m) in value_labels:
                x, y = _label_point(m)
                if x is not None:
                    out.append(f'<text class="loop-label" x="{x:.3f}" y="{-y:.3f}" '
                               f'font-size="{9 * u:.3f}" text-anchor="middle">'
                               f'{escape(value_labels[id(m)])}</text>')
        out.append("</g>")
    if markers:
        out.append('<g class="markers">')
        r = 5.5 * u
        for slot, i in enumerate(unlocated):
            x = fr.minx + (8 + slot * 14) * u
            y = -(fr.miny - strip / 2)
            out.append(_marker(findings[i], finding_ids[i], i, x, y, r, u, located=False))
        for i, (x, y) in sorted(_spread(findings, r).items()):
            out.append(_marker(findings[i], finding_ids[i], i, x, y, r, u, located=True))
        out.append("</g>")
        if unlocated:
            out.append(f'<text class="strip-label" x="{fr.minx + (8 + len(unlocated) * 14) * u:.3f}"'
                       f' y="{-(fr.miny - strip / 2) + 3 * u:.3f}" font-size="{8 * u:.3f}">'
                       f'findings with no place on the board</text>')
    out.append("</svg>")
    return "".join(out)


def _label_point(m: Measurement) -> tuple[float | None, float | None]:
    """Where the loop's area label goes: a point inside its largest polygon (placement only)."""
    from shapely.geometry import Polygon

    best = None
    for d in m.drawings:
        if d.kind == "polygon" and len(d.points) >= 3:
            poly = Polygon(d.points)
            if poly.is_valid and (best is None or poly.area > best.area):
                best = poly
    if best is not None and not best.is_empty:
        p = best.representative_point()
        return p.x, p.y
    if m.x_mm is not None and m.y_mm is not None:
        return m.x_mm, m.y_mm
    return None, None


def _marker(f: Finding, fid: str, i: int, x: float, y_board_or_svg: float, r: float, u: float,
            located: bool) -> str:
    colour = WAIVED_COLOUR if f.waived else SEVERITY_COLOURS.get(f.severity, "#444")
    cy = -y_board_or_svg if located else y_board_or_svg
    label = f"{i + 1}"
    title = f"{label}. {f.rule} ({'waived' if f.waived else f.severity}): {f.message}"
    return (f'<a href="#{fid}" class="finding-marker sev-{f.severity}'
            f'{" waived" if f.waived else ""}" id="marker-{fid}" data-finding="{fid}">'
            f'<title>{escape(title)}</title>'
            f'<circle cx="{x:.3f}" cy="{cy:.3f}" r="{r:.3f}" fill="{colour}" '
            f'stroke="#fff" stroke-width="{0.9 * u:.3f}"/>'
            f'<text x="{x:.3f}" y="{cy + 2.6 * u:.3f}" font-size="{7.5 * u:.3f}" '
            f'text-anchor="middle" fill="#fff">{label}</text></a>')
