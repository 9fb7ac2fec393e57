"""The whole measurement pipeline on one board: integrity, stages, measurements (no rules yet).

``analyse(board, project)``:
  1. connectivity: netlist opens, shorts and misalignment (integrity findings); a misaligned
     netlist stops measurement, with the hint that would align it, because every later
     measurement places current on the copper by the netlist's pads;
  2. stage detection from the netlist (roles named in the project file win);
  3. every measurement of every stage (``loopcheck.measure``); a measurement that cannot be made
     is listed with ``not_made`` saying why, and a failure in one does not stop the others;
  4. the assumptions: stackup defaults, operating-point defaults, the methods.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

from .board import Board
from .findings import Finding, Measurement
from .powerstage import Stage


@dataclass
class Analysis:
    board: Board
    integrity: list[Finding]                 # netlist-open / -short / -alignment, default severities
    stages: list[Stage] = field(default_factory=list)
    measurements: list[Measurement] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    messages: list[str] = field(default_factory=list)   # stage detection: what is missing, and why
    connectivity_checked: bool = True        # False when there is no netlist
    measurement_stopped: str | None = None   # why measurement did not run (e.g. misaligned netlist)
    timings_s: dict[str, float] = field(default_factory=dict)   # step -> seconds (for the benchmark)

    def measurements_for(self, stage: str) -> list[Measurement]:
        return [m for m in self.measurements if m.stage == stage]

    def measurement(self, stage: str, quantity: str) -> Measurement | None:
        """The first measurement of ``quantity`` for ``stage``, or None."""
        for m in self.measurements:
            if m.stage == stage and m.quantity == quantity:
                return m
        return None


METHOD_ASSUMPTIONS = (
    "routes: centreline-weighted shortest paths on a raster of each net's copper (0.05 mm pitch, "
    "coarser on large nets), layers joined at vias and plated holes",
    "switching-loop return current is drawn under the conductor that carries it out where the copper allows",
    "inductance: partial-inductance sum of straight flat-strip segments; solid planes on the adjacent "
    "layer (and a return plane the loop's current runs in) act as perfect-conductor images",
    "DC resistance and sense error: finite-volume DC solve of the copper sheets, pads as equipotential contacts",
    "temperature rise: IPC-2221 curve fit and an IPC-2152-style fit at the narrowest point of each path",
    "the tool estimates; it does not certify (mains-powered LED drivers need their own safety review)",
)


def all_quantities() -> list[str]:
    from .measure import PATH_NAMES, QUANTITIES, path_quantity
    out = []
    for q in QUANTITIES:
        if q.startswith("path."):
            what = q.split(".", 1)[1]
            out += [path_quantity(p, what) for p in PATH_NAMES]
        else:
            out.append(q)
    return out


def _module_quantities(name: str) -> list[str]:
    from .measure import PATH_NAMES, path_quantity
    return {
        "hot loop": ["hot_loop.area", "hot_loop.inductance", "hot_loop.vias", "hot_loop.overshoot",
                     "hot_loop.ringing_frequency", "hot_loop.edge_energy"],
        "input capacitor": ["input_cap.path_length", "input_cap.straight_distance", "input_cap.inductance"],
        "controller decoupling": ["controller_decoupling.path_length"],
        "sense resistor": ["sense.kelvin_error", "sense.pair_area", "sense.switch_node_clearance"],
        "high-current paths": [path_quantity(p, w) for p in PATH_NAMES for w in
                               ("resistance", "temperature_rise", "temperature_rise_ipc2152", "loss")] + ["copper_loss"],
        "switch node": ["switch_node.area", "switch_node.capacitance"],
    }[name]


def measure_stage(ctx, stage: Stage, timings: dict[str, float] | None = None) -> list[Measurement]:
    """Every measurement of one stage; a failing module is reported as not made, the rest go on."""
    from .measure.common import not_made
    from .measure.current import measure_paths
    from .measure.decoupling import measure_controller_decoupling, measure_input_cap
    from .measure.hotloop import measure_hot_loop
    from .measure.sense import measure_sense
    from .measure.switchnode import measure_switch_node

    modules: list[tuple[str, Callable[..., list[Measurement]]]] = [
        ("hot loop", measure_hot_loop),
        ("input capacitor", measure_input_cap),
        ("controller decoupling", measure_controller_decoupling),
        ("sense resistor", measure_sense),
        ("high-current paths", measure_paths),
        ("switch node", measure_switch_node),
    ]
    import time

    from .measure.loopcap import settle_loop_capacitor

    # the loop's capacitor is chosen once, before the measurements that use it
    settle_loop_capacitor(ctx, stage)
    out: list[Measurement] = []
    for name, fn in modules:
        t0 = time.perf_counter()
        try:
            out += fn(ctx, stage)
        except Exception as exc:     # one module's failure is reported, not hidden, and not fatal
            reason = f"{name} measurement failed: {type(exc).__name__}: {exc}"
            out += [not_made(q, stage, reason) for q in _module_quantities(name)]
        if timings is not None:
            timings[f"{stage.name} {name}"] = time.perf_counter() - t0
    return out


def analyse(board: Board, project: Any) -> Analysis:
    """Integrity, stages and all measurements of one board (see the module docstring)."""
    import time

    from .connectivity import check_connectivity
    from .measure.common import not_made
    from .measure.netcopper import MeasureContext
    from .stages import component_values, find_stages, operating_point_assumptions

    t0 = time.perf_counter()
    conn = check_connectivity(board)
    t1 = time.perf_counter()
    analysis = Analysis(board=board, integrity=list(conn.findings), connectivity_checked=conn.checked)
    analysis.timings_s["connectivity"] = t1 - t0
    # the board's own assumptions (stackup defaults, resistivity, part values) stay in
    # board.assumptions, which the reports list beside these
    if board.stackup.source == "default" and not any("default" in a for a in board.assumptions):
        analysis.assumptions.append(
            "stackup: defaults (" + ", ".join(f"{t * 1e6:.0f} um" for t in board.stackup.copper_thickness_m) +
            " copper; " + ", ".join(f"{d.thickness_m * 1e3:.3f} mm eps_r {d.eps_r:g}" for d in board.stackup.dielectrics)
            + ")")
    if not conn.checked:
        analysis.messages.append(conn.not_checked_reason or "no netlist: connectivity not checked")
    # a few stray pads off copper are findings of their own; only a netlist that does not
    # line up with the copper as a whole (offset, scale, mirror) stops the measurements
    if not conn.aligned:
        hint = f" ({conn.alignment_hint})" if conn.alignment_hint else ""
        analysis.measurement_stopped = f"netlist misaligned: measurement stopped{hint}"

    search = find_stages(board, project)
    t2 = time.perf_counter()
    analysis.timings_s["stages"] = t2 - t1
    analysis.stages = list(search.stages)
    analysis.messages += list(search.messages)
    seen: set[str] = set()
    for stage in analysis.stages:
        for a in operating_point_assumptions(stage.operating_point):
            text = f"{stage.name}: {a}"
            if text not in seen:
                seen.add(text)
                analysis.assumptions.append(text)
    analysis.assumptions += list(METHOD_ASSUMPTIONS)

    if analysis.measurement_stopped:
        for stage in analysis.stages:
            analysis.measurements += [not_made(q, stage, analysis.measurement_stopped) for q in all_quantities()]
        return analysis
    values, _ = component_values(board, project)
    ctx = MeasureContext(board, values=dict(values), connectivity=conn if conn.checked else None,
                         stages=list(analysis.stages))
    for stage in analysis.stages:
        analysis.measurements += measure_stage(ctx, stage, analysis.timings_s)
    return analysis
