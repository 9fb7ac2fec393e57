"""DC current in copper sheets of arbitrary shape: a finite-volume Laplace solve on a raster.

Each copper layer is a sheet of uniform sheet resistance Rs [ohm/sq]. In a sheet the potential
phi [V] satisfies Laplace's equation div((1/Rs) grad phi) = 0 with zero normal current on free
edges; the sheet current density is J_s = -(1/Rs) grad phi [A/m].

Discretisation (cell-centred finite volumes on a square grid of pitch h)
-----------------------------------------------------------------------
Kirchhoff's current law on each cell P with neighbours Q across faces of open fraction f_PQ
(the part of the face inside copper, 0..1):

    sum_Q G_PQ (phi_P - phi_Q) = I_P,        G_PQ = f_PQ * h / (Rs * d_PQ)

with d_PQ = h between cell centres, so G_PQ = f_PQ / Rs for square cells. Using the face
aperture f rather than "cell in / cell out" makes a uniform current along a straight edge at any
angle exact (the discrete fluxes equal the face integrals of a linear potential), so boundaries
converge instead of staircasing. Faces open less than 0.1 % are closed.

Units: geometry is in board millimetres, everything else SI
----------------------------------------------------------
The copper (per layer a shapely polygon), contact and via pad shapes and the grid pitch are in
board millimetres [mm], as they come from the board; sheet resistance [ohm/sq], resistances
[ohm], potentials [V] and currents [A] are SI. This is the one exception to "physics takes SI
units", made on purpose: the geometry goes straight from the board to the raster, and scaling
every polygon (and then ~2 million cell centres back) to metres would buy nothing. Sheet
resistance and the square-cell conductance G_PQ = f_PQ / Rs do not depend on the length unit.

Contacts and via pads are ideal equipotential regions: their cells are merged into one node.
Where a face leaves such a region the distance from the region's true edge to the outside cell
centre replaces d_PQ (d = h - l, l = length of the centre-to-centre segment inside the region,
limited to 0.05 h <= d <= h), so a contact edge inside a cell is placed where it really is.

Vias and lumped resistors (a sense resistor's body, a jumper) are conductances 1/R between two
nodes, on the same layer or on different layers; R = 0 merges the two ends. A point contact is a
single cell. A current-only contact set is referenced by grounding the node where the current
leaves (the currents on each isolated piece must sum to zero).

The linear system (symmetric positive definite after the fixed potentials are eliminated) is
solved by a sparse direct factorisation (SuperLU) when small and, when large, by conjugate
gradients preconditioned with one V-cycle of classical (Ruge-Stuben) algebraic multigrid, which
suits this M-matrix; both are checked by their residual. For a 2-million-unknown two-layer pour
this takes about 12 s of CPU time and 1.6 GB (benchmarks/bench_dcsolve.py).

Examples
--------
(a) resistance of a copper path between two pads::

    r_ohm = two_terminal_resistance([SheetLayer(path_mm, rs)], Contact("J1", 0, pad1_mm),
                                    Contact("J2", 0, pad2_mm))

(b) Kelvin sense error: load current in at one end, out at the other, the shunt body a lumped
link between its two (floating, equipotential) pads, sense taps floating::

    sol = solve_dc([SheetLayer(copper, rs)],
                   [Contact("in", 0, end_a, current_a=5.0), Contact("out", 0, end_b, potential_v=0.0),
                    Contact("R+", 0, pad_p, equipotential=True), Contact("R-", 0, pad_n, equipotential=True),
                    Contact("S+", 0, tap_p), Contact("S-", 0, tap_n)],
                   links=[LumpedLink(pad_p_xy, pad_n_xy, 0, 0, r_shunt)])
    error = sol.voltage("S+", "S-") / (5.0 * r_shunt) - 1.0

(c) van der Pauw: ``four_terminal_resistance(layers, A, B, D, C)`` is R_AB,CD (point contacts).

Point contacts and vias with radius_mm = 0 occupy one grid cell: their spreading resistance
grows as ln(1 / pitch), so give pads as polygons and vias a land radius when absolute values
matter.

References
----------
- S. V. Patankar, "Numerical Heat Transfer and Fluid Flow", Hemisphere, 1980, ch. 4
  (finite-volume discretisation of the diffusion equation).
- G. H. Shortley, R. Weller, "The numerical solution of Laplace's equation", J. Appl. Phys. 9,
  334-348, 1938 (boundaries between grid points).
- L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of discs of
  arbitrary shape", Philips Res. Rep. 13, 1-9, 1958 (used to check the solver).
- J. W. Ruge, K. Stueben, "Algebraic multigrid", in Multigrid Methods, SIAM, 1987, ch. 4.
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph
import scipy.sparse.linalg as spla
import shapely
from shapely.geometry.base import BaseGeometry

from loopcheck.physics.raster import (
    RasterGrid,
    cell_coverage,
    face_apertures,
    narrowest_width_mm,
    polygonal,
)

__all__ = [
    "SheetLayer",
    "Contact",
    "LumpedLink",
    "ViaLink",
    "DCSolution",
    "SolverInfo",
    "solve_dc",
    "two_terminal_resistance",
    "four_terminal_resistance",
    "choose_pitch_mm",
]

#: faces open less than this fraction are treated as closed [-]
MIN_APERTURE = 1e-3
#: default upper limit on raster cells over all layers [-]
DEFAULT_MAX_CELLS = 4_000_000
#: explicit pitches giving more cells than this are refused [-]
HARD_MAX_CELLS = 10_000_000
#: unknowns up to which the direct solver is used [-]
DIRECT_SOLVER_LIMIT = 20_000


@dataclass
class SheetLayer:
    """One copper layer.

    Parameters
    ----------
    geometry : shapely Polygon / MultiPolygon of the copper [mm]
    sheet_resistance_ohm : sheet resistance Rs = rho / t [ohm/sq]
    name : label used in messages
    """

    geometry: BaseGeometry
    sheet_resistance_ohm: float
    name: str = ""


@dataclass
class Contact:
    """A pad where current enters or leaves, or a sense tap.

    Parameters
    ----------
    name : unique label
    layer : index into the layer list [-]
    geometry : shapely polygon [mm], or a point (one grid cell)
    current_a : current injected into the copper [A] (+ into the copper), or None
    potential_v : fixed potential [V], or None
    equipotential : whether the contact area is an ideal conductor (merged into one node).
        Default: True for driven contacts (current or potential given), False for a sense tap
        (both None), which then only reports the area-weighted mean potential under it. A
        floating equipotential contact models a soldered pad that carries no external current.
        Driven contacts are always equipotential.
    """

    name: str
    layer: int
    geometry: BaseGeometry
    current_a: float | None = None
    potential_v: float | None = None
    equipotential: bool | None = None

    @property
    def driven(self) -> bool:
        return self.current_a is not None or self.potential_v is not None


@dataclass
class LumpedLink:
    """A lumped resistance between two points: a via, a resistor body, a jumper.

    Parameters
    ----------
    a_xy, b_xy : end points (x, y) [mm]
    layer_a, layer_b : layers of the ends [-] (equal for a resistor on one layer)
    resistance_ohm : R [ohm]; 0 joins the ends into one node
    radius_mm : radius of the equipotential pad at each end [mm]; 0 = one grid cell
    name : label used in messages
    """

    a_xy: tuple[float, float]
    b_xy: tuple[float, float]
    layer_a: int
    layer_b: int
    resistance_ohm: float
    radius_mm: float = 0.0
    name: str = ""


@dataclass
class ViaLink:
    """A via: a lumped resistance between two layers at one point.

    Parameters
    ----------
    x_mm, y_mm : via centre [mm]
    layer_a, layer_b : the two layers joined [-]
    resistance_ohm : barrel resistance [ohm] (see copper.via_resistance)
    radius_mm : radius of the equipotential via pad/land [mm]; 0 = one grid cell
    name : label used in messages
    """

    x_mm: float
    y_mm: float
    layer_a: int
    layer_b: int
    resistance_ohm: float
    radius_mm: float = 0.0
    name: str = ""

    def as_link(self) -> LumpedLink:
        return LumpedLink((self.x_mm, self.y_mm), (self.x_mm, self.y_mm), self.layer_a,
                          self.layer_b, self.resistance_ohm, self.radius_mm, self.name)


@dataclass
class SolverInfo:
    """How the linear system was solved: method, unknowns, iterations, relative residual, times."""

    method: str
    unknowns: int
    iterations: int
    relative_residual: float
    setup_s: float
    solve_s: float
    raster_s: float
    assemble_s: float


@dataclass
class _ContactResult:
    kind: str  # "potential", "current", "float"
    node: int  # merged node or -1
    layer: int
    cells: np.ndarray  # global cell indices (float taps)
    weights: np.ndarray  # area weights (float taps)
    point: tuple[float, float] | None


@dataclass
class DCSolution:
    """Result of :func:`solve_dc`. Potentials [V], currents [A], sheet current density [A/m].

    Attributes
    ----------
    pitch_mm : raster pitch h [mm]
    grid : the raster grid (shared by all layers)
    pitch_capped : True when the automatic pitch was coarsened to respect ``max_cells``
    solver : :class:`SolverInfo`
    notes : remarks (capped pitch, unused copper pieces ...)
    """

    pitch_mm: float
    grid: RasterGrid
    pitch_capped: bool
    solver: SolverInfo
    notes: list[str]
    _potential: list[np.ndarray] = field(repr=False)
    _coverage: list[np.ndarray] = field(repr=False)
    _jx: list[np.ndarray] = field(repr=False)
    _jy: list[np.ndarray] = field(repr=False)
    _merged: list[np.ndarray] = field(repr=False)
    _contacts: dict[str, _ContactResult] = field(repr=False)
    _contact_current: dict[str, float] = field(repr=False)
    _node_potential: np.ndarray = field(repr=False)
    _component: np.ndarray = field(repr=False)
    _cell_node: np.ndarray = field(repr=False)

    # ---- potentials -------------------------------------------------------------------
    @property
    def layer_count(self) -> int:
        return len(self._potential)

    @property
    def contact_names(self) -> list[str]:
        """Names of the contacts, in the order given."""
        return list(self._contacts)

    def potential_map(self, layer: int) -> np.ndarray:
        """Cell potentials of a layer, (ny, nx) [V]; NaN outside copper or on unused copper."""
        return self._potential[self._layer(layer)]

    def coverage_map(self, layer: int) -> np.ndarray:
        """Copper fraction of each cell, (ny, nx) [-]."""
        return self._coverage[self._layer(layer)]

    def potential_at(self, layer: int, x_mm: float, y_mm: float) -> float:
        """Potential at a point [V] (bilinear between cell centres where all four are copper).

        Raises ValueError if the point is not on the layer's copper (nor within one cell).
        """
        phi = self._potential[self._layer(layer)]
        g = self.grid
        u = (x_mm - g.x0_mm) / g.pitch_mm - 0.5
        v = (y_mm - g.y0_mm) / g.pitch_mm - 0.5
        j0, i0 = int(math.floor(u)), int(math.floor(v))
        if 0 <= i0 < g.ny - 1 and 0 <= j0 < g.nx - 1:
            block = phi[i0:i0 + 2, j0:j0 + 2]
            if np.all(np.isfinite(block)):
                s, t = u - j0, v - i0
                return float((1 - t) * ((1 - s) * block[0, 0] + s * block[0, 1])
                             + t * ((1 - s) * block[1, 0] + s * block[1, 1]))
        i, j = g.cell_of(x_mm, y_mm)
        if np.isfinite(phi[i, j]):
            return float(phi[i, j])
        best = None
        for di in (-1, 0, 1):
            for dj in (-1, 0, 1):
                ii, jj = i + di, j + dj
                if 0 <= ii < g.ny and 0 <= jj < g.nx and np.isfinite(phi[ii, jj]):
                    dist = (ii - v) ** 2 + (jj - u) ** 2
                    if best is None or dist < best[0]:
                        best = (dist, phi[ii, jj])
        if best is None:
            raise ValueError(f"point ({x_mm:g}, {y_mm:g}) mm is not on the solved copper of layer {layer}")
        return float(best[1])

    def contact_potential(self, name: str) -> float:
        """Potential of a contact [V]: its node, or the area-weighted mean under a sense tap."""
        c = self._contact(name)
        if c.node >= 0:
            return float(self._node_potential[c.node])
        if c.point is not None:
            if not np.isfinite(self._potential[c.layer].ravel()[c.cells[0] - c.layer * self.grid.cell_count]):
                return float("nan")  # on copper that no driven contact reaches
            return self.potential_at(c.layer, *c.point)
        phi = self._potential[c.layer].ravel()
        vals = phi[c.cells]
        ok = np.isfinite(vals)
        if not np.any(ok):
            return float("nan")
        return float(np.sum(vals[ok] * c.weights[ok]) / np.sum(c.weights[ok]))

    def contact_current(self, name: str) -> float:
        """Current into the copper at a contact [A] (0 for a floating contact)."""
        self._contact(name)
        return self._contact_current[name]

    def connected(self, a: str, b: str) -> bool:
        """Whether two contacts are joined by copper and links (the same conducting piece)."""
        return self._component_of(a) == self._component_of(b)

    def _component_of(self, name: str) -> int:
        c = self._contact(name)
        if c.node >= 0:
            return int(self._component[c.node])
        node = self._cell_node[c.cells[0]]
        return int(self._component[node]) if node >= 0 else -1

    def voltage(self, a: str, b: str) -> float:
        """V_a - V_b [V] between two contacts."""
        return self.contact_potential(a) - self.contact_potential(b)

    def resistance(self, a: str, b: str) -> float:
        """(V_a - V_b) / I_a [ohm]: the two-terminal resistance when a and b are the terminals."""
        i = self.contact_current(a)
        if i == 0:
            raise ValueError(f"contact {a!r} carries no current")
        return self.voltage(a, b) / i

    # ---- current density --------------------------------------------------------------
    def current_density_vector(self, layer: int) -> tuple[np.ndarray, np.ndarray]:
        """Sheet current density components (Jx, Jy), each (ny, nx) [A/m].

        0 outside copper; NaN inside equipotential contacts and via pads (not modelled there).
        """
        k = self._layer(layer)
        return self._jx[k], self._jy[k]

    def current_density(self, layer: int, thickness_m: float | None = None) -> np.ndarray:
        """|J| per cell, (ny, nx): sheet current density [A/m], or volume density [A/m^2]
        J = J_s / t when the copper thickness ``thickness_m`` [m] is given."""
        jx, jy = self.current_density_vector(layer)
        mag = np.hypot(jx, jy)
        if thickness_m is not None:
            _positive(thickness_m, "thickness_m")
            mag = mag / thickness_m
        return mag

    @property
    def peak_current_density(self) -> tuple[float, int, float, float]:
        """(|J_s| [A/m], layer, x [mm], y [mm]) of the largest sheet current density.

        Taken over cells at least half copper, outside equipotential regions. At a re-entrant
        (inside) corner the exact density is singular, so there the peak grows as the pitch
        shrinks; read it as the density averaged over one cell.
        """
        best = (0.0, 0, float("nan"), float("nan"))
        for k in range(self.layer_count):
            mag = self.current_density(k)
            mask = (self._coverage[k] >= 0.5) & ~self._merged[k] & np.isfinite(mag)
            if not np.any(mask):
                continue
            vals = np.where(mask, mag, -1.0)
            idx = int(np.argmax(vals))
            if vals.flat[idx] > best[0]:
                i, j = divmod(idx, self.grid.nx)
                best = (float(vals.flat[idx]), k, float(self.grid.x_centres_mm[j]),
                        float(self.grid.y_centres_mm[i]))
        return best

    def peak_volume_current_density(self, thickness_m: float) -> tuple[float, int, float, float]:
        """(|J| [A/m^2], layer, x [mm], y [mm]) = peak sheet density / copper thickness [m]."""
        _positive(thickness_m, "thickness_m")
        j, k, x, y = self.peak_current_density
        return j / thickness_m, k, x, y

    # ---- helpers ----------------------------------------------------------------------
    def _layer(self, layer: int) -> int:
        if not isinstance(layer, (int, np.integer)) or not 0 <= layer < self.layer_count:
            raise ValueError(f"layer must be an index 0..{self.layer_count - 1}, got {layer!r}")
        return int(layer)

    def _contact(self, name: str) -> _ContactResult:
        try:
            return self._contacts[name]
        except KeyError:
            raise ValueError(f"no contact named {name!r}") from None


# ---------------------------------------------------------------------------------------
# validation helpers


def _positive(value, what: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a number, got {value!r}") from None
    if not math.isfinite(v) or v <= 0:
        raise ValueError(f"{what} must be finite and > 0, got {value!r}")
    return v


def _finite(value, what: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise ValueError(f"{what} must be finite, got {value!r}")
    return v


def _layer_index(value, n: int, what: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or not 0 <= value < n:
        raise ValueError(f"{what} must be a layer index 0..{n - 1}, got {value!r}")
    return int(value)


def _is_point(geom: BaseGeometry) -> bool:
    return geom.geom_type == "Point"


# ---------------------------------------------------------------------------------------
# pitch


def choose_pitch_mm(
    layers: Sequence[SheetLayer],
    contacts: Sequence[Contact] = (),
    links: Sequence[LumpedLink] = (),
    cells_across: float = 6.0,
    min_cells_along: int = 100,
    max_cells: int = DEFAULT_MAX_CELLS,
) -> tuple[float, bool]:
    """Automatic raster pitch [mm] and whether the cell cap coarsened it.

    h = min(w_neck / cells_across, w_contact / 3, extent / min_cells_along), then
    h = max(h, sqrt(n_layers * bbox_area / max_cells)).

    Only copper pieces touched by a contact or link end count for w_neck (isolated islands carry
    no current).

    Parameters
    ----------
    layers : copper layers (geometry in [mm])
    contacts : contacts (polygon contacts limit the pitch to a third of their narrowest width)
    links : vias and lumped links
    cells_across : cells across the narrowest current-carrying neck [-]
    min_cells_along : cells along the larger extent of the copper at least [-]
    max_cells : cap on total cells over all layers [-]
    """
    geoms = [polygonal(l.geometry) for l in layers]
    bounds = np.array([g.bounds for g in geoms if not g.is_empty])
    minx, miny = bounds[:, 0].min(), bounds[:, 1].min()
    maxx, maxy = bounds[:, 2].max(), bounds[:, 3].max()
    extent = max(maxx - minx, maxy - miny)
    area = (maxx - minx) * (maxy - miny)
    n_layers = sum(1 for g in geoms if not g.is_empty)
    floor_h = math.sqrt(max(area, extent * extent / max_cells) * n_layers / max_cells)
    ceil_h = extent / min_cells_along
    # necks only matter between the cap's pitch and the coarsest pitch allowed
    lower_w, upper_w = floor_h * cells_across, max(ceil_h * cells_across, floor_h * cells_across)
    h = ceil_h
    capped = False
    for k, g in enumerate(geoms):
        if g.is_empty:
            continue
        probes = [c.geometry for c in contacts if c.layer == k]
        for ln in links:
            if ln.layer_a == k:
                probes.append(shapely.Point(ln.a_xy))
            if ln.layer_b == k:
                probes.append(shapely.Point(ln.b_xy))
        parts = list(shapely.get_parts(g))
        if probes:
            probe = shapely.union_all(probes)
            touched = [p for p in parts if p.distance(probe) <= 1e-9]
            parts = touched or parts
        w = narrowest_width_mm(shapely.MultiPolygon(parts) if len(parts) > 1 else parts[0],
                               lower_mm=lower_w, upper_mm=upper_w)
        h = min(h, w / cells_across)
        capped |= w <= lower_w * (1 + 1e-9)
    for c in contacts:
        cg = polygonal(c.geometry)
        if not cg.is_empty:
            w = narrowest_width_mm(cg, lower_mm=3 * floor_h, upper_mm=3 * max(ceil_h, floor_h))
            h = min(h, w / 3.0)
            capped |= w <= 3 * floor_h * (1 + 1e-9)
    return float(max(h, floor_h)), bool(capped)


# ---------------------------------------------------------------------------------------
# the solver


class _Merger:
    """Equipotential groups of cells (contacts, via pads, zero-ohm links)."""

    def __init__(self):
        self.group_cells: list[np.ndarray] = []
        self.group_geom: list[BaseGeometry | None] = []

    def add(self, cells: np.ndarray, geom: BaseGeometry | None) -> int:
        self.group_cells.append(np.asarray(cells, dtype=np.int64))
        self.group_geom.append(geom)
        return len(self.group_cells) - 1


def _nearest_active(grid: RasterGrid, active: np.ndarray, x: float, y: float, reach: int = 2) -> int:
    """Flat index (within the layer) of the active cell nearest the point, or -1."""
    i, j = grid.cell_of(x, y)
    if active[i, j]:
        return i * grid.nx + j
    h = grid.pitch_mm
    best, best_d = -1, math.inf
    for ii in range(max(0, i - reach), min(grid.ny, i + reach + 1)):
        for jj in range(max(0, j - reach), min(grid.nx, j + reach + 1)):
            if active[ii, jj]:
                cx = grid.x0_mm + (jj + 0.5) * h
                cy = grid.y0_mm + (ii + 0.5) * h
                d = (cx - x) ** 2 + (cy - y) ** 2
                if d < best_d:
                    best, best_d = ii * grid.nx + jj, d
    if best >= 0 and math.sqrt(best_d) <= 1.5 * h + 1e-12:
        return best
    return -1


def _disk_cells(grid: RasterGrid, active: np.ndarray, x: float, y: float, radius_mm: float) -> np.ndarray:
    """Flat indices (within the layer) of the active cells whose centres lie in the disk (a via's
    land); when none does (a land smaller than a cell), the cell holding the centre if active,
    else the active cell nearest the centre within 1.5 pitches, else the centre's own cell.

    The same cells as "at least half inside" up to the cells the disk's edge cuts near their
    centres, computed from the cell centres alone (vias are many: rasterising each land's
    polygon was the solve's largest cost on real boards)."""
    h = grid.pitch_mm
    r = int(math.ceil(radius_mm / h)) + 1
    i, j = grid.cell_of(x, y)
    i0, i1 = max(i - r, 0), min(i + r + 1, grid.ny)
    j0, j1 = max(j - r, 0), min(j + r + 1, grid.nx)
    ii, jj = np.mgrid[i0:i1, j0:j1]
    cy = grid.y0_mm + (ii + 0.5) * h
    cx = grid.x0_mm + (jj + 0.5) * h
    inside = ((cx - x) ** 2 + (cy - y) ** 2 <= radius_mm ** 2) & active[i0:i1, j0:j1]
    if inside.any():
        return (ii[inside] * grid.nx + jj[inside]).astype(np.int64)
    if active[i, j]:
        return np.array([i * grid.nx + j], dtype=np.int64)
    near = _nearest_active(grid, active, x, y)
    # else the land is on an island smaller than a cell: its own cell becomes a node (the merger
    # keeps it), joined by the via and by a contact in the same cell
    return np.array([near if near >= 0 else i * grid.nx + j], dtype=np.int64)


def _region_cells(geom: BaseGeometry, copper: BaseGeometry, grid: RasterGrid,
                  active: np.ndarray, what: str, weights: bool = True):
    """Cells of a polygonal region on copper.

    Returns (cells, tap_cells, tap_weights), flat indices within the layer: ``cells`` are those
    at least half inside the region (failing that, the ones it overlaps most), merged when the
    region is equipotential; ``tap_cells`` are all copper cells it touches, with the covered
    copper fraction as weight, for the mean potential under a floating tap.
    """
    h = grid.pitch_mm
    if weights:
        minx, miny, maxx, maxy = geom.bounds
        # clip the copper to the region's neighbourhood first: intersections with large pours
        # are slow
        local = shapely.clip_by_rect(copper, minx - h, miny - h, maxx + h, maxy + h)
        if not shapely.intersects(local, geom):
            raise ValueError(f"{what} lies outside the copper")
    i0, j0, cov = cell_coverage(geom, grid, window=True)
    ny, nx = cov.shape
    act = active[i0:i0 + ny, j0:j0 + nx]
    pick = act & (cov >= 0.5)
    if not np.any(pick):
        m = np.where(act, cov, 0.0)
        if m.max() <= 0:
            # the region lies on copper that crosses no cell face: an island smaller than a cell
            # (a pad joined to the rest of its net by a via in the pad, on a coarse grid). The
            # cell under the region's centre stands for it: as an equipotential contact it
            # becomes a node of its own, joined to the rest by the vias that land in it
            if not weights:
                raise ValueError(f"{what} lies outside the copper (no grid cell; try a finer pitch_mm)")
            c = geom.centroid
            i, j = grid.cell_of(float(c.x), float(c.y))
            cells = np.array([i * grid.nx + j], dtype=np.int64)
            return cells, cells, np.ones(1)
        pick = m >= m.max() * (1 - 1e-9)
    ii, jj = np.nonzero(pick)
    cells = (ii + i0) * grid.nx + (jj + j0)
    if not weights:
        return cells, cells, np.ones(len(cells))
    # a sense tap averages over every cell it touches, weighted by the copper it covers there
    inter = polygonal(geom.intersection(local))
    if inter.is_empty:
        return cells, cells, np.ones(len(cells))
    wi0, wj0, wcov = cell_coverage(inter, grid, window=True)
    wact = active[wi0:wi0 + wcov.shape[0], wj0:wj0 + wcov.shape[1]]
    wi, wj = np.nonzero((wcov > 0) & wact)
    if len(wi) == 0:
        return cells, cells, np.ones(len(cells))
    return cells, (wi + wi0) * grid.nx + (wj + wj0), wcov[wi, wj]


def solve_dc(
    layers: Sequence[SheetLayer],
    contacts: Sequence[Contact],
    vias: Sequence[ViaLink | LumpedLink] = (),
    pitch_mm: float | None = None,
    *,
    links: Sequence[LumpedLink | ViaLink] = (),
    max_cells: int = DEFAULT_MAX_CELLS,
    cells_across: float = 6.0,
    solver: str = "auto",
    rtol: float = 1e-8,
) -> DCSolution:
    """Solve the DC potential and current in one or more copper sheets.

    div((1/Rs) grad phi) = 0 in the copper, J_s . n = 0 on free edges, phi = V on potential
    contacts, net current I on current contacts, lumped conductances 1/R on links; discretised
    as described in the module docstring.

    Parameters
    ----------
    layers : copper sheets, geometry [mm] and sheet resistance [ohm/sq]
    contacts : pads and taps (see :class:`Contact`); potentials [V], currents [A]
    vias : vias / lumped links (resistance [ohm])
    pitch_mm : raster pitch [mm]; None chooses it (:func:`choose_pitch_mm`)
    links : further lumped links (same kind of element as ``vias``)
    max_cells : cap on raster cells over all layers for the automatic pitch [-]
    cells_across : cells across the narrowest neck for the automatic pitch [-]
    solver : "auto", "direct" (sparse LU) or "amg" (Ruge-Stuben AMG + CG)
    rtol : relative residual required of the iterative solver [-]

    Returns
    -------
    DCSolution

    Raises
    ------
    ValueError : bad argument (named in the message), a contact off the copper, currents on an
        isolated piece without a potential reference that do not sum to zero, a solve that
        did not converge.
    """
    t_start = time.perf_counter()
    if solver not in ("auto", "direct", "amg"):
        raise ValueError(f"solver must be 'auto', 'direct' or 'amg', got {solver!r}")
    _positive(rtol, "rtol")
    _positive(cells_across, "cells_across")
    if _positive(max_cells, "max_cells") < 1:
        raise ValueError(f"max_cells must be >= 1, got {max_cells!r}")
    layers = list(layers) if layers is not None else []
    contacts = list(contacts) if contacts is not None else []
    if not layers:
        raise ValueError("layers is empty: give at least one SheetLayer")
    geoms: list[BaseGeometry] = []
    rs: list[float] = []
    for k, layer in enumerate(layers):
        if not isinstance(layer, SheetLayer):
            raise ValueError(f"layers[{k}] must be a SheetLayer, got {type(layer).__name__}")
        if layer.geometry is None or not isinstance(layer.geometry, BaseGeometry):
            raise ValueError(f"layers[{k}].geometry must be a shapely geometry")
        g = polygonal(layer.geometry)
        if g.is_empty:
            raise ValueError(f"layers[{k}].geometry is empty (no copper area)")
        shapely.prepare(g)  # many point-in-copper tests follow
        geoms.append(g)
        rs.append(_positive(layer.sheet_resistance_ohm, f"layers[{k}].sheet_resistance_ohm"))
    n_layers = len(layers)

    if not contacts:
        raise ValueError("contacts is empty: give at least one driven contact")
    names = set()
    for n, c in enumerate(contacts):
        if not isinstance(c, Contact):
            raise ValueError(f"contacts[{n}] must be a Contact, got {type(c).__name__}")
        label = f"contacts[{n}] ({c.name!r})"
        if not isinstance(c.name, str) or not c.name:
            raise ValueError(f"contacts[{n}].name must be a non-empty string")
        if c.name in names:
            raise ValueError(f"contacts[{n}].name {c.name!r} is used twice")
        names.add(c.name)
        _layer_index(c.layer, n_layers, f"{label}.layer")
        if c.geometry is None or not isinstance(c.geometry, BaseGeometry) or c.geometry.is_empty:
            raise ValueError(f"{label}.geometry is empty")
        if c.current_a is not None and c.potential_v is not None:
            raise ValueError(f"{label}: give current_a or potential_v, not both")
        if c.current_a is not None:
            _finite(c.current_a, f"{label}.current_a")
        if c.potential_v is not None:
            _finite(c.potential_v, f"{label}.potential_v")
    if not any(c.driven for c in contacts):
        raise ValueError("contacts: no contact drives a current or fixes a potential")

    all_links: list[LumpedLink] = []
    for what, seq in (("vias", vias), ("links", links)):
        for n, ln in enumerate(list(seq or ())):
            label = f"{what}[{n}]"
            if isinstance(ln, ViaLink):
                _finite(ln.x_mm, f"{label}.x_mm")
                _finite(ln.y_mm, f"{label}.y_mm")
                ln = ln.as_link()
            elif not isinstance(ln, LumpedLink):
                raise ValueError(f"{label} must be a ViaLink or LumpedLink, got {type(ln).__name__}")
            for end in ("a_xy", "b_xy"):
                xy = getattr(ln, end)
                if len(xy) != 2:
                    raise ValueError(f"{label}.{end} must be (x_mm, y_mm)")
                _finite(xy[0], f"{label}.{end}")
                _finite(xy[1], f"{label}.{end}")
            _layer_index(ln.layer_a, n_layers, f"{label}.layer_a")
            _layer_index(ln.layer_b, n_layers, f"{label}.layer_b")
            r = _finite(ln.resistance_ohm, f"{label}.resistance_ohm")
            if r < 0:
                raise ValueError(f"{label}.resistance_ohm must be >= 0, got {r!r}")
            rad = _finite(ln.radius_mm, f"{label}.radius_mm")
            if rad < 0:
                raise ValueError(f"{label}.radius_mm must be >= 0, got {rad!r}")
            all_links.append(dataclasses.replace(ln, name=ln.name or label))

    # ---- raster ---------------------------------------------------------------------
    notes: list[str] = []
    capped = False
    if pitch_mm is None:
        pitch, capped = choose_pitch_mm(layers, contacts, all_links, cells_across=cells_across,
                                        max_cells=max_cells)
        if capped:
            notes.append(f"pitch coarsened to {pitch:.4g} mm by the {max_cells} cell cap; "
                         "narrow necks have fewer cells across than asked")
    else:
        pitch = _positive(pitch_mm, "pitch_mm")
    bounds = np.array([g.bounds for g in geoms])
    grid = RasterGrid.covering((bounds[:, 0].min(), bounds[:, 1].min(),
                                bounds[:, 2].max(), bounds[:, 3].max()), pitch)
    n_cells = grid.cell_count
    if n_cells * n_layers > HARD_MAX_CELLS:
        raise ValueError(f"pitch_mm={pitch:g} gives {n_cells * n_layers} cells, more than "
                         f"{HARD_MAX_CELLS}; use a coarser pitch")
    nx, ny, h = grid.nx, grid.ny, grid.pitch_mm
    cover, gxs, gys, fxs, fys, actives = [], [], [], [], [], []
    for k, g in enumerate(geoms):
        fx, fy = face_apertures(g, grid)
        fx[fx < MIN_APERTURE] = 0.0
        fy[fy < MIN_APERTURE] = 0.0
        act = np.zeros((ny, nx), dtype=bool)
        act[:, :-1] |= fx > 0
        act[:, 1:] |= fx > 0
        act[:-1, :] |= fy > 0
        act[1:, :] |= fy > 0
        cover.append(cell_coverage(g, grid))
        fxs.append(fx)
        fys.append(fy)
        gxs.append(fx / rs[k])
        gys.append(fy / rs[k])
        actives.append(act)
    t_raster = time.perf_counter()

    # ---- contacts, pads and merged groups ----------------------------------------------
    merger = _Merger()
    contact_info: dict[str, _ContactResult] = {}
    contact_group: dict[str, int] = {}
    for n, c in enumerate(contacts):
        label = f"contacts[{n}] ({c.name!r}) on layer {c.layer}"
        off = c.layer * n_cells
        # a driven contact is always an ideal conductor (it is where a lead is soldered)
        equi = True if c.driven else bool(c.equipotential)
        geom = c.geometry
        point = None
        if _is_point(geom):
            if not shapely.intersects(geoms[c.layer], geom):
                raise ValueError(f"{label} at ({geom.x:g}, {geom.y:g}) mm lies outside the copper")
            cell = _nearest_active(grid, actives[c.layer], geom.x, geom.y)
            if cell < 0:
                raise ValueError(f"{label} at ({geom.x:g}, {geom.y:g}) mm lies outside the copper")
            cells, weights = np.array([cell + off]), np.ones(1)
            point = (geom.x, geom.y)
            region = None
        else:
            region = polygonal(geom)
            if region.is_empty:
                region = geom.buffer(0.5 * h)
            cells, tap_cells, weights = _region_cells(region, geoms[c.layer], grid,
                                                      actives[c.layer], label)
            cells = cells + off
        kind = "potential" if c.potential_v is not None else "current" if c.current_a is not None else "float"
        if equi:
            contact_group[c.name] = merger.add(cells, region)
            point = None
        elif region is not None:
            cells = tap_cells + off
        contact_info[c.name] = _ContactResult(kind, -1, c.layer, cells, weights, point)

    link_ends: list[tuple[object, object, float]] = []  # (group or cell, group or cell, R)
    for ln in all_links:
        ends = []
        for xy, layer, tag in ((ln.a_xy, ln.layer_a, "a"), (ln.b_xy, ln.layer_b, "b")):
            what = f"{ln.name} end {tag} at ({xy[0]:g}, {xy[1]:g}) mm on layer {layer}"
            pt = shapely.Point(xy)
            if not shapely.intersects(geoms[layer], pt):
                raise ValueError(f"{what} lies outside the copper")
            if ln.radius_mm > 0:
                cells = _disk_cells(grid, actives[layer], xy[0], xy[1], ln.radius_mm)
                if len(cells) == 0:
                    raise ValueError(f"{what} lies outside the copper")
                disk = pt.buffer(ln.radius_mm, quad_segs=16)
                ends.append(("g", merger.add(cells + layer * n_cells, disk)))
            else:
                cell = _nearest_active(grid, actives[layer], *xy)
                if cell < 0:
                    raise ValueError(f"{what} lies outside the copper")
                ends.append(("c", cell + layer * n_cells))
        if ln.resistance_ohm == 0:
            cells = [merger.group_cells[e[1]] if e[0] == "g" else np.array([e[1]]) for e in ends]
            merger.add(np.concatenate(cells), None)
        else:
            link_ends.append((ends[0], ends[1], 1.0 / ln.resistance_ohm))

    # node numbering: active cells, with each merged group collapsed to one node
    active_all = np.concatenate([a.ravel() for a in actives])
    total = n_cells * n_layers
    n_groups = len(merger.group_cells)
    for gi, cells in enumerate(merger.group_cells):
        active_all[cells] = True  # a point contact on a one-cell island stays a node
    cell_ids = np.nonzero(active_all)[0]
    compact = np.full(total, -1, dtype=np.int64)
    compact[cell_ids] = np.arange(len(cell_ids))
    if n_groups:
        rows = np.concatenate([np.full(len(c), gi) for gi, c in enumerate(merger.group_cells)])
        cols = compact[np.concatenate(merger.group_cells)]
        m = sp.coo_matrix((np.ones(len(rows)), (rows + len(cell_ids), cols)),
                          shape=(len(cell_ids) + n_groups,) * 2)
        _, labels = csgraph.connected_components(m, directed=False)
        node_of_cell = np.full(total, -1, dtype=np.int64)
        node_of_cell[cell_ids] = labels[:len(cell_ids)]
        node_of_group = labels[len(cell_ids):]
        # relabel densely (every label holds at least one cell)
        uniq, dense = np.unique(node_of_cell[cell_ids], return_inverse=True)
        remap = np.full(labels.max() + 1, -1, dtype=np.int64)
        remap[uniq] = np.arange(len(uniq))
        node_of_cell[cell_ids] = dense
        node_of_group = remap[node_of_group]
        n_nodes = len(uniq)
    else:
        node_of_cell = compact
        node_of_group = np.zeros(0, dtype=np.int64)
        n_nodes = len(cell_ids)
    merged_cell = np.zeros(total, dtype=bool)
    group_of_cell = np.full(total, -1, dtype=np.int64)
    for gi, cells in enumerate(merger.group_cells):
        merged_cell[cells] = True
        if merger.group_geom[gi] is not None:
            group_of_cell[cells] = gi
    for name, gi in contact_group.items():
        contact_info[name].node = int(node_of_group[gi])

    # ---- assemble ----------------------------------------------------------------------
    rows_l, cols_l, g_l = [], [], []
    group_geom = np.empty(len(merger.group_geom), dtype=object)
    group_geom[:] = merger.group_geom
    idx = np.arange(n_cells).reshape(ny, nx)
    xc, yc = grid.x_centres_mm, grid.y_centres_mm
    for k in range(n_layers):
        off = k * n_cells
        for p, q, gface in ((idx[:, :-1], idx[:, 1:], gxs[k]), (idx[:-1, :], idx[1:, :], gys[k])):
            sel = gface > 0
            pp, qq, gg = p[sel] + off, q[sel] + off, gface[sel].copy()
            npn, nqn = node_of_cell[pp], node_of_cell[qq]
            keep = npn != nqn
            pp, qq, gg, npn, nqn = pp[keep], qq[keep], gg[keep], npn[keep], nqn[keep]
            # distance from a merged region's true edge to the outside cell centre
            gp, gq = group_of_cell[pp], group_of_cell[qq]
            edge = (gp >= 0) | (gq >= 0)
            if np.any(edge):
                inside = np.zeros(int(edge.sum()))
                ep, eq = pp[edge] - off, qq[edge] - off
                p_xy = np.column_stack([xc[ep % nx], yc[ep // nx]])
                q_xy = np.column_stack([xc[eq % nx], yc[eq // nx]])
                segs = shapely.linestrings(np.stack([p_xy, q_xy], axis=1))
                for side in (gp[edge], gq[edge]):
                    s = side >= 0
                    inside[s] += shapely.length(shapely.intersection(segs[s], group_geom[side[s]]))
                d = np.clip(h - inside, 0.05 * h, h)
                gg[edge] *= h / d
            rows_l.append(npn)
            cols_l.append(nqn)
            g_l.append(gg)
    link_rows, link_cols, link_g = [], [], []
    for ea, eb, g in link_ends:
        na = node_of_group[ea[1]] if ea[0] == "g" else node_of_cell[ea[1]]
        nb = node_of_group[eb[1]] if eb[0] == "g" else node_of_cell[eb[1]]
        if na != nb:
            link_rows.append(na)
            link_cols.append(nb)
            link_g.append(g)
    rows_l.append(np.array(link_rows, dtype=np.int64))
    cols_l.append(np.array(link_cols, dtype=np.int64))
    g_l.append(np.array(link_g, dtype=float))
    r = np.concatenate(rows_l)
    c = np.concatenate(cols_l)
    gv = np.concatenate(g_l)
    adjacency = sp.coo_matrix((gv, (r, c)), shape=(n_nodes, n_nodes)).tocsr()
    adjacency = adjacency + adjacency.T
    degree = np.asarray(adjacency.sum(axis=1)).ravel()
    lap = (sp.diags(degree) - adjacency).tocsr()

    # ---- sources and references ------------------------------------------------------------
    current = np.zeros(n_nodes)
    fixed: dict[int, float] = {}
    owner: dict[int, str] = {}
    for ci in contacts:
        if not ci.driven:
            continue
        info = contact_info[ci.name]
        node = info.node
        if node in owner:
            raise ValueError(f"contacts {owner[node]!r} and {ci.name!r} overlap or are joined "
                             "by a zero-ohm link; they cannot both be driven")
        owner[node] = ci.name
        if ci.potential_v is not None:
            fixed[node] = float(ci.potential_v)
        else:
            current[node] += float(ci.current_a)
    n_comp, comp = csgraph.connected_components(adjacency, directed=False)
    comp_fixed = np.zeros(n_comp, dtype=bool)
    for node in fixed:
        comp_fixed[comp[node]] = True
    comp_driven = np.zeros(n_comp, dtype=bool)
    for node in owner:
        comp_driven[comp[node]] = True
    for cc in np.nonzero(comp_driven & ~comp_fixed)[0]:
        nodes = [nd for nd in owner if comp[nd] == cc]
        names_cc = [owner[nd] for nd in nodes]
        s = sum(current[nd] for nd in nodes)
        scale = sum(abs(current[nd]) for nd in nodes)
        if abs(s) > 1e-9 * max(scale, 1e-30):
            raise ValueError(f"contacts {', '.join(map(repr, names_cc))}: currents sum to {s:g} A "
                             "on a copper piece with no fixed potential; they must sum to zero")
        ref = min(nodes, key=lambda nd: current[nd])  # where the current leaves
        fixed[ref] = 0.0
        comp_fixed[cc] = True
        notes.append(f"potentials on the piece with {', '.join(names_cc)} are relative to "
                     f"{owner[ref]!r} (0 V): no contact fixes a potential there")
    unsolved = ~comp_fixed[comp]
    if np.any(unsolved):
        notes.append(f"{int(unsolved.sum())} grid nodes lie on copper not connected to any driven "
                     "contact; their potential is undefined (NaN)")

    # ---- solve ----------------------------------------------------------------------
    t_assemble = time.perf_counter()
    phi = np.full(n_nodes, np.nan)
    fixed_nodes = np.array(sorted(fixed), dtype=np.int64)
    phi[fixed_nodes] = [fixed[n] for n in fixed_nodes]
    is_free = ~unsolved
    is_free[fixed_nodes] = False
    free = np.nonzero(is_free)[0]
    method, iters, relres, t_setup, t_solve = "none", 0, 0.0, 0.0, 0.0
    if len(free):
        a = lap[free][:, free].tocsr()
        b = current[free] - lap[free][:, fixed_nodes] @ phi[fixed_nodes]
        bnorm = float(np.linalg.norm(b))
        use = solver
        if use == "auto":
            use = "direct" if len(free) <= DIRECT_SOLVER_LIMIT else "amg"
        t0 = time.perf_counter()
        if bnorm == 0:
            x = np.zeros(len(free))
            method = "trivial"
        elif use == "direct":
            lu = spla.splu(a.tocsc(), permc_spec="MMD_AT_PLUS_A")
            t_setup = time.perf_counter() - t0
            x = lu.solve(b)
            method = "sparse LU (SuperLU)"
            iters = 1
        elif use == "amg":
            import pyamg

            # forward Gauss-Seidel before, backward after: a symmetric V-cycle (so it can
            # precondition CG) at half the cost of symmetric sweeps on both sides
            ml = pyamg.ruge_stuben_solver(
                a, max_coarse=500, coarse_solver="splu",
                presmoother=("gauss_seidel", {"sweep": "forward"}),
                postsmoother=("gauss_seidel", {"sweep": "backward"}))
            t_setup = time.perf_counter() - t0
            x, iters = _pcg(a, b, _VCycle(ml), rtol, maxiter=500)
            method = "Ruge-Stuben AMG (pyamg) + CG"
        else:
            raise ValueError(f"solver must be 'auto', 'direct' or 'amg', got {solver!r}")
        t_solve = time.perf_counter() - t0 - t_setup
        relres = float(np.linalg.norm(b - a @ x) / bnorm) if bnorm > 0 else 0.0
        limit = max(100 * rtol, 1e-8) if use == "amg" else 1e-8
        if not np.all(np.isfinite(x)) or relres > limit:
            raise ValueError(f"the DC solve did not converge (relative residual {relres:.2e}); "
                             "the problem may be badly conditioned (check link resistances)")
        phi[free] = x

    # ---- results ----------------------------------------------------------------------
    phi_solved = np.where(np.isfinite(phi), phi, 0.0)
    injected = lap @ phi_solved
    contact_current: dict[str, float] = {}
    for ci in contacts:
        info = contact_info[ci.name]
        if info.kind == "current":
            contact_current[ci.name] = float(ci.current_a)
        elif info.kind == "potential":
            contact_current[ci.name] = float(injected[info.node])
        else:
            contact_current[ci.name] = 0.0

    cell_phi = np.full(total, np.nan)
    cell_phi[cell_ids] = phi[node_of_cell[cell_ids]]
    potentials, jxs, jys, merged_maps = [], [], [], []
    h_m = h * 1e-3
    for k in range(n_layers):
        pk = cell_phi[k * n_cells:(k + 1) * n_cells].reshape(ny, nx)
        pz = np.where(np.isfinite(pk), pk, 0.0)
        # face currents with the conductances used in the solve (contact-edge corrected)
        ix = gxs[k] * (pz[:, :-1] - pz[:, 1:])
        iy = gys[k] * (pz[:-1, :] - pz[1:, :])
        mk = merged_cell[k * n_cells:(k + 1) * n_cells].reshape(ny, nx)
        jx = _cell_density(ix, fxs[k], axis=1, h_m=h_m)
        jy = _cell_density(iy, fys[k], axis=0, h_m=h_m)
        jx[mk] = np.nan
        jy[mk] = np.nan
        potentials.append(pk)
        jxs.append(jx)
        jys.append(jy)
        merged_maps.append(mk)

    info = SolverInfo(method, len(free), iters, relres, t_setup, t_solve,
                      t_raster - t_start, t_assemble - t_raster)
    return DCSolution(
        pitch_mm=h, grid=grid, pitch_capped=capped, solver=info, notes=notes,
        _potential=potentials, _coverage=cover, _jx=jxs, _jy=jys, _merged=merged_maps,
        _contacts=contact_info, _contact_current=contact_current, _node_potential=phi,
        _component=comp, _cell_node=node_of_cell,
    )


def _dot(u: np.ndarray, v: np.ndarray) -> float:
    # einsum avoids the threaded BLAS dot, which stalls badly when the cores are busy
    return float(np.einsum("i,i->", u, v))


class _VCycle:
    """One multigrid V-cycle from a zero start as a preconditioner: ``M @ r``.

    Uses only the hierarchy's public parts (levels[i].A/.R/.P/.presmoother/.postsmoother and
    the coarse solver), without the residual norms pyamg's own solve() computes each call.
    """

    def __init__(self, ml):
        self.ml = ml

    def __matmul__(self, r: np.ndarray) -> np.ndarray:
        return self._cycle(0, r)

    def _cycle(self, lvl: int, b: np.ndarray) -> np.ndarray:
        levels = self.ml.levels
        if lvl == len(levels) - 1:
            return np.asarray(self.ml.coarse_solver(levels[lvl].A, b)).reshape(b.shape)
        level = levels[lvl]
        x = np.zeros_like(b)
        level.presmoother(level.A, x, b)
        coarse_b = level.R @ (b - level.A @ x)
        x += level.P @ self._cycle(lvl + 1, coarse_b)
        level.postsmoother(level.A, x, b)
        return x


def _pcg(a, b: np.ndarray, precond, rtol: float, maxiter: int) -> tuple[np.ndarray, int]:
    """Preconditioned conjugate gradients for a symmetric positive definite system.

    Stops when ||b - A x|| <= rtol ||b||. Returns (x, iterations).

    References
    ----------
    Y. Saad, "Iterative Methods for Sparse Linear Systems", 2nd ed., SIAM, 2003, algorithm 9.1.
    """
    x = np.zeros_like(b)
    r = b.copy()
    bnorm = math.sqrt(_dot(b, b))
    if bnorm == 0:
        return x, 0
    z = precond @ r
    p = z.copy()
    rz = _dot(r, z)
    tmp = np.empty_like(b)
    for it in range(1, maxiter + 1):
        ap = a @ p
        alpha = rz / _dot(p, ap)
        np.multiply(p, alpha, out=tmp)
        x += tmp
        np.multiply(ap, alpha, out=tmp)
        r -= tmp
        if math.sqrt(_dot(r, r)) <= rtol * bnorm:
            return x, it
        z = precond @ r
        rz_new = _dot(r, z)
        np.multiply(p, rz_new / rz, out=p)
        p += z
        rz = rz_new
    return x, maxiter


def _cell_density(face_current: np.ndarray, aperture: np.ndarray, axis: int, h_m: float) -> np.ndarray:
    """Cell sheet current density from the two face currents along ``axis`` [A/m].

    J = (I_minus + I_plus) / ((f_minus + f_plus) h): the mean current per open face width.
    """
    pad = [(0, 0), (0, 0)]
    pad[axis] = (1, 0)
    i_lo = np.pad(face_current, pad)
    f_lo = np.pad(aperture, pad)
    pad[axis] = (0, 1)
    i_hi = np.pad(face_current, pad)
    f_hi = np.pad(aperture, pad)
    width = (f_lo + f_hi) * h_m
    with np.errstate(invalid="ignore", divide="ignore"):
        j = np.where(width > 0, (i_lo + i_hi) / np.where(width > 0, width, 1.0), 0.0)
    return j


def two_terminal_resistance(
    layers: Sequence[SheetLayer],
    contact_a: Contact,
    contact_b: Contact,
    vias: Sequence[ViaLink | LumpedLink] = (),
    pitch_mm: float | None = None,
    **kwargs,
) -> float:
    """Resistance between two contacts [ohm]: R = (V_a - V_b) / I with V_a = 1 V, V_b = 0 V.

    Parameters
    ----------
    layers : copper sheets [mm, ohm/sq]
    contact_a, contact_b : the terminals (their own current/potential settings are ignored)
    vias : vias / lumped links [ohm]
    pitch_mm : raster pitch [mm] or None (automatic)
    kwargs : passed to :func:`solve_dc`
    """
    for what, c in (("contact_a", contact_a), ("contact_b", contact_b)):
        if not isinstance(c, Contact):
            raise ValueError(f"{what} must be a Contact, got {type(c).__name__}")
    a = dataclasses.replace(contact_a, current_a=None, potential_v=1.0, equipotential=True)
    b = dataclasses.replace(contact_b, current_a=None, potential_v=0.0, equipotential=True)
    if a.name == b.name:
        raise ValueError("contact_a and contact_b must have different names")
    sol = solve_dc(layers, [a, b], vias, pitch_mm, **kwargs)
    i = sol.contact_current(a.name)
    if not sol.connected(a.name, b.name) or not i > 0:
        raise ValueError(f"no current flows between {a.name!r} and {b.name!r}: "
                         "they are not connected by copper")
    return 1.0 / i


def four_terminal_resistance(
    layers: Sequence[SheetLayer],
    current_in: Contact,
    current_out: Contact,
    sense_plus: Contact,
    sense_minus: Contact,
    vias: Sequence[ViaLink | LumpedLink] = (),
    pitch_mm: float | None = None,
    **kwargs,
) -> float:
    """Transfer resistance R = (V_plus - V_minus) / I [ohm] with I = 1 A in at ``current_in``
    and out at ``current_out``; the sense contacts are floating taps (point taps read the
    potential at the point, polygon taps the mean under them).

    For van der Pauw's R_AB,CD: current_in=A, current_out=B, sense_plus=D, sense_minus=C.

    Parameters
    ----------
    layers : copper sheets [mm, ohm/sq]
    current_in, current_out, sense_plus, sense_minus : the four contacts
    vias : vias / lumped links [ohm]
    pitch_mm : raster pitch [mm] or None (automatic)
    kwargs : passed to :func:`solve_dc`
    """
    cs = []
    for what, c in (("current_in", current_in), ("current_out", current_out),
                    ("sense_plus", sense_plus), ("sense_minus", sense_minus)):
        if not isinstance(c, Contact):
            raise ValueError(f"{what} must be a Contact, got {type(c).__name__}")
        cs.append(c)
    cs[0] = dataclasses.replace(cs[0], current_a=1.0, potential_v=None)
    cs[1] = dataclasses.replace(cs[1], current_a=-1.0, potential_v=None)
    cs[2] = dataclasses.replace(cs[2], current_a=None, potential_v=None)
    cs[3] = dataclasses.replace(cs[3], current_a=None, potential_v=None)
    sol = solve_dc(layers, cs, vias, pitch_mm, **kwargs)
    for c in cs[1:]:
        if not sol.connected(cs[0].name, c.name):
            raise ValueError(f"contacts {cs[0].name!r} and {c.name!r} are not connected by copper")
    return sol.voltage(cs[2].name, cs[3].name) / 1.0
