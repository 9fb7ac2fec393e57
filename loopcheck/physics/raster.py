"""Rasterising copper polygons onto a square grid: cell coverage, face apertures, neck width, and
the copper / no-copper mask sampled at cell centres.

The routes (:mod:`loopcheck.measure.routes`) need only a mask: a cell is copper when its centre
lies inside the geometry (``rasterise``, on a grid with empty margins from ``grid_covering``).

The DC sheet solver (:mod:`loopcheck.physics.dcsolve`) works on a cell-centred square grid of
pitch ``h`` [mm]. It needs, for every copper polygon,

- the *cell coverage* ``c`` (fraction of each cell's area that is copper, 0..1), and
- the *face apertures* ``f`` (fraction of each cell face's length that lies in copper, 0..1).

Both are computed by scanline: the polygon's edges are crossed with horizontal lines, crossings
are paired (even-odd rule) into covered spans, and each span's length is split exactly among
the grid columns. Face apertures of horizontal faces are exact (one scanline on the face line);
vertical faces use the same routine on the polygon with x and y swapped, so they are exact too.
Cell coverage uses ``subrows`` scanlines per cell row (exact in x, sampled in y).

Units: geometry (the shapely polygons, grid origin and pitch, widths) is in board millimetres
[mm], not SI, on purpose: the polygons come straight from the board, and converting them (and
some 2 million cells) to metres and back would buy nothing. Coverage and apertures are
fractions [-], independent of the length unit.

A face that lies exactly on a polygon edge would be "in" or "out" by the half-open rule; the
face scanline is therefore taken as the mean of two lines a hair (1e-7 h) either side, so such a
face counts as half open.

References
----------
J. D. Foley, A. van Dam, S. K. Feiner, J. F. Hughes, "Computer Graphics: Principles and
Practice", 2nd ed., Addison-Wesley, 1990, section 3.6 (scan-line polygon filling, even-odd rule).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

__all__ = [
    "RasterGrid",
    "polygonal",
    "polygon_edges",
    "cell_coverage",
    "face_apertures",
    "narrowest_width_mm",
    "grid_covering",
    "cell_centre",
    "rasterise",
]


@dataclass(frozen=True)
class RasterGrid:
    """A cell-centred square grid.

    Cell (row i, column j) spans x in [x0 + j h, x0 + (j+1) h], y in [y0 + i h, y0 + (i+1) h].

    Parameters
    ----------
    x0_mm, y0_mm : lower-left corner of cell (0, 0) [mm]
    pitch_mm : cell side h [mm]
    nx, ny : number of columns and rows [-]
    """

    x0_mm: float
    y0_mm: float
    pitch_mm: float
    nx: int
    ny: int

    @property
    def cell_count(self) -> int:
        return self.nx * self.ny

    @property
    def x_centres_mm(self) -> np.ndarray:
        return self.x0_mm + (np.arange(self.nx) + 0.5) * self.pitch_mm

    @property
    def y_centres_mm(self) -> np.ndarray:
        return self.y0_mm + (np.arange(self.ny) + 0.5) * self.pitch_mm

    def cell_of(self, x_mm: float, y_mm: float) -> tuple[int, int]:
        """(row, column) of the cell holding the point, clamped to the grid."""
        j = int(math.floor((x_mm - self.x0_mm) / self.pitch_mm))
        i = int(math.floor((y_mm - self.y0_mm) / self.pitch_mm))
        return min(max(i, 0), self.ny - 1), min(max(j, 0), self.nx - 1)

    @staticmethod
    def covering(bounds: tuple[float, float, float, float], pitch_mm: float) -> "RasterGrid":
        """The grid of the given pitch whose cells cover ``bounds`` (minx, miny, maxx, maxy) [mm]."""
        minx, miny, maxx, maxy = bounds
        nx = max(1, int(math.ceil((maxx - minx) / pitch_mm - 1e-9)))
        ny = max(1, int(math.ceil((maxy - miny) / pitch_mm - 1e-9)))
        return RasterGrid(float(minx), float(miny), float(pitch_mm), nx, ny)


def polygonal(geometry: BaseGeometry) -> BaseGeometry:
    """The polygonal part of ``geometry``, made valid and with overlaps merged."""
    if geometry is None or geometry.is_empty:
        return shapely.Polygon()
    if not geometry.is_valid:
        geometry = shapely.make_valid(geometry)
    elif geometry.geom_type in ("Polygon", "MultiPolygon"):
        return geometry          # valid: its parts do not overlap already (a union would change nothing)
    parts = [g for g in shapely.get_parts(geometry) if g.geom_type in ("Polygon", "MultiPolygon")]
    parts = [p for p in parts if not p.is_empty and p.area > 0]
    if not parts:
        return shapely.Polygon()
    return shapely.unary_union(parts)


def polygon_edges(geometry: BaseGeometry) -> np.ndarray:
    """All ring edges of a polygonal geometry as an (n, 4) array of x0, y0, x1, y1 [mm]."""
    rings = []
    for poly in shapely.get_parts(geometry):
        if poly.geom_type != "Polygon" or poly.is_empty:
            continue
        rings.append(np.asarray(poly.exterior.coords))
        rings.extend(np.asarray(r.coords) for r in poly.interiors)
    if not rings:
        return np.zeros((0, 4))
    segs = [np.hstack([r[:-1, :2], r[1:, :2]]) for r in rings if len(r) >= 2]
    return np.vstack(segs)


def _scanline_spans(edges: np.ndarray, y_start: float, dy: float, n: int):
    """Covered spans on the scanlines y_k = y_start + k dy, k = 0..n-1 (even-odd rule).

    Returns (k, xa, xb) arrays, xa <= xb [same length unit as the edges].
    An edge crosses line k when min(y0, y1) <= y_k < max(y0, y1) (half-open, so a vertex shared
    by two edges is counted once and horizontal edges never).
    """
    x0, y0, x1, y1 = edges.T
    lo = np.minimum(y0, y1)
    hi = np.maximum(y0, y1)
    keep = hi > lo
    x0, y0, x1, y1, lo, hi = x0[keep], y0[keep], x1[keep], y1[keep], lo[keep], hi[keep]
    k0 = np.clip(np.ceil((lo - y_start) / dy), 0, n).astype(np.int64)
    k1 = np.clip(np.ceil((hi - y_start) / dy), 0, n).astype(np.int64)
    counts = k1 - k0
    total = int(counts.sum())
    if total == 0:
        z = np.zeros(0)
        return np.zeros(0, dtype=np.int64), z, z
    edge = np.repeat(np.arange(len(counts)), counts)
    offs = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    k = k0[edge] + offs
    y = y_start + k * dy
    t = (y - y0[edge]) / (y1[edge] - y0[edge])
    x = x0[edge] + t * (x1[edge] - x0[edge])
    order = np.lexsort((x, k))
    k, x = k[order], x[order]
    if total % 2 or np.any(k[0::2] != k[1::2]):
        # An odd crossing count means the rings are not closed; close them by dropping the
        # unpaired crossings line by line (robust, rare).
        keep_k, keep_a, keep_b = [], [], []
        for kk in np.unique(k):
            xs = x[k == kk]
            m = len(xs) // 2 * 2
            keep_k.append(np.full(m // 2, kk))
            keep_a.append(xs[0:m:2])
            keep_b.append(xs[1:m:2])
        return np.concatenate(keep_k), np.concatenate(keep_a), np.concatenate(keep_b)
    return k[0::2], x[0::2], x[1::2]


def _accumulate(row, xa, xb, x0: float, h: float, nx: int, n_rows: int) -> np.ndarray:
    """Sum span lengths per (row, column) cell, in units of h. Returns (n_rows, nx)."""
    out = np.zeros(n_rows * nx)
    if len(row) == 0:
        return out.reshape(n_rows, nx)
    ca = np.clip((xa - x0) / h, 0.0, nx)
    cb = np.clip((xb - x0) / h, 0.0, nx)
    ok = cb > ca
    row, ca, cb = row[ok], ca[ok], cb[ok]
    ia = np.minimum(np.floor(ca).astype(np.int64), nx - 1)
    ib = np.minimum(np.floor(cb).astype(np.int64), nx - 1)
    base = row * nx
    same = ia == ib
    out += np.bincount(base[same] + ia[same], weights=cb[same] - ca[same], minlength=n_rows * nx)
    d = ~same
    out += np.bincount(base[d] + ia[d], weights=(ia[d] + 1) - ca[d], minlength=n_rows * nx)
    out += np.bincount(base[d] + ib[d], weights=cb[d] - ib[d], minlength=n_rows * nx)
    # full cells ia+1 .. ib-1 through a difference array along each row
    full = d & (ib > ia + 1)
    if np.any(full):
        diff = np.zeros(n_rows * (nx + 1))
        b1 = row[full] * (nx + 1)
        diff += np.bincount(b1 + ia[full] + 1, minlength=n_rows * (nx + 1))
        diff -= np.bincount(b1 + ib[full], minlength=n_rows * (nx + 1))
        out += np.cumsum(diff.reshape(n_rows, nx + 1), axis=1)[:, :nx].ravel()
    return out.reshape(n_rows, nx)


def _window(geometry: BaseGeometry, grid: RasterGrid) -> tuple[int, int, int, int]:
    """Row/column index range (i0, i1, j0, j1), end exclusive, of cells touching the bounds."""
    minx, miny, maxx, maxy = geometry.bounds
    h = grid.pitch_mm
    j0 = max(0, int(math.floor((minx - grid.x0_mm) / h)))
    j1 = min(grid.nx, int(math.floor((maxx - grid.x0_mm) / h)) + 1)
    i0 = max(0, int(math.floor((miny - grid.y0_mm) / h)))
    i1 = min(grid.ny, int(math.floor((maxy - grid.y0_mm) / h)) + 1)
    return i0, max(i0, i1), j0, max(j0, j1)


def cell_coverage(
    geometry: BaseGeometry, grid: RasterGrid, subrows: int = 4, window: bool = False
):
    """Fraction of each cell's area covered by a polygonal geometry.

    c_ij = (1 / (S h)) * sum over S scanlines in row i of (covered length in column j) / 1

    Parameters
    ----------
    geometry : polygonal shapely geometry [mm]
    grid : the raster grid
    subrows : scanlines per cell row S [-]; the result is exact in x and sampled in y
    window : if True return ``(i0, j0, c)`` with ``c`` covering only the geometry's bounds

    Returns
    -------
    (ny, nx) array [-] (or the windowed triple)
    """
    edges = polygon_edges(geometry)
    if window:
        if geometry.is_empty:
            return 0, 0, np.zeros((0, 0))
        i0, i1, j0, j1 = _window(geometry, grid)
    else:
        i0, i1, j0, j1 = 0, grid.ny, 0, grid.nx
    ny, nx = i1 - i0, j1 - j0
    h = grid.pitch_mm
    if ny == 0 or nx == 0 or len(edges) == 0:
        cov = np.zeros((ny, nx))
        return (i0, j0, cov) if window else cov
    dy = h / subrows
    y_start = grid.y0_mm + i0 * h + 0.5 * dy
    k, xa, xb = _scanline_spans(edges, y_start, dy, ny * subrows)
    cov = _accumulate(k // subrows, xa, xb, grid.x0_mm + j0 * h, h, nx, ny) / subrows
    np.clip(cov, 0.0, 1.0, out=cov)
    return (i0, j0, cov) if window else cov


def _line_apertures(edges: np.ndarray, start: float, h: float, n_lines: int,
                    x0: float, nx: int) -> np.ndarray:
    """Open fraction of each cell side on the interior grid lines start + (k+1) h."""
    if n_lines <= 0:
        return np.zeros((0, nx))
    eps = 1e-7 * h
    total = np.zeros((n_lines, nx))
    for off in (-eps, eps):
        k, xa, xb = _scanline_spans(edges, start + h + off, h, n_lines)
        total += _accumulate(k, xa, xb, x0, h, nx, n_lines)
    return np.clip(0.5 * total, 0.0, 1.0)


def face_apertures(geometry: BaseGeometry, grid: RasterGrid) -> tuple[np.ndarray, np.ndarray]:
    """Open fraction of every interior cell face.

    Parameters
    ----------
    geometry : polygonal shapely geometry [mm]
    grid : the raster grid

    Returns
    -------
    fx : (ny, nx-1) [-], face between cells (i, j) and (i, j+1) (a vertical face)
    fy : (ny-1, nx) [-], face between cells (i, j) and (i+1, j) (a horizontal face)
    """
    edges = polygon_edges(geometry)
    h = grid.pitch_mm
    if len(edges) == 0:
        return np.zeros((grid.ny, max(grid.nx - 1, 0))), np.zeros((max(grid.ny - 1, 0), grid.nx))
    fy = _line_apertures(edges, grid.y0_mm, h, grid.ny - 1, grid.x0_mm, grid.nx)
    swapped = edges[:, [1, 0, 3, 2]]
    fx = _line_apertures(swapped, grid.x0_mm, h, grid.nx - 1, grid.y0_mm, grid.ny).T
    return np.ascontiguousarray(fx), fy


def _topology(parts) -> tuple[np.ndarray, np.ndarray]:
    n_parts = np.where(shapely.is_empty(parts), 0, shapely.get_num_geometries(parts))
    holes = np.array([
        sum(shapely.get_num_interior_rings(p) for p in shapely.get_parts(g)) if not g.is_empty else 0
        for g in parts
    ])
    return n_parts, holes


def narrowest_width_mm(
    geometry: BaseGeometry,
    lower_mm: float | None = None,
    upper_mm: float | None = None,
    precision: float = 1.05,
) -> float:
    """Width of the narrowest current-carrying neck of a polygonal geometry [mm].

    Found by erosion: the smallest inward offset d at which any part splits, vanishes or loses
    or gains a hole is half the narrowest neck, w = 2 d (bisection on log d). Dead-end stubs do
    not count: eroding them changes no topology.

    Parameters
    ----------
    geometry : polygonal shapely geometry [mm]
    lower_mm, upper_mm : only resolve w within these bounds [mm]; a narrower neck returns
        ``lower_mm``, a wider one ``upper_mm`` (saves erosions of a large geometry)
    precision : stop when the bracket's ratio hi / lo is below this [-]

    Returns
    -------
    w [mm]
    """
    parts = np.array([p for p in shapely.get_parts(geometry) if not p.is_empty], dtype=object)
    if len(parts) == 0:
        raise ValueError("geometry is empty")
    ref_parts = np.ones(len(parts), dtype=np.int64)
    _, ref_holes = _topology(parts)
    minx, miny, maxx, maxy = geometry.bounds
    hi = 0.5 * max(maxx - minx, maxy - miny)
    lo = hi * 1e-5

    def unchanged(d: float) -> bool:
        eroded = shapely.buffer(parts, -d, quad_segs=4)
        n, holes = _topology(eroded)
        return bool(np.all(n == ref_parts) and np.all(holes == ref_holes))

    if upper_mm is not None and upper_mm / 2 < hi:
        hi = upper_mm / 2
    if lower_mm is not None and lower_mm / 2 > lo:
        lo = min(lower_mm / 2, hi)
    if not unchanged(lo):
        return 2.0 * lo
    # climb from the small offsets up (large erosions of big pours are slow), then bisect
    while True:
        step = min(lo * 4.0, hi)
        if unchanged(step):
            lo = step
            if step >= hi:
                return 2.0 * hi
        else:
            hi = step
            break
    while hi / lo > precision:
        mid = math.sqrt(lo * hi)
        if unchanged(mid):
            lo = mid
        else:
            hi = mid
    return 2.0 * math.sqrt(lo * hi)


def grid_covering(bounds: tuple[float, float, float, float], pitch_mm: float,
                  margin_cells: int = 2) -> RasterGrid:
    """A grid covering ``bounds`` (minx, miny, maxx, maxy) [mm] at ``pitch_mm`` [mm] with a margin
    of ``margin_cells`` [-] empty cells on every side (a distance transform of the copper needs
    copper-free cells round it).

    Examples
    --------
    >>> g = grid_covering((0.0, 0.0, 1.0, 0.5), 0.1)
    >>> (g.nx, g.ny, round(g.x0_mm, 3))
    (14, 9, -0.2)
    """
    minx, miny, maxx, maxy = bounds
    x0 = minx - margin_cells * pitch_mm
    y0 = miny - margin_cells * pitch_mm
    nx = int(np.ceil((maxx - x0) / pitch_mm)) + margin_cells
    ny = int(np.ceil((maxy - y0) / pitch_mm)) + margin_cells
    return RasterGrid(x0, y0, pitch_mm, max(nx, 1), max(ny, 1))


def cell_centre(grid: RasterGrid, j, i) -> tuple[np.ndarray, np.ndarray]:
    """Centre(s) (x, y) [mm] of cell(s) (row j, column i): x = x0 + (i + 1/2) h, y = y0 + (j + 1/2) h.

    Examples
    --------
    >>> cell_centre(RasterGrid(0.0, 0.0, 0.5, 4, 4), 1, 2)
    (np.float64(1.25), np.float64(0.75))
    """
    return (grid.x0_mm + (np.asarray(i) + 0.5) * grid.pitch_mm,
            grid.y0_mm + (np.asarray(j) + 0.5) * grid.pitch_mm)


def rasterise(geometry: BaseGeometry | None, grid: RasterGrid) -> np.ndarray:
    """Boolean mask (ny, nx): True where the cell centre lies inside ``geometry`` [mm] (even-odd
    rule, scan line through the cell centres of each row: exact at the centres, so the copper
    area reads as cells x h^2 within a cell's share of the outline).

    Examples
    --------
    >>> m = rasterise(shapely.box(0.0, 0.0, 1.0, 0.5), RasterGrid(0.0, 0.0, 0.1, 10, 5))
    >>> int(m.sum())      # 10 x 5 centres inside
    50
    """
    mask = np.zeros((grid.ny, grid.nx), dtype=bool)
    e = polygon_edges(geometry) if geometry is not None and not geometry.is_empty else np.zeros((0, 4))
    if len(e) == 0:
        return mask
    p = grid.pitch_mm
    x0, y0, x1, y1 = e.T
    keep = y0 != y1
    x0, y0, x1, y1 = x0[keep], y0[keep], x1[keep], y1[keep]
    ylo = np.minimum(y0, y1)
    yhi = np.maximum(y0, y1)
    # row j is crossed when ylo <= yc_j < yhi, yc_j = y0g + (j + 1/2) p
    jlo = np.ceil((ylo - grid.y0_mm) / p - 0.5).astype(np.int64)
    jhi = np.ceil((yhi - grid.y0_mm) / p - 0.5).astype(np.int64) - 1
    jlo = np.maximum(jlo, 0)
    jhi = np.minimum(jhi, grid.ny - 1)
    counts = np.maximum(jhi - jlo + 1, 0)
    total = int(counts.sum())
    if total == 0:
        return mask
    rep = np.repeat(np.arange(len(counts)), counts)
    offs = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    j = jlo[rep] + offs
    yc = grid.y0_mm + (j + 0.5) * p
    t = (yc - y0[rep]) / (y1[rep] - y0[rep])
    x = x0[rep] + t * (x1[rep] - x0[rep])
    order = np.lexsort((x, j))
    j = j[order]
    x = x[order]
    if len(j) % 2:
        # a ring left open by bad input; drop the last crossing rather than fail
        j, x = j[:-1], x[:-1]
    ja, xa, xb = j[0::2], x[0::2], x[1::2]
    ia = np.ceil((xa - grid.x0_mm) / p - 0.5).astype(np.int64)
    ib = np.ceil((xb - grid.x0_mm) / p - 0.5).astype(np.int64) - 1
    ia = np.maximum(ia, 0)
    ib = np.minimum(ib, grid.nx - 1)
    ok = ib >= ia
    diff = np.zeros((grid.ny, grid.nx + 1), dtype=np.int32)
    np.add.at(diff, (ja[ok], ia[ok]), 1)
    np.add.at(diff, (ja[ok], ib[ok] + 1), -1)
    return np.cumsum(diff[:, :-1], axis=1) > 0
