"""The whole measurement pipeline on one board: integrity, stages, measurements (no rules yet).

``analyse(board, project)``:
  1. connectivity: netlist opens, shorts and misalignment (integrity findings); a misaligned
     netlist stops measurement, with the hint that would align it, because every later
     measurement places current on the copper by the netlist's pads;
  2. stage detection from the netlist (roles named in the project file win);
  3. every measurement of every stage (``loopcheck.measure``), module by module: a measurement
     that cannot be made for a reason of the board (``measure.common.MeasurementGap``) or of the
     time budget is listed with ``not_made`` saying why (a stated gap); any other exception is a
     bug, recorded in ``Analysis.internal_errors`` (the run exits 3), and the others go on;
  4. the assumptions: stackup defaults, operating-point defaults, the methods.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

from .board import Board
from .findings import Finding, InternalError, Measurement
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
    # bugs met on the way (exit 3): each part that raised, its traceback saved (crashreport)
    internal_errors: list[InternalError] = field(default_factory=list)
    time_budget_s: float | None = None       # the per-board budget this run was given
    inductance_method: str | None = None     # "field" | "fast" as asked (--inductance), None: default

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
    "DC resistance and sense error: finite-volume DC solve of the copper sheets, pads as equipotential contacts",
    "temperature rise: IPC-2221 curve fit and an IPC-2152-style fit at the narrowest point of each path",
    "the tool estimates; it does not certify (mains-powered LED drivers need their own safety review)",
)


INDUCTANCE_METHODS = {
    "field": "loop inductance: partial-element field solve of the loop's copper in a window around it "
             "(sheet cells on every layer, vias, parts as straight links; other nets' copper carries eddy "
             "current only); where it cannot run, the route estimate, saying so",
    "fast": "loop inductance (--inductance fast): partial-inductance sum of straight flat-strip segments "
            "along the traced route; solid planes on the adjacent layer act as perfect-conductor images",
}


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
        "layout loss": ["layout_loss"],
    }[name]


def module_of(quantity: str) -> str:
    """The measurement module that makes ``quantity`` (for grouping what was not made)."""
    for name in MODULE_NAMES:
        if quantity in _module_quantities(name):
            return name
    return "other"


# the pipeline's steps, each a module boundary: a MeasurementGap out of one is a stated gap
# (not made, the reason in words), any other exception is a bug: an internal error (exit 3)
MODULE_NAMES = ("hot loop", "input capacitor", "controller decoupling", "sense resistor",
                "high-current paths", "switch node", "layout loss")


def _with_loop_capacitor(measure_hot_loop: Callable[..., list[Measurement]]) -> Callable[..., list[Measurement]]:
    """The hot-loop module, preceded by the choice of the loop's capacitor (measure.loopcap):
    the hot loop closes through it and the input-capacitor measurement (next) names it."""
    from .measure.loopcap import settle_loop_capacitor

    def hot_loop(ctx, stage: Stage) -> list[Measurement]:
        settle_loop_capacitor(ctx, stage)
        return measure_hot_loop(ctx, stage)
    return hot_loop


def _modules() -> list[tuple[str, Callable[..., list[Measurement]]]]:
    from .measure.current import measure_paths
    from .measure.decoupling import measure_controller_decoupling, measure_input_cap
    from .measure.hotloop import measure_hot_loop
    from .measure.sense import measure_sense
    from .measure.switchnode import measure_switch_node

    return [
        ("hot loop", _with_loop_capacitor(measure_hot_loop)),
        ("input capacitor", measure_input_cap),
        ("controller decoupling", measure_controller_decoupling),
        ("sense resistor", measure_sense),
        ("high-current paths", measure_paths),
        ("switch node", measure_switch_node),
    ]


def budget_reason(budget_s: float | None, during: bool = False) -> str:
    per = f" ({budget_s:g} s per board, --time-budget)" if budget_s else ""
    if during:
        return f"time budget used up during this measurement{per}: abandoned"
    return f"time budget used up{per}"


class _OutOfTime(Exception):
    """A measurement module still running at the deadline (abandoned)."""


def _call_within(fn: Callable[..., Any], args: tuple, deadline: float | None) -> Any:
    """``fn(*args)``, but give up at ``deadline`` (time.monotonic()): the call runs in a daemon
    thread that is abandoned when it outlasts the budget (it ends with the process), so a slow
    measurement never holds up the reports. Its exceptions come back here unchanged."""
    import threading
    import time

    if deadline is None:
        return fn(*args)
    box: dict[str, Any] = {}

    def work() -> None:
        try:
            box["value"] = fn(*args)
        except BaseException as exc:       # handed to the caller, who classifies it
            box["error"] = exc

    worker = threading.Thread(target=work, name="loopcheck-measurement", daemon=True)
    worker.start()
    worker.join(max(deadline - time.monotonic(), 0.0))
    if worker.is_alive():
        raise _OutOfTime()
    if "error" in box:
        raise box["error"]
    return box["value"]


def measure_stage(ctx, stage: Stage, timings: dict[str, float] | None = None,
                  internal_errors: list[InternalError] | None = None,
                  deadline: float | None = None, budget_s: float | None = None,
                  progress: Callable[[str], None] | None = None) -> list[Measurement]:
    """Every measurement of one stage, module by module.

    A module that raises ``MeasurementGap`` (a reason of the board) gives its quantities as not
    made with that reason; any other exception is a bug: it is recorded in ``internal_errors``
    (traceback saved, see crashreport) and its quantities are not made "internal error". Past
    ``deadline`` (time.monotonic()) the remaining modules are not made for the time budget.
    Without an ``internal_errors`` list, an internal error is raised."""
    import time

    from .crashreport import internal_error
    from .measure.common import MeasurementGap, not_made
    from .measure.layoutloss import measure_layout_loss

    modules = _modules() + [("layout loss", lambda c, s: measure_layout_loss(s, out))]
    out: list[Measurement] = []
    for name, fn in modules:
        if deadline is not None and time.monotonic() > deadline:
            out += [not_made(q, stage, budget_reason(budget_s)) for q in _module_quantities(name)]
            continue
        if progress is not None:
            progress(f"{stage.name}: {name}")
        t0 = time.perf_counter()
        try:
            out += _call_within(fn, (ctx, stage), deadline)
        except _OutOfTime:
            out += [not_made(q, stage, budget_reason(budget_s, during=True))
                    for q in _module_quantities(name)]
        except MeasurementGap as exc:
            out += [not_made(q, stage, str(exc)) for q in _module_quantities(name)]
        except Exception as exc:     # module boundary: a bug, re-raised as an internal error record
            if internal_errors is None:
                raise
            err = internal_error(f"{name} measurement", exc, stage=stage.name)
            internal_errors.append(err)
            reason = f"internal error in the {name} measurement ({err.error}; report id {err.report_id})"
            out += [not_made(q, stage, reason) for q in _module_quantities(name)]
        if timings is not None:
            timings[f"{stage.name} {name}"] = time.perf_counter() - t0
    return out


def analyse(board: Board, project: Any, *, deadline: float | None = None,
            time_budget_s: float | None = None, inductance_method: str | None = None,
            progress: Callable[[str], None] | None = None) -> Analysis:
    """Integrity, stages and all measurements of one board (see the module docstring).

    ``deadline`` (a time.monotonic() value; else ``time_budget_s`` from now) bounds the
    measurements: those not started by then are not made, for that reason. ``inductance_method``
    ("field" or "fast") goes to the measurement context. ``progress(text)`` is told each step.
    """
    import time

    from .connectivity import check_connectivity
    from .measure.common import not_made
    from .measure.netcopper import MeasureContext
    from .stages import component_values, find_stages, operating_point_assumptions

    if deadline is None and time_budget_s:
        deadline = time.monotonic() + time_budget_s
    t0 = time.perf_counter()
    if progress is not None:
        progress("connectivity")
    conn = check_connectivity(board)
    t1 = time.perf_counter()
    analysis = Analysis(board=board, integrity=list(conn.findings), connectivity_checked=conn.checked,
                        time_budget_s=time_budget_s, inductance_method=inductance_method)
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

    if progress is not None:
        progress("finding the power stages")
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
    analysis.assumptions.append(INDUCTANCE_METHODS["fast" if inductance_method == "fast" else "field"])

    if analysis.measurement_stopped:
        for stage in analysis.stages:
            analysis.measurements += [not_made(q, stage, analysis.measurement_stopped) for q in all_quantities()]
        return analysis
    values, _ = component_values(board, project)
    ctx = MeasureContext(board, values=dict(values), connectivity=conn if conn.checked else None,
                         stages=list(analysis.stages))
    if inductance_method is not None:
        # an optional field of the measurement context (the field solve's); set it whether or
        # not this version declares it, and the hot-loop measurement reads it when it can
        setattr(ctx, "inductance_method", inductance_method)
    for stage in analysis.stages:
        if stage.not_measured:      # a topology loopcheck does not model: listed, said, not measured
            analysis.measurements += [not_made(q, stage, stage.not_measured) for q in all_quantities()]
            continue
        made = measure_stage(ctx, stage, analysis.timings_s, analysis.internal_errors, deadline=deadline,
                             budget_s=time_budget_s, progress=progress)
        if stage.unsure:            # each measurement says what it rests on
            for m in made:
                m.assumptions = tuple(m.assumptions) + (f"rests on an unsure stage: {'; '.join(stage.unsure)}",)
        analysis.measurements += made
    return analysis
