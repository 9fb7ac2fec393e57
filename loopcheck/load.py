"""Read a board: a Project (its fab outputs and project file) -> one Board. The one entry point.

Steps: discover the files' roles (``readers.discover``), read every copper layer (Gerber), the
outline (profile layer), the drills (Excellon) and the netlist (IPC-D-356); clip copper to the
outline; turn netlist points into pads on layer indices; gather component values; build the
stackup. Every default and fallback used is written into ``board.assumptions``.

Pad layers from IPC-D-356 access codes: 0 (and any point with a drilled hole) -> all layers,
1 -> top (index 0), N -> layer N (index N-1; the bottom is the last).
"""

from __future__ import annotations

import dataclasses
import multiprocessing
import os
import pickle
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon, box
from shapely.geometry.base import BaseGeometry

from .board import Board, CopperLayer, Hole, Outline, Pad
from .errors import InputError
from .limits import DEFAULT_LIMITS, InputLimits
from .project import Project
from .readers.discover import FabSet, discover
from .stackup import build_stackup, layer_names

EXTENT_MARGIN_MM = 2.0


def load_board(project: Project, limits: InputLimits = DEFAULT_LIMITS, board: str | None = None) -> Board:
    """Read the board a Project names. Raises InputError on bad or ambiguous input.

    Parameters
    ----------
    project : from :func:`loopcheck.project.load_project`
    limits : limits for untrusted input files
    board : which board, when the fab outputs hold several (``readers.discover.list_boards``);
        None with several boards raises :class:`loopcheck.readers.discover.SeveralBoards`
    """
    project_file = str(project.path) if project.path else None
    with discover(project.fab, project.files, limits, project_file=project_file, board=board) as fab:
        b = _load(project, fab, limits)
        if fab.board is not None:
            b.name = f"{project.name}/{fab.board}"
        return b


# Copper layers are read in parallel processes (one per core) when there is enough to read: the
# Gerber parse is pure Python and a 14-layer board spends a minute in it on one core.
PARALLEL_MIN_BYTES = 300_000


def _read_one(args) -> tuple:
    """Worker: read one copper layer or the profile; an InputError comes back as data (so that
    it keeps its path and line across the process boundary)."""
    from .readers.gerber import read_gerber, read_profile

    kind, path, limits = args
    try:
        return ("ok", read_gerber(path, limits) if kind == "copper" else read_profile(path, limits))
    except InputError as exc:
        return ("error", exc.detail, exc.path, exc.line)


def _read_gerbers(fab: FabSet, limits: InputLimits) -> tuple[list, tuple | None]:
    """Every copper layer (GerberLayer each; the first bad one raises) and the profile's raw result."""
    jobs = [("copper", path) for path, _ in fab.copper]
    if fab.outline is not None:
        jobs.append(("profile", fab.outline))
    sizes = [os.path.getsize(p) for _, p in jobs]
    workers = min(len(jobs), os.cpu_count() or 1)
    results = None
    if workers > 1 and sum(sizes) >= PARALLEL_MIN_BYTES and "fork" in multiprocessing.get_all_start_methods():
        # largest first, so that no long job starts last; the profile is joined and polygonised
        # along every drawn line and costs about three copper bytes per byte (measured)
        cost = [s * (3 if kind == "profile" else 1) for (kind, _), s in zip(jobs, sizes)]
        order = sorted(range(len(jobs)), key=lambda k: -cost[k])
        try:
            with ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("fork")) as pool:
                done = list(pool.map(_read_one, [(jobs[k][0], str(jobs[k][1]), limits) for k in order]))
            results = [None] * len(jobs)
            for k, res in zip(order, done):
                results[k] = res
        except (BrokenProcessPool, OSError, pickle.PicklingError):
            results = None       # no pool here (sandbox, memory): read them one by one
    if results is None:
        results = [_read_one((kind, str(p), limits)) for kind, p in jobs]
    copper = []
    for (kind, path), res in zip(jobs, results):
        if kind != "copper":
            continue
        if res[0] == "error":
            _, detail, epath, line = res
            raise InputError(detail, path=fab.error_name(epath or path), line=line)
        copper.append(res[1])
    profile = results[-1] if fab.outline is not None else None
    return copper, profile


def _reraise(fab: FabSet, exc: InputError) -> InputError:
    """The same error, naming the file as the user knows it (not the temporary copy of a zip)."""
    if exc.path is None:
        return exc
    return InputError(exc.detail, path=fab.error_name(exc.path), line=exc.line)


def _load(project: Project, fab: FabSet, limits: InputLimits) -> Board:
    assumptions: list[str] = []
    inputs: dict[str, str] = {}
    n = fab.layer_count
    names = layer_names(n)

    # copper
    raw_layers = []
    copper_read, profile_read = _read_gerbers(fab, limits)
    for (path, index), gl in zip(fab.copper, copper_read):
        raw_layers.append((path, index, gl))
        inputs[fab.relname(path)] = f"copper layer {index + 1} ({names[index]}): {fab.how.get(path, '')}"

    # netlist
    netlist = None
    if fab.netlist is not None:
        from .readers.ipc356 import read_ipc356
        try:
            netlist = read_ipc356(fab.netlist, limits)
        except InputError as exc:
            raise _reraise(fab, exc) from None
        inputs[fab.relname(fab.netlist)] = f"netlist: {fab.how.get(fab.netlist, '')}"
        _check_netlist_layers(fab, netlist, n)
        if fab.inner_order_guessed:
            raw_layers, note = _order_inner_by_access_codes(fab, raw_layers, netlist)
            if note:
                assumptions.append(note)
                fab.notes[:] = [x for x in fab.notes if not x.startswith("inner copper layers named by function")]
                inputs.update({fab.relname(path): f"copper layer {index + 1} ({names[index]}): {note.split(':')[0]}"
                               for path, index, _ in raw_layers if path in fab.inner_order_guessed})

    # drills
    holes: list[Hole] = []
    drill_files: list[str] = []
    for path, plated in fab.drills:
        from .readers.drill import read_excellon
        try:
            df = read_excellon(path, limits, number_format=fab.drill_formats.get(path))
            if df.format_candidates:
                df, note = _choose_drill_format(project, fab, path, plated, df, raw_layers, limits)
                assumptions.append(note)
            elif df.number_format is not None and "parameter file" in df.number_format.source \
                    or df.number_format is not None and "drill log" in df.number_format.source:
                assumptions.append(f"{fab.relname(path)}: number format from {df.number_format.source}: "
                                   f"{df.number_format.describe()}")
        except InputError as exc:
            raise _reraise(fab, exc) from None
        name = fab.relname(path)
        drill_files.append(name)
        file_holes = list(df.holes)
        if plated is not None and getattr(df, "plated", None) is None:
            file_holes = [dataclasses.replace(h, plated=plated) for h in file_holes]
        holes.extend(dataclasses.replace(h, file=name) for h in file_holes)
        kind = {True: "plated", False: "non-plated", None: "plating from the file"}[plated]
        inputs[name] = f"drill ({kind}): {fab.how.get(path, '')}"

    holes, dup = _dedupe_holes(holes)
    if dup:
        assumptions.append(f"{dup} holes given in more than one drill file are counted once")

    # pads
    if netlist is not None:
        pads = _pads_from_netlist(netlist, n)
    else:
        pads = _pads_from_pin_flashes(raw_layers, holes, n)
        if pads:
            assumptions.append(f"no netlist: {len(pads)} pads and their nets taken from the X2 pin "
                               f"attributes (%TO.P%) of the copper layers")
        else:
            assumptions.append("no netlist and no X2 pin attributes: no pads, connectivity not checked")

    # outline
    outline = None
    if profile_read is not None:
        if profile_read[0] == "ok":
            outline = Outline(geometry=profile_read[1], source=f"profile layer {fab.relname(fab.outline)}")
            inputs[fab.relname(fab.outline)] = f"outline: {fab.how.get(fab.outline, '')}"
        elif "no closed" not in profile_read[1]:
            # a broken file is bad input; only an outline that does not close falls back
            _, detail, epath, line = profile_read
            raise InputError(detail, path=fab.error_name(epath or fab.outline), line=line)
        else:
            assumptions.append(f"the outline layer {fab.relname(fab.outline)} gave no closed outline "
                               f"({profile_read[1]}); the board extent is used instead")
            inputs[fab.relname(fab.outline)] = "outline: not usable (no closed outline)"
    if outline is None and netlist is not None and netlist.board_edge:
        geom = _outline_from_paths(netlist.board_edge)
        if geom is not None:
            outline = Outline(geometry=geom, source=f"board-edge records (389) of {fab.relname(fab.netlist)}")
            assumptions.append("outline taken from the netlist's board-edge records")
    if outline is None:
        outline = _extent_outline(pads, holes, [gl.geometry for _, _, gl in raw_layers])
        assumptions.append(f"no outline layer: the outline is {outline.source}; copper is not clipped")

    # copper layers, clipped to a real outline
    layers: list[CopperLayer] = []
    clip = None if outline.from_extent else outline.geometry
    stackup, stack_assumptions = build_stackup(n, project.stackup, project.path, project.line_of)
    for path, index, gl in raw_layers:
        geom = gl.geometry
        clipped = 0.0
        net_copper = dict(gl.net_copper)
        if clip is not None and not geom.is_empty:
            inside = clip_to_outline(geom, clip)
            clipped = max(float(geom.area - inside.area), 0.0)
            if clipped > 1e-6:
                geom = inside
                net_copper = {k: clip_to_outline(v, clip) for k, v in net_copper.items()}
            else:
                clipped = 0.0
        layers.append(CopperLayer(index=index, name=names[index], file=fab.relname(path), geometry=geom,
                                  thickness_m=stackup.copper_thickness_m[index],
                                  attributes=dict(gl.attributes), clipped_area_mm2=clipped,
                                  net_copper=net_copper))
        if clipped > 0:
            assumptions.append(f"{names[index]}: {clipped:.3f} mm2 of copper outside the outline left out")
        for w in getattr(gl, "warnings", []) or []:
            assumptions.append(f"{fab.relname(path)}: {w}")
    layers.sort(key=lambda layer: layer.index)
    assumptions = stack_assumptions + assumptions

    # component values: X3 attributes < BOM < project file
    values: dict[str, str] = {}
    x3 = 0
    for _, _, gl in raw_layers:
        for ref, v in (gl.component_values or {}).items():
            if ref not in values:
                values[ref] = v
                x3 += 1
    n_bom = 0
    packages: dict[str, str] = {}
    sides: dict[str, str] = {}
    for _, _, gl in raw_layers:
        for ref, fp in (getattr(gl, "component_footprints", None) or {}).items():
            packages.setdefault(ref, fp)
    if fab.bom is not None:
        inputs[fab.relname(fab.bom)] = "BOM / placement list"
        try:
            from .readers.bom import read_bom_parts
        except ImportError:
            read_bom_parts = None
        if read_bom_parts is not None:
            try:
                parts = read_bom_parts(fab.bom, limits)
                bom = parts.values
                packages.update(parts.footprints)
                sides.update(parts.sides)
            except InputError as exc:
                # the BOM only adds part values; one we cannot read leaves them out, and says so
                bom = {}
                assumptions.append(f"the CSV {fab.relname(fab.bom)} was not read as a BOM ({exc.detail}); "
                                   f"no part values from it")
                inputs[fab.relname(fab.bom)] = "not used: not a readable BOM / placement list"
            values.update(bom)
            n_bom = len(bom)
            # a placement file beside the BOM (set aside as a further CSV): footprints and sides
            for path, _ in list(fab.ignored):
                if path.suffix.lower() != ".csv":
                    continue
                try:
                    place = read_bom_parts(path, limits, need_value=False)
                except (InputError, OSError):
                    continue
                for ref, fp in place.footprints.items():
                    packages.setdefault(ref, fp)
                for ref, side in place.sides.items():
                    sides.setdefault(ref, side)
                inputs[fab.relname(path)] = "placement list (footprints, sides)"
    values.update(project.components)
    if values:
        parts = [f"{x3} from X3 attributes" if x3 else "", f"{n_bom} from {fab.relname(fab.bom)}" if n_bom else "",
                 f"{len(project.components)} from the project file" if project.components else ""]
        assumptions.append("component values: " + ", ".join(p for p in parts if p))

    for path, why in fab.ignored:
        inputs.setdefault(fab.relname(path), f"not used: {why}")
    assumptions.extend(note for note in fab.notes)
    if holes and any(h.plated for h in holes):
        assumptions.append("plated holes are taken as through holes joining every copper layer "
                           "(blind and buried vias are not told apart)")

    board = Board(
        name=project.name, layers=layers, outline=outline, stackup=stackup, pads=pads, holes=holes,
        netlist_file=fab.relname(fab.netlist), drill_files=drill_files, component_values=values,
        component_packages=packages, component_sides=sides,
        assumptions=assumptions, source=str(project.path or project.fab), inputs=inputs,
    )
    if netlist is not None and netlist.maybe_cut_names:
        from .netnames import restore_cut_names
        restore_cut_names(board, netlist.maybe_cut_names)
    return board


def _order_inner_by_access_codes(fab: FabSet, raw_layers: list, netlist) -> tuple[list, str | None]:
    """Inner layers whose order the names did not give, put in the order the netlist's access
    codes say: a pad with access code k (not a through hole) lies on copper layer k, so each
    file goes to the layer number whose pads land on its copper most often. Returns the layers
    (re-indexed) and the assumption, or the layers unchanged and None when the netlist has no
    pads on those layers (the order from the names then stands, as discovery stated it)."""
    import itertools

    guessed = [(path, index, gl) for path, index, gl in raw_layers if path in fab.inner_order_guessed]
    slots = sorted(index for _, index, _ in guessed)
    pts = [p for p in netlist.points if not (p.hole_mm and p.hole_mm > 0) and p.access - 1 in slots]
    if not pts or len(guessed) > 7:
        return raw_layers, None
    score = np.zeros((len(guessed), len(slots)), dtype=int)
    for i, (_, _, gl) in enumerate(guessed):
        if gl.geometry.is_empty:
            continue
        shapely.prepare(gl.geometry)
        for j, slot in enumerate(slots):
            on = [p for p in pts if p.access - 1 == slot]
            if on:
                score[i, j] = int(shapely.contains_xy(gl.geometry, np.array([p.x_mm for p in on]),
                                                      np.array([p.y_mm for p in on])).sum())
    current = tuple(slots.index(index) for _, index, _ in guessed)
    best = max(itertools.permutations(range(len(slots))),
               key=lambda perm: (sum(score[i, j] for i, j in enumerate(perm)), perm == current))
    if sum(score[i, j] for i, j in enumerate(best)) == 0:
        return raw_layers, None
    new_index = {path: slots[j] for (path, _, _), j in zip(guessed, best)}
    out = [(path, new_index.get(path, index), gl) for path, index, gl in raw_layers]
    out.sort(key=lambda r: r[1])
    fab.copper = [(path, index) for path, index, _ in out]
    placed = ", ".join(f"{fab.relname(path)} = L{new_index[path] + 1} ({score[i, best[i]]} pads)"
                       for i, (path, _, _) in enumerate(guessed))
    return out, (f"inner layer order from the netlist's access codes (pads on layer k land on that "
                 f"file's copper): {placed}")


# a guessed drill format is taken when at least this share of its plated holes land on copper
DRILL_GUESS_MIN_LANDED = 0.5


def _choose_drill_format(project: Project, fab: FabSet, path, plated: bool | None, first, raw_layers,
                         limits: InputLimits):
    """The drill file read with each plausible number format; the one whose plated holes land on
    the copper of the outer layers (where a plated hole has its pad) most often. Returns the
    DrillFile and the assumption that says so; refuses when none lands on copper."""
    from .readers.drill import read_excellon

    name = fab.relname(path)
    geoms = [gl.geometry for _, _, gl in raw_layers if not gl.geometry.is_empty]
    outer = [geoms[0], geoms[-1]] if len(geoms) > 1 else geoms
    for g in outer:
        shapely.prepare(g)
    scored = []
    for cand in first.format_candidates:
        df = first if cand == first.number_format else read_excellon(path, limits, number_format=cand)
        holes = [h for h in df.holes if h.end is None and (h.plated if plated is None else plated)]
        if not holes or not outer:
            scored.append((0, 0, cand, df))
            continue
        xs = np.array([h.x_mm for h in holes])
        ys = np.array([h.y_mm for h in holes])
        on = np.zeros(len(holes), dtype=bool)
        for g in outer:
            on |= shapely.contains_xy(g, xs, ys)
        scored.append((int(on.sum()), len(holes), cand, df))
    fix = (f"set it under [files] in {project.path or 'a loopcheck.toml beside the fab outputs'}, e.g. "
           f"\"{name}\" = \"drill {{words}}\"")
    if all(n == 0 for _, n, _, _ in scored):
        cand = scored[0][2]
        return scored[0][3], (f"{name}: number format not given in the file or beside it, and no plated "
                              f"holes to check a guess against the copper; read as {cand.describe()} (the "
                              f"most common habit); if wrong, " + fix.format(words=cand.words()))
    best = max(scored, key=lambda s: (s[0] / max(s[1], 1)))   # first of equals: the likelier habit
    landed, total, cand, df = best
    if landed < DRILL_GUESS_MIN_LANDED * total:
        raise InputError(f"no number format in the drill file or beside it, and none of the "
                         f"{len(scored)} plausible formats puts its plated holes on the copper (best: "
                         f"{cand.describe()}, {landed} of {total}); "
                         + fix.format(words="inch 2.4 omit-leading") + " with the right units and digits",
                         path=fab.error_name(path))
    others = sorted((s for s in scored if s is not best and s[0] / max(s[1], 1) < landed / total),
                    key=lambda s: -s[0] / max(s[1], 1))
    nxt = f"; next best {others[0][2].describe()}: {others[0][0]} of {others[0][1]}" if others else ""
    return df, (f"{name}: number format not given in the file or beside it; read as {cand.describe()}: "
                f"{landed} of {total} plated holes land on the outer copper{nxt}; if wrong, "
                + fix.format(words=cand.words()))


def clip_to_outline(geom: BaseGeometry, outline: BaseGeometry) -> BaseGeometry:
    """The part of ``geom`` inside ``outline`` [mm].

    Islands wholly inside are kept as they are and islands wholly outside dropped (prepared
    outline, vectorised); only islands that cross the outline are intersected: a plane with
    10^5 vertices is then never cut unless it really crosses the board edge.
    """
    polys = np.array(_polygon_parts(geom), dtype=object)
    if len(polys) == 0:
        return geom
    shapely.prepare(outline)
    inside = shapely.contains(outline, polys)
    touching = shapely.intersects(outline, polys)
    parts = list(polys[inside])
    for p in polys[touching & ~inside]:
        parts.extend(_polygon_parts(p.intersection(outline)))
    parts = [p for p in parts if p.area > 0]
    if not parts:
        return Polygon()
    return parts[0] if len(parts) == 1 else MultiPolygon(parts)


def _polygon_parts(geom: BaseGeometry) -> list[Polygon]:
    if geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    out: list[Polygon] = []
    for g in getattr(geom, "geoms", []):
        out.extend(_polygon_parts(g))
    return out


def _dedupe_holes(holes: list[Hole]) -> tuple[list[Hole], int]:
    """Holes that two drill files both give (same place, size, plating, within 1 um) once."""
    seen: set[tuple] = set()
    out = []
    for h in holes:
        key = (round(h.x_mm, 3), round(h.y_mm, 3), round(h.diameter_mm, 3), h.plated,
               None if h.end is None else (round(h.end[0], 3), round(h.end[1], 3)))
        if key in seen:
            continue
        seen.add(key)
        out.append(h)
    return out, len(holes) - len(out)


def _check_netlist_layers(fab: FabSet, netlist, n: int) -> None:
    highest = max([p.access for p in netlist.points] + [netlist.layer_count or 0])
    if highest > n:
        files = ", ".join(f"L{i + 1} {fab.relname(p)}" for p, i in fab.copper)
        raise InputError(f"the netlist names copper layer {highest} but {n} copper file"
                         f"{'s were' if n != 1 else ' was'} found ({files}); map the missing layers "
                         f"in the project file's [files] as copper:N",
                         path=fab.error_name(fab.netlist))


def _pads_from_netlist(netlist, n: int) -> list[Pad]:
    all_layers = tuple(range(n))
    pads = []
    for pt in netlist.points:
        through = pt.access == 0 or (pt.hole_mm is not None and pt.hole_mm > 0)
        layers = all_layers if through else (pt.access - 1,)
        pads.append(Pad(net=pt.net, ref=pt.ref, pin=pt.pin, x_mm=pt.x_mm, y_mm=pt.y_mm, layers=layers,
                        hole_mm=pt.hole_mm if pt.hole_mm else None,
                        plated=True if pt.plated is None else bool(pt.plated),
                        width_mm=pt.width_mm, height_mm=pt.height_mm, rotation_deg=pt.rotation_deg or 0.0,
                        is_via=bool(pt.is_via), source_line=pt.line))
    return pads


def _pads_from_pin_flashes(raw_layers, holes: list[Hole], n: int) -> list[Pad]:
    """Pads from X2 %TO.P% flashes: one pad per (ref, pin, place), on the layers that flash it."""
    found: dict[tuple, dict] = {}
    for _, index, gl in raw_layers:
        for pf in gl.pin_flashes or []:
            key = (pf.ref, pf.pin, round(pf.x_mm, 3), round(pf.y_mm, 3))
            entry = found.setdefault(key, {"net": pf.net or "", "layers": set(), "x": pf.x_mm, "y": pf.y_mm})
            entry["layers"].add(index)
            if not entry["net"] and pf.net:
                entry["net"] = pf.net
    if not found:
        return []
    tree = None
    plated = [h for h in holes if h.plated and h.end is None]
    if plated:
        tree = shapely.STRtree([shapely.Point(h.x_mm, h.y_mm) for h in plated])
    pads = []
    for (ref, pin, _, _), e in found.items():
        layers = tuple(sorted(e["layers"]))
        hole_mm = None
        if tree is not None:
            near = tree.query(shapely.Point(e["x"], e["y"]).buffer(0.05))
            if len(near):
                hole_mm = plated[int(near[0])].diameter_mm
                layers = tuple(range(n))
        pads.append(Pad(net=e["net"], ref=ref, pin=pin, x_mm=e["x"], y_mm=e["y"], layers=layers,
                        hole_mm=hole_mm))
    pads.sort(key=lambda p: (p.ref, p.pin))
    return pads


def _outline_from_paths(paths) -> BaseGeometry | None:
    lines = [shapely.LineString(p) for p in paths if len(p) >= 2]
    if not lines:
        return None
    faces = [f for f in shapely.polygonize([shapely.union_all(lines)]).geoms if f.area > 0]
    if not faces:
        return None
    return max(faces, key=lambda f: f.area)


def _extent_outline(pads: list[Pad], holes: list[Hole], copper: list[BaseGeometry]) -> Outline:
    xs, ys = [], []
    for p in pads:
        xs.append(p.x_mm)
        ys.append(p.y_mm)
    for h in holes:
        xs.append(h.x_mm)
        ys.append(h.y_mm)
    if xs:
        what = "the extent of the netlist's pads and the holes"
        x0, y0, x1, y1 = min(xs), min(ys), max(xs), max(ys)
    else:
        bounds = [g.bounds for g in copper if not g.is_empty]
        if not bounds:
            return Outline(geometry=Polygon(), source="none (no copper, pads or holes)", from_extent=True)
        what = "the extent of the copper"
        x0 = min(b[0] for b in bounds)
        y0 = min(b[1] for b in bounds)
        x1 = max(b[2] for b in bounds)
        y1 = max(b[3] for b in bounds)
    m = EXTENT_MARGIN_MM
    return Outline(geometry=box(x0 - m, y0 - m, x1 + m, y1 + m),
                   source=f"{what} plus a {m:g} mm margin", from_extent=True)
