"""Rasterising copper geometry onto a regular grid (cell-centre sampling, even-odd scan-line fill).

The routes and the clearance measurements work on rasters: a cell is copper when its centre lies
inside the geometry. The fill is a vectorised scan line over the polygon edges, exact at the cell
centres, so a 1 M-cell layer rasterises in well under a second.

The grid is ``physics.raster.RasterGrid`` (the DC solver's); only the sampling differs: the DC
solver needs cell coverage and face apertures, the routes a copper / no-copper mask.
"""

from __future__ import annotations

import numpy as np
from shapely.geometry.base import BaseGeometry

from ..physics.raster import RasterGrid
from ..readers.fast_union import polygons_of

__all__ = ["RasterGrid", "grid_covering", "cell_centre", "polygons_of", "rasterise"]


def grid_covering(bounds: tuple[float, float, float, float], pitch_mm: float,
                  margin_cells: int = 2) -> RasterGrid:
    """A grid covering ``bounds`` (minx, miny, maxx, maxy) [mm] with a margin of empty cells [-]
    on every side (the routes' distance transform needs copper-free cells round the copper)."""
    minx, miny, maxx, maxy = bounds
    x0 = minx - margin_cells * pitch_mm
    y0 = miny - margin_cells * pitch_mm
    nx = int(np.ceil((maxx - x0) / pitch_mm)) + margin_cells
    ny = int(np.ceil((maxy - y0) / pitch_mm)) + margin_cells
    return RasterGrid(x0, y0, pitch_mm, max(nx, 1), max(ny, 1))


def cell_centre(grid: RasterGrid, j: np.ndarray | int, i: np.ndarray | int) -> tuple[np.ndarray, np.ndarray]:
    """Centre(s) [mm] of cell(s) (row j, column i)."""
    return (grid.x0_mm + (np.asarray(i) + 0.5) * grid.pitch_mm,
            grid.y0_mm + (np.asarray(j) + 0.5) * grid.pitch_mm)


def _edges(geom: BaseGeometry) -> np.ndarray:
    segs = []
    for poly in polygons_of(geom):
        for ring in (poly.exterior, *poly.interiors):
            c = np.asarray(ring.coords)[:, :2]
            if len(c) >= 3:
                segs.append(np.hstack([c[:-1], c[1:]]))
    if not segs:
        return np.zeros((0, 4))
    return np.vstack(segs)


def rasterise(geom: BaseGeometry | None, grid: RasterGrid) -> np.ndarray:
    """Boolean mask (ny, nx): True where the cell centre lies inside ``geom`` (even-odd rule)."""
    mask = np.zeros((grid.ny, grid.nx), dtype=bool)
    e = _edges(geom) if geom is not None else np.zeros((0, 4))
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
    mask = np.cumsum(diff[:, :-1], axis=1) > 0
    return mask
