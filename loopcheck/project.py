"""The board project file, ``loopcheck.toml``, beside the fab outputs (optional).

Schema (every section optional; unknown keys and wrong types are an InputError naming the key):

    [board]
    name = "led-driver-tidy"          # default: the folder name
    fab = "."                         # folder or .zip of fab outputs, relative to this file

    [files]                           # explicit mapping, file name (relative to fab) -> role
    "board-inner1.gbr" = "copper:2"   # copper:N, N = 1 (top) .. layer count (bottom)
    "board-outline.gbr" = "outline"   # also "drill", "netlist", "bom", "ignore"

    [stackup]
    copper_um = [35, 35]              # per copper layer, top to bottom
    dielectric_um = [1510]            # between adjacent copper layers
    dielectric_er = [4.5]
    finished_mm = 1.6
    resistivity_ohm_m = 1.75e-8       # optional; default IACS copper at temperature

    [components]                      # part values where the fab outputs carry none
    RS1 = "0.068"                     # ohms for resistors, farads or "10uF" for capacitors ...

    [operating_point]                 # applies to every stage unless the stage overrides it
    vin_v = [20, 40]                  # a range [min, max] or one number
    vout_v = 12.0
    iout_a = 1.5
    fsw_hz = 400e3
    edge_ns = 20
    vsense_v = 0.1
    ambient_c = 25
    switch_capacitance_pf = 500
    ripple_ratio = 0.3

    [stages.NAME]                     # name a stage or correct any role found
    topology = "buck"                 # buck | boost | buck-boost
    switch = "Q1"
    rectifier = "D1"
    inductor = "L1"
    input_caps = ["C1", "C2"]
    output_caps = ["C5"]
    sense_resistor = "RS1"
    controller = "U1"
    controller_decoupling = "C4"
    switch_node = "SW"                # net names
    input_net = "VIN"
    output_net = "LED+"
    ground_net = "GND"
    [stages.NAME.operating_point]     # same keys as [operating_point]

    [rules]
    deck = "default"                  # a deck name (rules/NAME.toml) or a path
    [rules.thresholds."hot-loop-area"]          # override a rule's thresholds on this board
    warning = 40
    error = 120
    [rules.stage_thresholds.NAME."hot-loop-area"]   # ... or on one stage
    warning = 60

    [[waivers]]
    rule = "sense-kelvin"
    where = "stage1"                  # a stage name, a terminal (RS1.2) or a net name
    reason = "Kelvin pads added in rev B"

Where the project file is found (BOARD is what the user names on the command line):

- a folder: ``BOARD/loopcheck.toml`` when it exists; its ``fab`` (default ".") is relative to it.
  Without one, the folder itself holds the fab outputs and every default applies.
- a ``.zip``: the zip holds fab outputs only. A ``loopcheck.toml`` in the same folder applies only
  when its ``[board] fab`` names this very zip (so one folder may hold several zips, each with its
  own project file). A project file inside the zip is not read: archives are untrusted input.
- a ``loopcheck.toml`` (or any ``*.toml``): that file; ``fab`` is relative to its folder.

Values: numbers may be integers or floats; ``[components]`` values may be strings or numbers
(kept as written, as a string). ``[files]`` roles: ``copper:N``, ``outline``, ``drill``,
``drill:plated``, ``drill:nonplated``, ``netlist``, ``bom``, ``ignore``. A drill role may end in
the drill file's number format where the file does not give it: ``"drill inch 2.4 omit-leading"``
(units mm / inch, digits before.after the point, omit-leading / omit-trailing zeros).
"""
from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import InputError

PROJECT_FILE_NAME = "loopcheck.toml"

# Keys of [operating_point] and [stages.NAME.operating_point] -> (OperatingPoint field, scale to
# SI). vin_v, one number or [min, max], sets vin_min_v and vin_max_v.
OPERATING_POINT_FIELDS: dict[str, tuple[str, float] | None] = {
    "vin_v": None,
    "vout_v": ("vout_v", 1.0),
    "iout_a": ("iout_a", 1.0),
    "fsw_hz": ("fsw_hz", 1.0),
    "edge_ns": ("edge_s", 1e-9),
    "vsense_v": ("vsense_v", 1.0),
    "ambient_c": ("ambient_c", 1.0),
    "switch_capacitance_pf": ("switch_capacitance_f", 1e-12),
    "ripple_ratio": ("ripple_ratio", 1.0),
}
OPERATING_POINT_KEYS = tuple(OPERATING_POINT_FIELDS)
# operating-point values that must be positive; ripple_ratio must lie in RIPPLE_RATIO_RANGE
OPERATING_POINT_POSITIVE = ("vin_v", "iout_a", "fsw_hz", "edge_ns", "switch_capacitance_pf")
RIPPLE_RATIO_RANGE = (0.0, 2.0)
# [stages.NAME] keys: components named by reference, lists of references, nets, the topology.
STAGE_REF_KEYS = ("switch", "rectifier", "inductor", "sense_resistor", "controller",
                  "controller_decoupling")
STAGE_REF_LIST_KEYS = ("input_caps", "output_caps")
STAGE_NET_KEYS = ("switch_node", "input_net", "output_net", "ground_net")
TOPOLOGIES = ("buck", "boost", "buck-boost")
FILE_ROLES = ("outline", "drill", "drill:plated", "drill:nonplated", "netlist", "bom", "ignore")


@dataclass
class StackupSpec:
    copper_um: list[float] | None = None
    dielectric_um: list[float] | None = None
    dielectric_er: list[float] | None = None
    finished_mm: float | None = None
    resistivity_ohm_m: float | None = None


@dataclass
class StageSpec:
    name: str
    roles: dict[str, Any] = field(default_factory=dict)          # role key -> ref / list of refs / net
    operating_point: dict[str, Any] = field(default_factory=dict)


@dataclass
class Waiver:
    rule: str
    where: str
    reason: str


@dataclass
class RulesSpec:
    deck: str = "default"
    thresholds: dict[str, dict[str, float]] = field(default_factory=dict)
    stage_thresholds: dict[str, dict[str, dict[str, float]]] = field(default_factory=dict)


@dataclass
class Project:
    path: Path | None                         # the loopcheck.toml, None when there is none
    fab: Path                                 # folder or zip of fab outputs
    name: str
    files: dict[str, str] = field(default_factory=dict)
    stackup: StackupSpec = field(default_factory=StackupSpec)
    components: dict[str, str] = field(default_factory=dict)
    operating_point: dict[str, Any] = field(default_factory=dict)
    stages: list[StageSpec] = field(default_factory=list)
    rules: RulesSpec = field(default_factory=RulesSpec)
    waivers: list[Waiver] = field(default_factory=list)
    # the line of each key in the project file, dotted key -> line (for later error messages)
    key_lines: dict[str, int] = field(default_factory=dict)

    def line_of(self, dotted_key: str) -> int | None:
        """The project-file line that sets ``dotted_key`` (e.g. ``"stackup.copper_um"``), if known."""
        return self.key_lines.get(dotted_key)

    def nearest_line(self, dotted_key: str) -> int | None:
        """The line of ``dotted_key``, else of its nearest enclosing table that the file sets
        (``stages.led.switch_node`` not written: the ``[stages.led]`` header's line)."""
        parts = dotted_key.split(".")
        for n in range(len(parts), 0, -1):
            line = self.key_lines.get(".".join(parts[:n]))
            if line is not None:
                return line
        return None

    def key_error(self, dotted_key: str, message: str) -> InputError:
        """An InputError naming this project file and the line of ``dotted_key`` (or of its table)."""
        return InputError(message, path=str(self.path) if self.path else None, line=self.nearest_line(dotted_key))


def load_project(board_path: str | Path) -> Project:
    """BOARD (a folder, a .zip or a loopcheck.toml) -> Project. Raises InputError.

    Parameters
    ----------
    board_path : the folder of fab outputs, a .zip of them, or a project file (see the module
        docstring for where the project file is looked for).
    """
    board = Path(board_path)
    if not board.exists():
        raise InputError("no such file or folder", path=str(board))
    if board.is_dir():
        toml_path = board / PROJECT_FILE_NAME
        if toml_path.is_file():
            return _from_file(toml_path)
        return Project(path=None, fab=board, name=_default_name(board))
    if board.suffix.lower() == ".zip":
        beside = board.parent / PROJECT_FILE_NAME
        if beside.is_file():
            project = _from_file(beside)
            if project.fab.resolve() == board.resolve():
                return project
        return Project(path=None, fab=board, name=_default_name(board))
    if board.suffix.lower() == ".toml":
        return _from_file(board)
    raise InputError("expected a folder of fab outputs, a .zip of them or a loopcheck.toml",
                     path=str(board))


def _default_name(path: Path) -> str:
    return path.stem if path.suffix.lower() == ".zip" else path.resolve().name


# --- parsing and validation -----------------------------------------------------------------

class _Checker:
    """Validates the parsed TOML table; every error names the dotted key and, if found, its line."""

    def __init__(self, path: Path, text: str):
        self.path = path
        self.lines = text.splitlines()
        self._headers = self._scan_headers()
        self.key_lines: dict[str, int] = {}

    def _scan_headers(self) -> list[tuple[int, tuple[str, ...]]]:
        out = []
        for no, line in enumerate(self.lines, start=1):
            m = re.match(r"\s*\[\[?\s*([^\]]+?)\s*\]\]?\s*(#.*)?$", line)
            if m:
                out.append((no, _split_dotted(m.group(1))))
        return out

    def line(self, keys: tuple[str, ...]) -> int | None:
        """The line defining ``keys`` (a key under its table header), or the table header's line."""
        if not keys:
            return None
        dotted = ".".join(keys)
        if dotted in self.key_lines:
            return self.key_lines[dotted]
        # a table header that is exactly this key
        for no, hdr in self._headers:
            if hdr == keys:
                return no
        # key = value below the header of its parent (or of any ancestor, for dotted keys)
        for split in range(len(keys) - 1, -1, -1):
            prefix, rest = keys[:split], keys[split:]
            start_end = self._table_span(prefix)
            if start_end is None:
                continue
            start, end = start_end
            pattern = r"\s*" + r"\s*\.\s*".join(_key_regex(k) for k in rest) + r"\s*="
            for no in range(start, end):
                if re.match(pattern, self.lines[no - 1]):
                    return no
        return None

    def _table_span(self, prefix: tuple[str, ...]) -> tuple[int, int] | None:
        """Lines (first, past-last) of the table named ``prefix``; () is the top level."""
        if not prefix:
            end = self._headers[0][0] if self._headers else len(self.lines) + 1
            return 1, end
        for i, (no, hdr) in enumerate(self._headers):
            if hdr == prefix:
                end = self._headers[i + 1][0] if i + 1 < len(self._headers) else len(self.lines) + 1
                return no + 1, end
        return None

    def fail(self, keys: tuple[str, ...], message: str) -> InputError:
        where = ".".join(_show_key(k) for k in keys)
        return InputError(f"{where}: {message}" if where else message, path=str(self.path),
                          line=self.line(keys))

    # value checks ----------------------------------------------------------------------------
    def table(self, value: Any, keys: tuple[str, ...]) -> dict:
        if not isinstance(value, dict):
            raise self.fail(keys, "expected a table")
        return value

    def known(self, table: dict, keys: tuple[str, ...], allowed: tuple[str, ...]) -> None:
        for k in table:
            if k not in allowed:
                raise self.fail(keys + (k,), f"unknown key (expected one of: {', '.join(allowed)})")

    def string(self, value: Any, keys: tuple[str, ...]) -> str:
        if not isinstance(value, str):
            raise self.fail(keys, "expected a string")
        return value

    def as_float(self, value: int | float, keys: tuple[str, ...]) -> float:
        # a TOML integer has no size limit; one past the float range is bad input, not a crash
        try:
            return float(value)
        except OverflowError:
            raise self.fail(keys, f"number out of range ({len(str(abs(value)))} digits)") from None

    def number(self, value: Any, keys: tuple[str, ...], positive: bool = False, finite: bool = False) -> float:
        if not _is_number(value):
            raise self.fail(keys, "expected a number")
        value = self.as_float(value, keys)
        if finite and not math.isfinite(value):
            raise self.fail(keys, f"expected a finite number, got {value}")
        if positive and not value > 0:
            raise self.fail(keys, f"expected a positive number, got {value}")
        return float(value)

    def numbers(self, value: Any, keys: tuple[str, ...], positive: bool = False,
                finite: bool = False) -> list[float]:
        if not isinstance(value, list) or not value or not all(_is_number(v) for v in value):
            raise self.fail(keys, "expected a list of numbers")
        value = [self.as_float(v, keys) for v in value]
        if finite and not all(math.isfinite(v) for v in value):
            raise self.fail(keys, "expected a list of finite numbers")
        if positive and not all(v > 0 for v in value):
            raise self.fail(keys, "expected positive numbers")
        return [float(v) for v in value]

    def strings(self, value: Any, keys: tuple[str, ...]) -> list[str]:
        if isinstance(value, str):
            return [value]
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.fail(keys, "expected a string or a list of strings")
        return list(value)

    def operating_point(self, value: Any, keys: tuple[str, ...]) -> dict[str, Any]:
        """An [operating_point] table, checked: finite numbers, positive where they must be,
        ripple_ratio in 0..2, vin_v one number or [min, max] with min <= max."""
        table = self.table(value, keys)
        self.known(table, keys, OPERATING_POINT_KEYS)
        out: dict[str, Any] = {}
        for k, v in table.items():
            where = keys + (k,)
            positive = k in OPERATING_POINT_POSITIVE
            if k == "vin_v" and isinstance(v, list):
                vals = self.numbers(v, where, finite=True)
                if len(vals) != 2 or vals[0] > vals[1]:
                    raise self.fail(where, "expected one number or a range [min, max]")
                if not vals[0] > 0:
                    raise self.fail(where, f"expected a positive input voltage, got {v}")
                out[k] = vals
                continue
            number = self.number(v, where, positive, finite=True)
            lo, hi = RIPPLE_RATIO_RANGE
            if k == "ripple_ratio" and not lo <= number <= hi:
                raise self.fail(where, f"expected {lo:g}..{hi:g}, got {v}")
            out[k] = number
        return out


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _split_dotted(text: str) -> tuple[str, ...]:
    parts = re.findall(r'"((?:[^"\\]|\\.)*)"|\'([^\']*)\'|([^.\s"\']+)', text)
    return tuple(a or b or c for a, b, c in parts)


def _key_regex(key: str) -> str:
    e = re.escape(key)
    return rf"(?:{e}|\"{e}\"|'{e}')"


def _show_key(key: str) -> str:
    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else f'"{key}"'


_TOP_KEYS = ("board", "files", "stackup", "components", "operating_point", "stages", "rules", "waivers")


def _from_file(path: Path) -> Project:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path=str(path)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("not a text file (expected UTF-8 TOML)", path=str(path)) from None
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError) as exc:    # ValueError: an integer of over 4300 digits
        msg = str(exc)
        m = re.search(r"\(at line (\d+), column \d+\)", msg)
        line = int(m.group(1)) if m else None
        msg = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", msg)
        raise InputError(f"not valid TOML: {msg}", path=str(path), line=line) from None
    return _validate(path, text, data)


def _validate(path: Path, text: str, data: dict) -> Project:
    c = _Checker(path, text)
    c.known(data, (), _TOP_KEYS)
    folder = path.parent

    board = c.table(data.get("board", {}), ("board",))
    c.known(board, ("board",), ("name", "fab"))
    name = c.string(board["name"], ("board", "name")) if "name" in board else folder.resolve().name
    fab_text = c.string(board.get("fab", "."), ("board", "fab")) if "fab" in board else "."
    fab = (folder / fab_text)
    if not fab.exists():
        raise c.fail(("board", "fab"), f"no such folder or zip: {fab_text}")
    if not (fab.is_dir() or fab.suffix.lower() == ".zip"):
        raise c.fail(("board", "fab"), f"expected a folder or a .zip of fab outputs: {fab_text}")

    files: dict[str, str] = {}
    ftable = c.table(data.get("files", {}), ("files",))
    for fname, role in ftable.items():
        keys = ("files", fname)
        role = c.string(role, keys).strip().lower()
        m = re.fullmatch(r"copper:(\d+)", role)
        if m:
            if int(m.group(1)) < 1:
                raise c.fail(keys, "copper layers are numbered from 1 (top)")
        elif role.split(" ", 1)[0] in ("drill", "drill:plated", "drill:nonplated") and " " in role:
            from .readers.drill_format import parse_format_words   # a drill's number format words
            try:
                parse_format_words(role.split(" ", 1)[1])
            except ValueError as exc:
                raise c.fail(keys, str(exc)) from None
        elif role not in FILE_ROLES:
            raise c.fail(keys, f"unknown role {role!r} (expected copper:N, {', '.join(FILE_ROLES)})")
        files[fname] = role

    st = c.table(data.get("stackup", {}), ("stackup",))
    c.known(st, ("stackup",), ("copper_um", "dielectric_um", "dielectric_er", "finished_mm",
                               "resistivity_ohm_m"))
    stackup = StackupSpec(
        copper_um=c.numbers(st["copper_um"], ("stackup", "copper_um"), True) if "copper_um" in st else None,
        dielectric_um=(c.numbers(st["dielectric_um"], ("stackup", "dielectric_um"), True)
                       if "dielectric_um" in st else None),
        dielectric_er=(c.numbers(st["dielectric_er"], ("stackup", "dielectric_er"), True)
                       if "dielectric_er" in st else None),
        finished_mm=c.number(st["finished_mm"], ("stackup", "finished_mm"), True) if "finished_mm" in st else None,
        resistivity_ohm_m=(c.number(st["resistivity_ohm_m"], ("stackup", "resistivity_ohm_m"), True)
                           if "resistivity_ohm_m" in st else None),
    )
    if stackup.dielectric_er is not None and any(e < 1 for e in stackup.dielectric_er):
        raise c.fail(("stackup", "dielectric_er"), "relative permittivity must be at least 1")

    components: dict[str, str] = {}
    ctable = c.table(data.get("components", {}), ("components",))
    for ref, value in ctable.items():
        if isinstance(value, str):
            components[ref] = value
        elif _is_number(value):
            components[ref] = repr(value) if isinstance(value, float) else str(value)
        else:
            raise c.fail(("components", ref), "expected a string or a number")

    op = c.operating_point(data.get("operating_point", {}), ("operating_point",))

    stages: list[StageSpec] = []
    stable = c.table(data.get("stages", {}), ("stages",))
    for sname, spec in stable.items():
        keys = ("stages", sname)
        spec = c.table(spec, keys)
        allowed = ("topology",) + STAGE_REF_KEYS + STAGE_REF_LIST_KEYS + STAGE_NET_KEYS + ("operating_point",)
        c.known(spec, keys, allowed)
        roles: dict[str, Any] = {}
        stage_op: dict[str, Any] = {}
        for k, v in spec.items():
            if k == "operating_point":
                stage_op = c.operating_point(v, keys + (k,))
            elif k == "topology":
                t = c.string(v, keys + (k,))
                if t not in TOPOLOGIES:
                    raise c.fail(keys + (k,), f"unknown topology {t!r} (expected {', '.join(TOPOLOGIES)})")
                roles[k] = t
            elif k in STAGE_REF_LIST_KEYS:
                roles[k] = c.strings(v, keys + (k,))
            else:
                roles[k] = c.string(v, keys + (k,))
        stages.append(StageSpec(name=sname, roles=roles, operating_point=stage_op))

    rt = c.table(data.get("rules", {}), ("rules",))
    c.known(rt, ("rules",), ("deck", "thresholds", "stage_thresholds"))
    rules = RulesSpec()
    if "deck" in rt:
        rules.deck = c.string(rt["deck"], ("rules", "deck"))
    th = c.table(rt.get("thresholds", {}), ("rules", "thresholds"))
    for rule, limits in th.items():
        rules.thresholds[rule] = _thresholds(c, limits, ("rules", "thresholds", rule))
    sth = c.table(rt.get("stage_thresholds", {}), ("rules", "stage_thresholds"))
    for sname, per_rule in sth.items():
        per_rule = c.table(per_rule, ("rules", "stage_thresholds", sname))
        rules.stage_thresholds[sname] = {
            rule: _thresholds(c, limits, ("rules", "stage_thresholds", sname, rule))
            for rule, limits in per_rule.items()}

    waivers: list[Waiver] = []
    wlist = data.get("waivers", [])
    if not isinstance(wlist, list):
        raise c.fail(("waivers",), "expected an array of tables ([[waivers]])")
    for i, w in enumerate(wlist):
        keys = ("waivers",)
        if not isinstance(w, dict):
            raise c.fail(keys, f"entry {i + 1}: expected a table")
        c.known(w, keys, ("rule", "where", "reason"))
        for k in ("rule", "where", "reason"):
            if k not in w:
                raise c.fail(keys, f"entry {i + 1}: missing key {k!r} (a waiver needs rule, where and reason)")
        waivers.append(Waiver(rule=c.string(w["rule"], keys + ("rule",)),
                              where=c.string(w["where"], keys + ("where",)),
                              reason=c.string(w["reason"], keys + ("reason",))))

    key_lines: dict[str, int] = {}
    for dotted in _dotted_keys(data):
        line = c.line(tuple(dotted))
        if line is not None:
            key_lines[".".join(dotted)] = line

    return Project(path=path, fab=fab, name=name, files=files, stackup=stackup,
                   components=components, operating_point=op, stages=stages, rules=rules,
                   waivers=waivers, key_lines=key_lines)


def _thresholds(c: _Checker, value: Any, keys: tuple[str, ...]) -> dict[str, float]:
    table = c.table(value, keys)
    return {k: c.number(v, keys + (k,)) for k, v in table.items()}


def _dotted_keys(data: dict, prefix: tuple[str, ...] = ()) -> list[tuple[str, ...]]:
    out = []
    for k, v in data.items():
        out.append(prefix + (k,))
        if isinstance(v, dict):
            out.extend(_dotted_keys(v, prefix + (k,)))
    return out
