"""The picture of one stage's hot loop for the HTML report, zoomed to the loop: the copper of the
layers the loop uses (clipped to the window), the current density per layer as a heat map, the
traced loop path with its enclosed area shaded, the centroid line of the loop current, the vias,
the loop's components labelled, and a scale bar. Drawing only: every shape comes from the Board
or from the stage's measurements (their drawings and detail); nothing here is a result.

Board coordinates are mm with y up; SVG has y down, so every y is written negated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from html import escape

import numpy as np
import shapely

from ..board import Board
from ..findings import Drawing, Measurement
from ..powerstage import Stage
from .svg import Frame, geometry_path, layer_colour

LOOP_QUANTITIES = ("hot_loop.area", "hot_loop.inductance", "hot_loop.vias")
MIN_MARGIN_MM = 2.0            # the window reaches at least this far beyond the loop's drawings
MIN_WINDOW_MM = 8.0            # and is at least this wide and high
MAX_CELLS = 3000               # heat-map cells drawn per stage (the strongest kept)
# heat-map colour steps, weakest first (a dark-to-bright ramp readable over dark copper)
HEAT_COLOURS = ("#2c115f", "#51127c", "#721f81", "#932b80", "#b73779", "#d8456c",
                "#f1605d", "#fc8961", "#feb078", "#fed799", "#fcfdbf")


@dataclass(frozen=True)
class HeatScale:
    """Bin edges of the heat map [A/mm per A], log-spaced from the weakest to the strongest
    cell drawn (a drawing scale, like the scale bar)."""

    edges: tuple[float, ...]

    def bin(self, j: np.ndarray) -> np.ndarray:
        return np.clip(np.searchsorted(np.asarray(self.edges[1:-1]), j, side="right"),
                       0, len(HEAT_COLOURS) - 1)


def stage_loop_measurements(measurements: list[Measurement], stage: str) -> dict[str, Measurement]:
    return {m.quantity: m for m in measurements
            if m.stage == stage and m.quantity in LOOP_QUANTITIES}


def loop_window(board: Board, stage: Stage, loop: dict[str, Measurement]) -> Frame | None:
    """The zoom window: the bounding box of the loop's drawings and its terminals' pads
    with a margin of a fifth of its size, at least MIN_MARGIN_MM, and at least MIN_WINDOW_MM
    wide and high. None when there is nothing to place it by."""
    pts = [p for m in loop.values() for d in m.drawings for p in d.points]
    pts += [(board.terminals[t].x_mm, board.terminals[t].y_mm)
            for t in stage.hot_loop if t in board.terminals]
    if not pts:
        return None
    xy = np.asarray(pts, dtype=float)
    x0, y0 = xy.min(axis=0)
    x1, y1 = xy.max(axis=0)
    m = max(MIN_MARGIN_MM, 0.2 * max(x1 - x0, y1 - y0))
    x0, y0, x1, y1 = x0 - m, y0 - m, x1 + m, y1 + m
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    w, h = max(x1 - x0, MIN_WINDOW_MM), max(y1 - y0, MIN_WINDOW_MM)
    return Frame(cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2)


def loop_layers(board: Board, stage: Stage, loop: dict[str, Measurement]) -> list[int]:
    """Indices of the layers the loop uses: those its traced path runs on, those its vias join,
    those the field solve found current on; else its terminals' pad layers; else all."""
    names: set[str] = set()
    area = loop.get("hot_loop.area")
    if area is not None:
        names |= {str(p[2]) for p in area.detail.get("path", []) if len(p) >= 3}
    vias = loop.get("hot_loop.vias")
    if vias is not None:
        for v in vias.detail.get("vias", []):
            names |= {str(v.get("from")), str(v.get("to"))}
    ind = loop.get("hot_loop.inductance")
    if ind is not None:
        names |= set(_density(ind))
    out = [layer.index for layer in board.layers if layer.name in names]
    if not out:
        out = sorted({i for t in stage.hot_loop if t in board.terminals
                      for i in board.terminals[t].layers})
    return out or [layer.index for layer in board.layers]


def _density(m: Measurement | None) -> dict[str, list]:
    """The field solve's cells per layer name: [x, y, dx, dy, Jx, Jy]; {} when not made."""
    if m is None:
        return {}
    d = m.detail.get("current_density_a_per_mm")
    if isinstance(d, dict):
        return {str(k): v for k, v in d.items() if v}
    if isinstance(d, list):            # a list per layer index
        return {str(i): v for i, v in enumerate(d) if v}
    return {}


def density_by_layer(board: Board, m: Measurement | None) -> dict[int, np.ndarray]:
    """Layer index -> cells (n x 6 array) of the stage's current density, as the detail gives them."""
    out: dict[int, np.ndarray] = {}
    names = {layer.name: layer.index for layer in board.layers}
    for key, cells in _density(m).items():
        idx = names.get(key)
        if idx is None and key.isdigit() and int(key) < len(board.layers):
            idx = int(key)
        arr = np.asarray(cells, dtype=float)
        if idx is None or arr.ndim != 2 or arr.shape[1] < 6 or not len(arr):
            continue
        out[idx] = arr
    return out


def heat_scale(cells: dict[int, np.ndarray]) -> HeatScale | None:
    mags = [np.hypot(a[:, 4], a[:, 5]) for a in cells.values()]
    if not mags:
        return None
    allm = np.concatenate(mags)
    allm = allm[allm > 0]
    if not len(allm):
        return None
    hi = float(allm.max())
    lo = max(float(allm.min()), hi / 100.0)
    n = len(HEAT_COLOURS)
    edges = tuple(float(x) for x in np.geomspace(lo, hi, n + 1)) if hi > lo else \
        tuple(hi * (k + 1) / n for k in range(-1, n))
    return HeatScale(edges)


def _cap_cells(cells: dict[int, np.ndarray], limit: int = MAX_CELLS) -> dict[int, np.ndarray]:
    """At most ``limit`` cells in all, the strongest kept (file size)."""
    total = sum(len(a) for a in cells.values())
    if total <= limit:
        return cells
    keys = list(cells)
    allm = np.concatenate([np.hypot(cells[k][:, 4], cells[k][:, 5]) for k in keys])
    owner = np.concatenate([np.full(len(cells[k]), n) for n, k in enumerate(keys)])
    row = np.concatenate([np.arange(len(cells[k])) for k in keys])
    keep = np.argsort(-allm, kind="stable")[:limit]
    out = {k: cells[k][np.sort(row[keep][owner[keep] == n])] for n, k in enumerate(keys)}
    return {k: a for k, a in out.items() if len(a)}


def _heat_layer(cells: np.ndarray, scale: HeatScale) -> str:
    """One path per colour step: each cell a small rectangle (y down)."""
    mag = np.hypot(cells[:, 4], cells[:, 5])
    bins = scale.bin(mag)
    out = []
    for b in range(len(HEAT_COLOURS)):
        sel = cells[bins == b]
        if not len(sel):
            continue
        d = "".join(f"M{x - dx / 2:.2f},{-(y + dy / 2):.2f}h{dx:.2f}v{dy:.2f}h{-dx:.2f}z"
                    for x, y, dx, dy in sel[:, :4])
        # weak steps see-through, so the copper shows where little current flows
        alpha = 0.35 + 0.6 * b / (len(HEAT_COLOURS) - 1)
        out.append(f'<path fill="{HEAT_COLOURS[b]}" fill-opacity="{alpha:.2f}" d="{d}"/>')
    return "".join(out)


def _nice_length(span: float) -> float:
    """A round scale-bar length near a fifth of ``span`` mm: 1, 2 or 5 times a power of ten."""
    target = max(span / 5.0, 1e-3)
    p = 10 ** math.floor(math.log10(target))
    for k in (5, 2, 1):
        if k * p <= target:
            return k * p
    return p


def _label_boxes(board: Board, stage: Stage, fr: Frame, size: float) -> list[tuple[str, float, float]]:
    """The loop's components, each labelled once beside its pads, labels kept apart and inside
    the window: (text, x, y) in board mm, y of the text baseline."""
    refs = list(dict.fromkeys(t.rsplit(".", 1)[0] for t in stage.hot_loop if "." in t))
    placed: list[tuple[float, float, float, float]] = []
    out = []
    # pads are obstacles too: a label never covers a loop terminal
    pads = [(p.x_mm, p.y_mm) for t in stage.hot_loop if (p := board.terminals.get(t)) is not None]
    for ref in refs:
        own = [p for p in board.components.get(ref, [])
               if fr.minx <= p.x_mm <= fr.maxx and fr.miny <= p.y_mm <= fr.maxy]
        if not own:
            continue
        ax = sum(p.x_mm for p in own) / len(own)
        ay = sum(p.y_mm for p in own) / len(own)
        reach = max([math.hypot(p.x_mm - ax, p.y_mm - ay) + 0.5 * max(p.width_mm or 0.6,
                                                                     p.height_mm or 0.6)
                     for p in own] + [0.6])
        w, h = 0.62 * size * len(ref), size
        best = None
        for r in (reach + 0.4 * size, reach + 1.4 * size, reach + 2.6 * size):
            for ang in (90, 270, 0, 180, 45, 135, 315, 225):
                cx = ax + r * math.cos(math.radians(ang))
                cy = ay + r * math.sin(math.radians(ang))
                box = (cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2)
                if box[0] < fr.minx or box[2] > fr.maxx or box[1] < fr.miny or box[3] > fr.maxy:
                    continue
                if any(not (box[2] < b[0] or box[0] > b[2] or box[3] < b[1] or box[1] > b[3])
                       for b in placed):
                    continue
                if any(box[0] <= px <= box[2] and box[1] <= py <= box[3] for px, py in pads):
                    continue
                best = box
                break
            if best is not None:
                break
        if best is None:
            continue                    # no room: the pads' tooltips still name it
        placed.append(best)
        out.append((ref, (best[0] + best[2]) / 2, best[1] + 0.2 * size))
    return out


def _pts(points) -> str:
    return " ".join(f"{float(p[0]):.3f},{-float(p[1]):.3f}" for p in points)


def stage_loop_svg(board: Board, stage: Stage, measurements: list[Measurement], key: str,
                   max_cells: int = MAX_CELLS) -> tuple[str, dict]:
    """The zoomed SVG of ``stage``'s hot loop and what its legend needs: {"layers": indices drawn
    shown, "heat_layers": indices with a heat map, "scale": HeatScale or None, "frame": Frame}.
    ``key`` makes the element ids and classes unique on the page. ("", {}) when the loop cannot
    be placed (no drawings and no terminals on the board)."""
    loop = stage_loop_measurements(measurements, stage.name)
    fr = loop_window(board, stage, loop)
    if fr is None:
        return "", {}
    used = loop_layers(board, stage, loop)
    ind = loop.get("hot_loop.inductance")
    area = loop.get("hot_loop.area")
    vias = loop.get("hot_loop.vias")
    cells = density_by_layer(board, ind)
    # cells inside the window only, then the strongest up to the cap
    cells = {k: a[(a[:, 0] >= fr.minx) & (a[:, 0] <= fr.maxx) & (a[:, 1] >= fr.miny)
                  & (a[:, 1] <= fr.maxy)] for k, a in cells.items()}
    cells = _cap_cells({k: a for k, a in cells.items() if len(a)}, max_cells)
    scale = heat_scale(cells)
    u = max(fr.width, fr.height) / 400.0
    tol = max(fr.width, fr.height) / 1500.0
    vb = f"{fr.minx:.3f} {-fr.maxy:.3f} {fr.width:.3f} {fr.height:.3f}"
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" id="loop-view-{key}" class="loop-svg" '
           f'viewBox="{vb}" preserveAspectRatio="xMidYMid meet" role="img" '
           f'aria-label="hot loop of stage {escape(stage.name)}">']
    out.append(f'<rect class="backdrop" x="{fr.minx:.3f}" y="{-fr.maxy:.3f}" '
               f'width="{fr.width:.3f}" height="{fr.height:.3f}"/>')
    n = len(board.layers)
    if board.outline is not None and not board.outline.geometry.is_empty:
        clipped = shapely.clip_by_rect(board.outline.geometry, fr.minx, fr.miny, fr.maxx, fr.maxy)
        out.append(f'<path class="outline" d="{geometry_path(clipped, tol)}"/>')
    for idx in sorted(range(n), reverse=True):        # bottom first
        layer = board.layers[idx]
        g = shapely.clip_by_rect(layer.geometry, fr.minx, fr.miny, fr.maxx, fr.maxy)
        out.append(f'<g class="zl zl-{idx}" data-layer="{escape(layer.name)}">'
                   f'<path class="copper" fill="{layer_colour(idx, n)}" fill-rule="evenodd" '
                   f'd="{geometry_path(g, tol)}"><title>{escape(layer.name)} copper</title>'
                   f'</path></g>')
    if scale is not None:
        for idx in sorted(cells, reverse=True):
            out.append(f'<g class="heat heat-{idx}" data-layer="{escape(board.layers[idx].name)}">'
                       f'<title>current density on {escape(board.layers[idx].name)}</title>'
                       f'{_heat_layer(cells[idx], scale)}</g>')
    out.append(f'<g class="loop-overlays" stroke-width="{1.4 * u:.3f}">')
    if area is not None:
        for d in area.drawings:
            if d.kind == "polygon" and len(d.points) >= 3:
                out.append(f'<polygon class="loop-area" points="{_pts(d.points)}">'
                           f'<title>area enclosed by the traced loop</title></polygon>')
    path = next((d for m in (area, ind) if m is not None for d in m.drawings
                 if d.kind == "polyline"), None)
    if path is None and area is not None:         # no path drawn: the area's outline
        rings = [list(d.points) + [d.points[0]] for d in area.drawings
                 if d.kind == "polygon" and len(d.points) >= 3]
        path = Drawing("polyline", max(rings, key=len)) if rings else None
    if path is not None and len(path.points) >= 2:
        out.append(f'<polyline class="loop-path-casing" stroke-width="{3.2 * u:.3f}" '
                   f'points="{_pts(path.points)}"/>'
                   f'<polyline class="loop-path" stroke-width="{1.6 * u:.3f}" '
                   f'points="{_pts(path.points)}"><title>traced loop path</title></polyline>')
    for c in (ind.detail.get("current_centroid", []) if ind is not None else []):
        pts = c.get("points") or []
        if len(pts) >= 2:
            out.append(f'<polyline class="loop-centroid" stroke-width="{1.1 * u:.3f}" '
                       f'points="{_pts(pts)}"><title>centroid line of the loop current'
                       f'{", " + escape(str(c.get("net"))) if c.get("net") else ""}</title>'
                       f'</polyline>')
    if vias is not None:
        for d in vias.drawings:
            if d.points:
                x, y = d.points[0]
                out.append(f'<circle class="loop-via" cx="{x:.3f}" cy="{-y:.3f}" '
                           f'r="{3.2 * u:.3f}" stroke-width="{1.0 * u:.3f}"><title>via in the loop'
                           f'</title></circle>')
    for t in stage.hot_loop:
        p = board.terminals.get(t)
        if p is None:
            continue
        pw, ph = (p.width_mm or 0.8), (p.height_mm or 0.8)
        out.append(f'<rect class="loop-pad" x="{p.x_mm - pw / 2:.3f}" y="{-(p.y_mm + ph / 2):.3f}" '
                   f'width="{pw:.3f}" height="{ph:.3f}" stroke-width="{0.9 * u:.3f}">'
                   f'<title>{escape(t)} ({escape(p.net)})</title></rect>')
    out.append("</g>")
    size = 11 * u
    out.append('<g class="loop-labels">')
    for text, x, y in _label_boxes(board, stage, fr, size):
        out.append(f'<text x="{x:.3f}" y="{-y:.3f}" font-size="{size:.3f}" '
                   f'text-anchor="middle" stroke-width="{0.5 * u:.3f}">{escape(text)}</text>')
    out.append("</g>")
    # scale bar, bottom left
    L = _nice_length(fr.width)
    x0 = fr.minx + 8 * u
    y0 = -(fr.miny + 10 * u)
    out.append(f'<g class="scale-bar"><rect x="{x0 - 3 * u:.3f}" y="{y0 - 15 * u:.3f}" '
               f'width="{L + 6 * u:.3f}" height="{20 * u:.3f}" class="scale-back"/>'
               f'<path d="M{x0:.3f},{y0 - 3 * u:.3f}v{3 * u:.3f}h{L:.3f}v{-3 * u:.3f}" '
               f'stroke-width="{1.2 * u:.3f}"/>'
               f'<text x="{x0 + L / 2:.3f}" y="{y0 - 5 * u:.3f}" font-size="{9 * u:.3f}" '
               f'text-anchor="middle">{L:g} mm</text></g>')
    out.append("</svg>")
    return "".join(out), {"layers": used, "heat_layers": sorted(cells), "scale": scale,
                          "frame": fr}
