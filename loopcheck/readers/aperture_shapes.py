"""Gerber aperture shapes as shapely geometry in mm, centred on the aperture origin.

Standard apertures (circle, rectangle, obround, regular polygon, each with an optional round hole)
and aperture macros (primitives 1 circle, 4 outline, 5 polygon, 6 moire, 7 thermal, 20 vector line,
21 centre line) are built here from gerbonara's parsed aperture objects. gerbonara's own conversion
to graphic primitives is not used: in 1.5.0 it mis-places macro polygon primitives, mis-rotates
rectangles and fails on thermals, so the macro expressions are evaluated here directly.

Curves are approximated by polygons whose chord error (sagitta) stays below ``tol_mm``; circles are
*area-equivalent* polygons (vertices pushed out so that the polygon's area equals pi r^2), so the
approximation does not bias copper areas low.

References
----------
Ucamco, "The Gerber Layer Format Specification", revision 2023.08, sections 4.4 (standard
apertures) and 4.5 (aperture macros).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
import shapely.affinity
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from gerbonara import apertures as gap
from gerbonara.aperture_macros import primitive as amp
from gerbonara.utils import Inch

MM_PER_INCH = 25.4
DEFAULT_TOL_MM = 0.005     # 5 um chord tolerance (sagitta)


def unit_factor(unit) -> float:
    """mm per file unit for a gerbonara LengthUnit (``Inch`` or ``MM``; None is taken as mm)."""
    return MM_PER_INCH if unit == Inch else 1.0


def segments_for_radius(r_mm: float, tol_mm: float = DEFAULT_TOL_MM, minimum: int = 8,
                        maximum: int = 1024) -> int:
    """Number of polygon sides so that the sagitta r (1 - cos(pi/n)) stays below ``tol_mm``.

    Parameters
    ----------
    r_mm : radius [mm]
    tol_mm : largest allowed chord error [mm]
    """
    if r_mm <= tol_mm:
        return minimum
    n = math.ceil(math.pi / math.acos(1.0 - tol_mm / r_mm))
    n = max(minimum, min(maximum, n))
    return n + (-n) % 4          # a multiple of 4, so that quad_segs = n / 4 is exact


def circle_coords(x: float, y: float, r: float, tol_mm: float = DEFAULT_TOL_MM) -> np.ndarray:
    """Vertices (n, 2) of an area-equivalent regular polygon for a circle of radius ``r`` [mm].

    The circumradius R satisfies (n/2) R^2 sin(2 pi / n) = pi r^2, so the polygon's area is exact.
    """
    n = segments_for_radius(r, tol_mm)
    big_r = r * math.sqrt(2.0 * math.pi / (n * math.sin(2.0 * math.pi / n)))
    t = np.linspace(0.0, 2.0 * math.pi, n, endpoint=False)
    return np.column_stack((x + big_r * np.cos(t), y + big_r * np.sin(t)))


def circle_polygon(x: float, y: float, r: float, tol_mm: float = DEFAULT_TOL_MM) -> Polygon:
    if r <= 0:
        return Polygon()
    return Polygon(circle_coords(x, y, r, tol_mm))


def rectangle_polygon(cx: float, cy: float, w: float, h: float, rotation_deg: float = 0.0,
                      about=(0.0, 0.0)) -> Polygon:
    """Rectangle w x h centred at (cx, cy), then rotated counter-clockwise about ``about``."""
    if w <= 0 or h <= 0:
        return Polygon()
    pts = np.array([(cx - w / 2, cy - h / 2), (cx + w / 2, cy - h / 2),
                    (cx + w / 2, cy + h / 2), (cx - w / 2, cy + h / 2)])
    return Polygon(rotate_points(pts, rotation_deg, about))


def rotate_points(pts: np.ndarray, rotation_deg: float, about=(0.0, 0.0)) -> np.ndarray:
    """Rotate points (n, 2) counter-clockwise by ``rotation_deg`` [deg] about ``about``."""
    if not rotation_deg:
        return pts
    a = math.radians(rotation_deg)
    c, s = math.cos(a), math.sin(a)
    ox, oy = about
    dx, dy = pts[:, 0] - ox, pts[:, 1] - oy
    return np.column_stack((ox + c * dx - s * dy, oy + s * dx + c * dy))


def obround_polygon(w: float, h: float, tol_mm: float = DEFAULT_TOL_MM) -> BaseGeometry:
    """A w x h obround (stadium) centred at the origin: round ends on the shorter side.

    Built as a rectangle plus two area-equivalent end circles, so its area is exact
    (w h - (4 - pi) r^2 with r = min(w, h) / 2) up to the chord tolerance.
    """
    if w <= 0 or h <= 0:
        return Polygon()
    r = min(w, h) / 2
    if w >= h:
        a, b = (-(w / 2 - r), 0.0), (w / 2 - r, 0.0)
        body = rectangle_polygon(0.0, 0.0, w - 2 * r, h)
    else:
        a, b = (0.0, -(h / 2 - r)), (0.0, h / 2 - r)
        body = rectangle_polygon(0.0, 0.0, w, h - 2 * r)
    ends = [circle_polygon(a[0], a[1], r, tol_mm), circle_polygon(b[0], b[1], r, tol_mm)]
    if a == b:
        return ends[0]
    return shapely.union_all([body, *ends])


def regular_polygon(cx: float, cy: float, outer_diameter: float, n: int,
                    rotation_deg: float = 0.0, about=None) -> Polygon:
    """Regular n-gon with its circumscribed circle of ``outer_diameter``, first vertex on +x."""
    n = int(round(n))
    if n > 1024:    # the format allows 3 to 12; a million (found by fuzzing) took minutes per layer
        raise ValueError(f"a regular polygon of {n} vertices (the Gerber format allows 3 to 12)")
    if n < 3 or outer_diameter <= 0:
        return Polygon()
    t = np.linspace(0.0, 2.0 * math.pi, n, endpoint=False)
    r = outer_diameter / 2
    pts = np.column_stack((cx + r * np.cos(t), cy + r * np.sin(t)))
    return Polygon(rotate_points(pts, rotation_deg, (cx, cy) if about is None else about))


def _with_hole(shape: BaseGeometry, hole_dia_mm: float | None, tol_mm: float) -> BaseGeometry:
    if hole_dia_mm and hole_dia_mm > 0:
        return shape.difference(circle_polygon(0.0, 0.0, hole_dia_mm / 2, tol_mm))
    return shape


@dataclass(frozen=True)
class ApertureInfo:
    """An aperture reduced to what the reader needs: its shape and, for round ones, the radius."""

    shape: BaseGeometry          # flashed shape at the origin [mm]
    round_radius_mm: float | None  # radius when it is a plain circle (strokes are buffered)
    simple: bool                 # one polygon without holes: flashes can be built vectorised


def aperture_info(aperture, tol_mm: float = DEFAULT_TOL_MM) -> ApertureInfo:
    """Shape of a gerbonara aperture in mm, at the origin."""
    f = unit_factor(aperture.unit)
    hole = getattr(aperture, "hole_dia", None)
    hole_mm = hole * f if hole else None
    round_r = None
    if isinstance(aperture, gap.CircleAperture):
        r = aperture.diameter * f / 2
        shape = circle_polygon(0.0, 0.0, r, tol_mm)
        if not hole_mm:
            round_r = r
    elif isinstance(aperture, gap.RectangleAperture):
        shape = rectangle_polygon(0.0, 0.0, aperture.w * f, aperture.h * f)
    elif isinstance(aperture, gap.ObroundAperture):
        shape = obround_polygon(aperture.w * f, aperture.h * f, tol_mm)
    elif isinstance(aperture, gap.PolygonAperture):
        # gerbonara keeps the AD statement's rotation as written: degrees
        shape = regular_polygon(0.0, 0.0, aperture.diameter * f, aperture.n_vertices,
                                float(aperture.rotation or 0.0))
    elif isinstance(aperture, gap.ApertureMacroInstance):
        shape = macro_shape(aperture.macro, aperture.parameters, tol_mm)
    else:
        raise ValueError(f"unsupported aperture type {type(aperture).__name__}")
    shape = _with_hole(shape, hole_mm, tol_mm)
    shape = _polygonal(shape)
    simple = isinstance(shape, Polygon) and not shape.is_empty and len(shape.interiors) == 0
    return ApertureInfo(shape, round_r, simple)


def _polygonal(geom: BaseGeometry) -> BaseGeometry:
    """Keep only the areal part of a geometry (drops stray lines and points)."""
    if geom.is_empty or geom.geom_type in ("Polygon", "MultiPolygon"):
        return geom
    parts = [g for g in getattr(geom, "geoms", [geom]) if g.geom_type in ("Polygon", "MultiPolygon")]
    return shapely.union_all(parts) if parts else Polygon()


def _evaluate(expression, binding) -> float:
    """A macro expression's value in the macro's own unit (no unit conversion)."""
    return float(expression.calculate(binding, None))


def macro_shape(macro, parameters, tol_mm: float = DEFAULT_TOL_MM) -> BaseGeometry:
    """Evaluate an aperture macro with the given parameters into a shapely geometry [mm].

    Primitives are applied in order: exposure on adds, exposure off removes (only from the
    aperture itself, as the specification requires). Rotations are counter-clockwise about the
    macro origin. Missing parameters count as 0.
    """
    n_params = max(int(getattr(macro, "num_parameters", 0) or 0), len(parameters))
    binding = {i: 0.0 for i in range(1, n_params + 1)}
    binding.update({i: float(v) for i, v in enumerate(parameters, start=1)})
    acc: BaseGeometry = Polygon()
    for prim in macro.primitives:
        if isinstance(prim, amp.Comment):
            continue
        f = unit_factor(prim.unit)
        ev = lambda e: _evaluate(e, binding)  # noqa: E731
        dark = True
        if isinstance(prim, amp.Circle):
            dark = ev(prim.exposure) != 0
            c = rotate_points(np.array([[ev(prim.x) * f, ev(prim.y) * f]]), ev(prim.rotation))[0]
            shape = circle_polygon(c[0], c[1], ev(prim.diameter) * f / 2, tol_mm)
        elif isinstance(prim, amp.VectorLine):
            dark = ev(prim.exposure) != 0
            x1, y1 = ev(prim.start_x) * f, ev(prim.start_y) * f
            x2, y2 = ev(prim.end_x) * f, ev(prim.end_y) * f
            w = ev(prim.width) * f
            length = math.hypot(x2 - x1, y2 - y1)
            if length == 0 or w <= 0:
                shape = Polygon()
            else:
                # a rectangle around the segment, square ends, then the primitive's rotation
                ux, uy = (x2 - x1) / length, (y2 - y1) / length
                nx, ny = -uy * w / 2, ux * w / 2
                pts = np.array([(x1 + nx, y1 + ny), (x2 + nx, y2 + ny), (x2 - nx, y2 - ny), (x1 - nx, y1 - ny)])
                shape = Polygon(rotate_points(pts, ev(prim.rotation)))
        elif isinstance(prim, amp.CenterLine):
            dark = ev(prim.exposure) != 0
            shape = rectangle_polygon(ev(prim.x) * f, ev(prim.y) * f, ev(prim.width) * f,
                                      ev(prim.height) * f, ev(prim.rotation))
        elif isinstance(prim, amp.Outline):
            dark = ev(prim.exposure) != 0
            pts = np.array([(ev(x) * f, ev(y) * f) for x, y in prim.points])
            pts = rotate_points(pts, ev(prim.rotation))
            shape = _valid_polygon(pts) if len(pts) >= 3 else Polygon()
        elif isinstance(prim, amp.Polygon):
            dark = ev(prim.exposure) != 0
            # vertices from the centre, then the whole primitive turned about the macro origin
            cx, cy = ev(prim.x) * f, ev(prim.y) * f
            shape = regular_polygon(cx, cy, ev(prim.diameter) * f, int(round(ev(prim.n_vertices))), 0.0)
            if not shape.is_empty:
                shape = Polygon(rotate_points(np.asarray(shape.exterior.coords), ev(prim.rotation)))
        elif isinstance(prim, amp.Thermal):
            # gerbonara's Thermal dataclass has an extra leading 'exposure' field; code 7 has none,
            # so its fields hold the spec's values shifted by one: x, y, outer, inner, gap, rotation.
            vals = [prim.exposure, prim.x, prim.y, prim.d_outer, prim.d_inner, prim.gap_w]
            raw = [_evaluate(v, binding) for v in vals]
            cx, cy, d_out, d_in, gap_w = (v * f for v in raw[:5])
            rot = raw[5]
            ring = circle_polygon(cx, cy, d_out / 2, tol_mm)
            if d_in > 0:
                ring = ring.difference(circle_polygon(cx, cy, d_in / 2, tol_mm))
            cross = shapely.union_all([rectangle_polygon(cx, cy, d_out * 1.01, gap_w),
                                       rectangle_polygon(cx, cy, gap_w, d_out * 1.01)])
            shape = ring.difference(cross)
            if rot:
                shape = shapely.affinity.rotate(shape, rot, origin=(0.0, 0.0))
        elif isinstance(prim, amp.Moire):
            cx, cy = ev(prim.x) * f, ev(prim.y) * f
            d = ev(prim.d_outer) * f
            t = ev(prim.line_thickness) * f
            g = ev(prim.gap_w) * f
            parts = []
            for i in range(int(round(ev(prim.num_circles)))):
                outer = d / 2 - i * (t + g)
                if outer <= 0:
                    break
                ring = circle_polygon(cx, cy, outer, tol_mm)
                if outer - t > 0:
                    ring = ring.difference(circle_polygon(cx, cy, outer - t, tol_mm))
                parts.append(ring)
            ct, cl = ev(prim.crosshair_thickness) * f, ev(prim.crosshair_length) * f
            if ct > 0 and cl > 0:
                parts += [rectangle_polygon(cx, cy, cl, ct), rectangle_polygon(cx, cy, ct, cl)]
            shape = shapely.union_all(parts) if parts else Polygon()
            rot = ev(prim.rotation)
            if rot:
                shape = shapely.affinity.rotate(shape, rot, origin=(0.0, 0.0))
        else:
            raise ValueError(f"unsupported aperture macro primitive {type(prim).__name__}")
        if shape.is_empty:
            continue
        acc = shapely.union(acc, shape) if dark else shapely.difference(acc, shape)
    return _polygonal(acc)


def _valid_polygon(pts: np.ndarray) -> BaseGeometry:
    poly = Polygon(pts)
    if not poly.is_valid:
        poly = _polygonal(shapely.make_valid(poly))
    return poly

