"""The layer stackup: the project's ``[stackup]`` where given, stated defaults for the rest.

Every default that is used is returned as an assumption in plain words, so that every report can
list it. Thicknesses in the project file are in micrometres / millimetres (as its keys say); the
returned :class:`loopcheck.board.Stackup` is in metres.

Defaults (common practice for a standard-thickness rigid board, no source):

- 2 layers: 1.6 mm finished FR-4, 35 um (1 oz) copper both sides, eps_r 4.5, the dielectric the
  finished thickness less the copper (1.53 mm).
- 4 layers: 35 / 17.5 / 17.5 / 35 um copper; 0.2 mm prepreg, 1.065 mm core, 0.2 mm prepreg
  (eps_r 4.5), finished 1.57 mm (the sum).
- 1 layer: 35 um copper on a 1.6 mm substrate (no dielectric between copper layers).
- other counts: 35 um outer and 17.5 um inner copper, the dielectric spread evenly so that the
  board is 1.6 mm thick, eps_r 4.5.
"""

from __future__ import annotations

from pathlib import Path

from .board import Dielectric, Stackup
from .errors import InputError
from .project import StackupSpec

DEFAULT_FINISHED_MM = 1.6
DEFAULT_EPS_R = 4.5
OUTER_COPPER_UM = 35.0
INNER_COPPER_UM = 17.5
FOUR_LAYER_DIELECTRIC_UM = (200.0, 1065.0, 200.0)   # prepreg, core, prepreg
# a finished thickness that far from the copper + dielectric is a mistake, not plating or
# solder mask (which add some tens of um to the stack)
FINISHED_TOLERANCE = 0.10


def build_stackup(layer_count: int, spec: StackupSpec | None = None,
                  project_path: Path | str | None = None,
                  line_of=None) -> tuple[Stackup, list[str]]:
    """The stackup for ``layer_count`` copper layers, and the defaults used (as assumptions).

    Parameters
    ----------
    layer_count : number of copper layers found in the fab outputs [-]
    spec : the project's ``[stackup]`` (None: all defaults)
    project_path : the project file, named in errors
    line_of : optional callable, dotted key -> line in the project file, for errors

    Raises
    ------
    InputError : a ``[stackup]`` list whose length does not fit the layer count; a given
        ``finished_mm`` more than 10 % away from the given dielectric plus the copper.
    """
    if layer_count < 1:
        raise InputError("no copper layers", path=str(project_path) if project_path else None)
    spec = spec or StackupSpec()
    n = layer_count
    assumptions: list[str] = []
    where = str(project_path) if project_path else None

    def fail(key: str, message: str) -> InputError:
        line = line_of(f"stackup.{key}") if line_of else None
        return InputError(f"stackup.{key}: {message}", path=where, line=line)

    # copper
    if spec.copper_um is not None:
        if len(spec.copper_um) != n:
            raise fail("copper_um", f"gives {len(spec.copper_um)} copper thicknesses, the fab outputs "
                                    f"have {n} copper layers")
        copper_um = list(spec.copper_um)
    else:
        copper_um = _default_copper_um(n)
        assumptions.append("copper thickness (default): " + " / ".join(f"{t:g}" for t in copper_um)
                           + " um, top to bottom")

    # dielectrics
    er_given = spec.dielectric_er
    if er_given is not None and len(er_given) not in (1, max(n - 1, 0)):
        raise fail("dielectric_er", f"gives {len(er_given)} values, expected {n - 1} (one per gap "
                                    f"between the {n} copper layers) or one for all")
    if spec.dielectric_um is not None:
        if len(spec.dielectric_um) != n - 1:
            raise fail("dielectric_um", f"gives {len(spec.dielectric_um)} dielectric thicknesses, "
                                        f"expected {n - 1} between {n} copper layers")
        diel_um = list(spec.dielectric_um)
    elif n == 1:
        diel_um = []
    elif spec.finished_mm is not None:
        spread = (spec.finished_mm * 1000.0 - sum(copper_um)) / (n - 1)
        if spread <= 0:
            raise fail("finished_mm", f"{spec.finished_mm} mm is thinner than the copper alone")
        diel_um = [spread] * (n - 1)
        assumptions.append(f"dielectric thickness (default): the finished {spec.finished_mm:g} mm less "
                           f"the copper, spread evenly: {spread:.4g} um between each pair of layers")
    elif n == 4:
        diel_um = list(FOUR_LAYER_DIELECTRIC_UM)
        assumptions.append("dielectric thickness (default): 200 um prepreg / 1065 um core / 200 um prepreg")
    else:
        spread = (DEFAULT_FINISHED_MM * 1000.0 - sum(copper_um)) / (n - 1)
        diel_um = [spread] * (n - 1)
        assumptions.append(f"dielectric thickness (default): {DEFAULT_FINISHED_MM:g} mm board less the "
                           f"copper, spread evenly: {spread:.4g} um between each pair of layers")
    if er_given is None:
        er = [DEFAULT_EPS_R] * len(diel_um)
        if diel_um:
            assumptions.append(f"dielectric relative permittivity (default): {DEFAULT_EPS_R:g} (FR-4)")
    elif len(er_given) == 1:
        er = [er_given[0]] * len(diel_um)
    else:
        er = list(er_given)

    # Both given: they must agree, since via lengths and loop heights use the copper + dielectric
    # while the IPC-2152 board-thickness modifier uses the finished thickness.
    if spec.dielectric_um is not None and spec.finished_mm is not None and n > 1:
        stack_mm = (sum(copper_um) + sum(diel_um)) * 1e-3
        if abs(stack_mm - spec.finished_mm) > FINISHED_TOLERANCE * spec.finished_mm:
            raise fail("finished_mm", f"{spec.finished_mm:g} mm, but the copper and dielectric "
                                      f"add up to {stack_mm:.4g} mm (more than "
                                      f"{FINISHED_TOLERANCE:.0%} apart); correct one of them, or "
                                      f"leave finished_mm out to use the sum")

    # finished thickness
    if spec.finished_mm is not None:
        finished_m = spec.finished_mm * 1e-3
    elif n == 1:
        finished_m = DEFAULT_FINISHED_MM * 1e-3
        assumptions.append(f"finished thickness (default): {DEFAULT_FINISHED_MM:g} mm")
    else:
        finished_m = (sum(copper_um) + sum(diel_um)) * 1e-6
        if spec.dielectric_um is None or spec.copper_um is None:
            assumptions.append(f"finished thickness: {finished_m * 1e3:.3g} mm, the sum of copper and "
                               f"dielectric")

    if spec.resistivity_ohm_m is None:
        assumptions.append("copper resistivity (default): annealed copper (IACS), 1.7241e-8 ohm m at 20 C")

    given = any(v is not None for v in (spec.copper_um, spec.dielectric_um, spec.dielectric_er,
                                        spec.finished_mm, spec.resistivity_ohm_m))
    source = "default"
    if given:
        source = "project file" if not any(a.startswith(("copper thickness", "dielectric"))
                                           for a in assumptions) else "project file + defaults"
    stackup = Stackup(
        copper_thickness_m=[t * 1e-6 for t in copper_um],
        dielectrics=[Dielectric(thickness_m=t * 1e-6, eps_r=e) for t, e in zip(diel_um, er)],
        finished_thickness_m=finished_m,
        resistivity_ohm_m=spec.resistivity_ohm_m,
        source=source,
    )
    return stackup, assumptions


def _default_copper_um(n: int) -> list[float]:
    if n == 1:
        return [OUTER_COPPER_UM]
    return [OUTER_COPPER_UM] + [INNER_COPPER_UM] * (n - 2) + [OUTER_COPPER_UM]


def layer_names(n: int) -> list[str]:
    """Copper layer names, top to bottom: "top", "inner1", ..., "bottom" (one layer: "top")."""
    if n == 1:
        return ["top"]
    return ["top"] + [f"inner{i}" for i in range(1, n - 1)] + ["bottom"]
