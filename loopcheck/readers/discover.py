"""A folder or a .zip of fab outputs -> an ordered copper layer stack and the other files' roles.

Each file's role is decided from, in this order of trust (the first that speaks wins):

1. the explicit ``[files]`` mapping of the project file. It overrides all: when it names any
   copper layer, the copper stack is exactly the mapped files; when it names an outline, a
   netlist or a drill, the other candidates for that role are set aside (listed as ignored);
2. the X2 ``TF.FileFunction`` attribute (Gerber ``%TF...%``, or the ``#@!`` comment form, and the
   Excellon ``; #@! TF.FileFunction`` comment);
3. gerbonara's layer-name rules (``gerbonara.layer_rules``: the file-name conventions of many
   design programs, and its name guesser for the rest);
4. a layer number in the file name (``layer3``, ``L3``, ``copper3`` ...: copper layer 3).

Content decides the format: a Gerber role needs a Gerber file, a drill an Excellon file, a netlist
an IPC-D-356 file (sniffed, whatever its name: ``.ipc``, ``.d356``, ``.net`` ...). A BOM or
placement list is a ``.csv`` file; its path is only recorded. A file whose extension only a Gerber
(``.gbr``, ``.gtl``, ``.g1`` ...), Excellon (``.drl``, ``.xln`` ...) or IPC-D-356 file carries but
whose content is not one is an error (a corrupt layer is never silently left out), unless the
``[files]`` mapping says "ignore"; other files (job files, notes, READMEs) are ignored quietly.

A zip is checked against :class:`loopcheck.limits.InputLimits` (member count, total uncompressed
size, compression ratio, member paths that leave the folder, links) and extracted to a temporary
directory that :meth:`FabSet.close` removes. Nothing is ever written beside the inputs.
"""

from __future__ import annotations

import lzma
import re
import stat
import tempfile
import warnings
import zipfile
import zlib
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath

from ..errors import InputError
from ..limits import DEFAULT_LIMITS, InputLimits

SNIFF_BYTES = 65536
_SKIP_NAMES = {"loopcheck.toml", ".ds_store", "thumbs.db"}


@dataclass
class FabSet:
    """The roles of the files in one set of fab outputs.

    ``copper`` holds (path, index) pairs, index 0 = top .. N-1 = bottom, in stack order.
    ``drills`` holds (path, plated) pairs; plated None when neither attributes nor name say.
    Paths are where the files can be read now (inside a temporary folder for a zip); ``display``
    turns one into the name to show the user.
    """

    source: Path
    root: Path
    copper: list[tuple[Path, int]] = field(default_factory=list)
    outline: Path | None = None
    drills: list[tuple[Path, bool | None]] = field(default_factory=list)
    netlist: Path | None = None
    bom: Path | None = None
    ignored: list[tuple[Path, str]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    drill_formats: dict = field(default_factory=dict)   # path -> DrillFormat from the [files] mapping
    inner_order_guessed: list[Path] = field(default_factory=list)   # inner layers in a guessed order
    board: str | None = None                 # the board read, when the fab outputs hold several
    boards: list[str] = field(default_factory=list)   # all boards found (empty: just one)
    claimed_copper: list[Path] = field(default_factory=list)   # files claiming copper (before resolving)
    how: dict[Path, str] = field(default_factory=dict)      # path -> how its role was decided
    attributes: dict[Path, str] = field(default_factory=dict)  # path -> X2 FileFunction
    _tmp: tempfile.TemporaryDirectory | None = None

    def display(self, path: Path | None) -> str | None:
        """The name a user recognises: ``folder/file`` or ``board.zip:member``."""
        if path is None:
            return None
        try:
            rel = Path(path).relative_to(self.root).as_posix()
        except ValueError:
            return str(path)
        if self._tmp is not None:
            return f"{self.source.name}:{rel}"
        return rel

    def relname(self, path: Path | None) -> str | None:
        """The file's name inside the fab outputs (``member`` of a zip, ``sub/file`` of a folder)."""
        if path is None:
            return None
        try:
            return Path(path).relative_to(self.root).as_posix()
        except ValueError:
            return str(path)

    def error_name(self, path: Path | str) -> str:
        """The name to put in an error message: the real path, or ``board.zip:member``."""
        if self._tmp is not None:
            return self.display(Path(path)) or str(path)
        return str(path)

    @property
    def layer_count(self) -> int:
        return len(self.copper)

    def close(self) -> None:
        if self._tmp is not None:
            self._tmp.cleanup()
            self._tmp = None

    def __enter__(self) -> "FabSet":
        return self

    def __exit__(self, *exc) -> None:
        self.close()


@dataclass
class _File:
    path: Path
    rel: str
    kind: str                       # "gerber" | "excellon" | "ipc356" | "csv" | "other"
    function: str | None = None     # X2 FileFunction value


# --- entry point ---------------------------------------------------------------------------

class SeveralBoards(InputError):
    """The fab outputs hold more than one board and none was chosen (``boards`` names them)."""

    def __init__(self, message: str, boards: list[str], path: str | None = None):
        super().__init__(message, path=path)
        self.boards = boards


def discover(fab_path: str | Path, mapping: dict[str, str] | None = None,
             limits: InputLimits = DEFAULT_LIMITS, project_file: str | None = None,
             board: str | None = None) -> FabSet:
    """Sort the files of a folder or a .zip of fab outputs into roles (see the module docstring).

    Parameters
    ----------
    fab_path : a folder or a .zip of fab outputs
    mapping : the project's ``[files]`` table, file name (relative to the fab) -> role
    limits : limits for an untrusted archive
    project_file : the project file's path, named in errors about the mapping
    board : which board to read when the fab outputs hold several (see :func:`list_boards`)

    Raises
    ------
    InputError : a refused or broken zip; no copper layer; two files claiming one copper layer;
        a mapping that names a file not in the fab outputs; a file named like a Gerber, Excellon
        or IPC-D-356 file whose content is not one (unless mapped as "ignore");
        :class:`SeveralBoards` when the fab outputs hold several boards and ``board`` is None;
        a ``board`` that is not among them.
    """
    fab = _open(fab_path, limits)
    try:
        files = _scan(fab, limits)
        groups = board_groups(fab, files, dict(mapping or {}), limits, project_file)
        if len(groups) > 1:
            names = list(groups)
            fab.boards = names
            if board is None:
                raise SeveralBoards(f"{len(names)} boards in these fab outputs ({', '.join(names)}); pick one "
                                    f"with --board NAME, or give each board its own folder",
                                    names, path=str(fab.source))
            key = _match_board(board, names)
            if key is None:
                raise InputError(f"--board {board}: no such board here; the fab outputs hold "
                                 f"{', '.join(names)}", path=str(fab.source))
            files = groups[key]
            fab.board = key
            fab.notes.append(f"board {key!r}, one of {len(names)} boards in these fab outputs "
                             f"({', '.join(names)}): only its files are read")
        elif board is not None and board != next(iter(groups)):
            raise InputError(f"--board {board}: these fab outputs hold one board; leave --board out",
                             path=str(fab.source))
        _classify(fab, files, dict(mapping or {}), limits, project_file)
    except BaseException:
        fab.close()
        raise
    return fab


def list_boards(fab_path: str | Path, mapping: dict[str, str] | None = None,
                limits: InputLimits = DEFAULT_LIMITS, project_file: str | None = None) -> list[str]:
    """The boards in a folder or .zip of fab outputs: their names when there are several, else [].

    Boards are told apart by subfolder (each holding its own copper layers) or by the file-name
    stem (``controller.top.gbr`` / ``driver.top.gbr``) when the files together would put two
    files on one copper layer; a project file's ``[files]`` that maps copper makes one board.
    """
    fab = _open(fab_path, limits)
    try:
        groups = board_groups(fab, _scan(fab, limits), dict(mapping or {}), limits, project_file)
        return list(groups) if len(groups) > 1 else []
    finally:
        fab.close()


def _match_board(board: str, names: list[str]) -> str | None:
    if board in names:
        return board
    low = [n for n in names if n.lower() == board.lower().strip("/")]
    return low[0] if len(low) == 1 else None


def _open(fab_path: str | Path, limits: InputLimits) -> FabSet:
    fab_path = Path(fab_path)
    if fab_path.is_dir():
        fab = FabSet(source=fab_path, root=fab_path)
    elif fab_path.is_file() and fab_path.suffix.lower() == ".zip":
        tmp = tempfile.TemporaryDirectory(prefix="loopcheck-")
        try:
            _extract_zip(fab_path, Path(tmp.name), limits)
        except BaseException:
            tmp.cleanup()
            raise
        fab = FabSet(source=fab_path, root=Path(tmp.name), _tmp=tmp)
    elif not fab_path.exists():
        raise InputError("no such file or folder", path=str(fab_path))
    else:
        raise InputError("expected a folder or a .zip of fab outputs", path=str(fab_path))
    return fab


# --- several boards in one folder ----------------------------------------------------------

# extensions that say nothing about the layer: the layer is then in the rest of the name
_PLAIN_EXT = {".gbr", ".ger", ".gerber", ".pho", ".art", ".gbx", ".grb", ".txt", ".drl", ".cnc", ".xln",
              ".exc", ".ipc", ".d356", ".csv", ".nc"}
_SEP = re.compile(r"[._\-\s]+")


def _trial(fab: FabSet, files: list[_File], mapping: dict[str, str], limits: InputLimits,
           project_file: str | None) -> tuple[list[Path], bool]:
    """Classify ``files`` on their own: (files claiming copper, True when two claim one layer)."""
    scratch = FabSet(source=fab.source, root=fab.root)
    try:
        _classify(scratch, files, mapping, limits, project_file)
    except InputError as exc:
        return scratch.claimed_copper, "more than one file claims the same copper layer" in exc.detail
    return scratch.claimed_copper, False


def _stem(f: _File, k: int) -> str:
    """The file name up to its k-th separator (the extension left out): the board's stem."""
    name = f.path.name
    stem = name[: -len(f.path.suffix)] if f.path.suffix and len(f.path.suffix) < len(name) else name
    cuts = [m.start() for m in _SEP.finditer(stem) if m.start() > 0]
    return stem[: cuts[k - 1]] if len(cuts) >= k else stem


def board_groups(fab: FabSet, files: list[_File], mapping: dict[str, str], limits: InputLimits,
                 project_file: str | None, prefix: str = "") -> dict[str | None, list[_File]]:
    """Board name -> its files; one entry (name None) when the files make one board."""
    if any(role.startswith("copper:") for role in mapping.values()):
        return {None: files}
    claims, clash = _trial(fab, files, mapping, limits, project_file)
    if not clash:
        return {prefix.rstrip("/") or None: files}
    # 1. subfolders that each hold copper layers
    by_dir: dict[str, list[_File]] = {}
    for f in files:
        sub = f.rel[len(prefix):]
        by_dir.setdefault(prefix + sub.split("/", 1)[0] + "/" if "/" in sub else "", []).append(f)
    with_copper = {d: fs for d, fs in by_dir.items() if d and _trial(fab, fs, mapping, limits, project_file)[0]}
    if len(with_copper) > 1:
        out: dict[str | None, list[_File]] = {}
        for d, fs in sorted(with_copper.items()):
            for name, group in board_groups(fab, fs, mapping, limits, project_file, prefix=d).items():
                out[name or d.rstrip("/")] = group
        return out
    # 2. file-name stems: the shortest stem that leaves no two files on one copper layer
    for k in range(1, 6):
        groups: dict[str, list[_File]] = {}
        for f in files:
            groups.setdefault(prefix + _stem(f, k), []).append(f)
        boards = {}
        copper_files: set[Path] = set()
        ok = True
        for name, fs in groups.items():
            claimed, clash = _trial(fab, fs, mapping, limits, project_file)
            if clash:
                ok = False
                break
            if claimed:
                boards[name] = fs
                copper_files.update(claimed)
        if not ok or len(boards) < 2:
            continue
        # the stem must not swallow the layer's own name (``x.top`` / ``x.bottom`` are one board)
        if any(_stem(f, k) == _stem(f, 99) and f.path.suffix.lower() in _PLAIN_EXT and not f.function
               for fs in boards.values() for f in fs if f.path in copper_files):
            break
        return dict(sorted(boards.items()))
    return {prefix.rstrip("/") or None: files}


# --- zip safety ----------------------------------------------------------------------------

def _extract_zip(zip_path: Path, dest: Path, limits: InputLimits) -> None:
    try:
        zf = zipfile.ZipFile(zip_path)
    except (zipfile.BadZipFile, NotImplementedError, ValueError, EOFError) as exc:   # e.g. a version it cannot read
        raise InputError(f"not a valid zip archive ({exc})" if isinstance(exc, NotImplementedError)
                         else "not a valid zip archive", path=str(zip_path)) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path=str(zip_path)) from None
    with zf:
        members = [m for m in zf.infolist() if not m.filename.endswith("/")]   # is_dir() fails on ""
        if not members:
            raise InputError("empty zip archive: no files in it", path=str(zip_path))
        if len(members) > limits.max_zip_members:
            raise InputError(f"refused: {len(members)} files in the archive, more than the limit of "
                             f"{limits.max_zip_members}", path=str(zip_path))
        total = sum(m.file_size for m in members)
        if total > limits.max_zip_uncompressed_bytes:
            raise InputError(f"refused: {total} bytes uncompressed, more than the limit of "
                             f"{limits.max_zip_uncompressed_bytes}", path=str(zip_path))
        packed = sum(m.compress_size for m in members)
        if total > 0 and total / max(packed, 1) > limits.max_zip_ratio:
            raise InputError(f"refused: compression ratio {total / max(packed, 1):.0f}:1 is above the "
                             f"limit of {limits.max_zip_ratio:.0f}:1 (a zip bomb guard)", path=str(zip_path))
        seen: set[str] = set()
        for m in members:
            rel = _safe_member_path(m, zip_path)
            if rel.lower() in seen:
                raise InputError(f"refused: the archive holds {rel!r} twice", path=str(zip_path))
            seen.add(rel.lower())
        written = 0
        for m in members:
            rel = _safe_member_path(m, zip_path)
            target = dest.joinpath(*PurePosixPath(rel).parts)
            target.parent.mkdir(parents=True, exist_ok=True)
            try:
                with zf.open(m) as src, open(target, "wb") as out:
                    while True:
                        chunk = src.read(1 << 20)
                        if not chunk:
                            break
                        written += len(chunk)
                        if written > limits.max_zip_uncompressed_bytes:
                            raise InputError(f"refused: more than {limits.max_zip_uncompressed_bytes} "
                                             f"bytes uncompressed", path=str(zip_path))
                        out.write(chunk)
            except (zipfile.BadZipFile, EOFError, NotImplementedError, RuntimeError, zlib.error,
                    lzma.LZMAError) as exc:   # a damaged deflate or LZMA stream
                raise InputError(f"cannot extract {m.filename!r}: {exc}", path=str(zip_path)) from None
            except OSError as exc:   # zlib errors are OSError subclasses (e.g. a bad CRC)
                raise InputError(f"cannot extract {m.filename!r}: {exc}", path=str(zip_path)) from None


def _safe_member_path(m: zipfile.ZipInfo, zip_path: Path) -> str:
    name = m.filename.replace("\\", "/")
    mode = (m.external_attr >> 16) & 0o170000
    if mode == stat.S_IFLNK:
        raise InputError(f"refused: archive member {m.filename!r} is a link", path=str(zip_path))
    parts = PurePosixPath(name).parts
    if (name.startswith("/") or re.match(r"^[A-Za-z]:", name) or ".." in parts
            or any(p.endswith(":") for p in parts) or "\x00" in name):
        raise InputError(f"refused: archive member {m.filename!r} has a path that leaves the folder",
                         path=str(zip_path))
    rel = "/".join(p for p in parts if p not in ("", "."))
    if not rel:
        raise InputError(f"refused: archive member {m.filename!r} has no file name", path=str(zip_path))
    return rel


# --- content sniffing ----------------------------------------------------------------------

_GERBER_RE = re.compile(r"%\s*FS[LTD]?[AI]?X|%\s*MO(MM|IN)\s*\*|%\s*AD\s*D\d+", re.I)
_EXCELLON_RE = re.compile(r"^\s*M48\b|^\s*;\s*#@!\s*TF\.|^T\d+C\d*\.?\d+", re.M)
_IPC356_RE = re.compile(r"^P\s+(JOB|UNITS|DIM|NNAME|CODE|TITLE|VER|IMAGE)|^C\s+IPC-D-356", re.M)
_IPC356_RECORD_RE = re.compile(r"^(317|327|367)\S", re.M)
_FUNCTION_RE = re.compile(r"TF\.FileFunction,([^*%\n\r]*)")
# extensions that only Gerber or Excellon files carry: such a file whose content is neither is
# corrupt, not "some other file" (``.txt`` is left out: it is as often a note as a drill file)
_GERBER_NAME_RE = re.compile(r"\.(gbr|ger|gerber|pho|art|gtl|gbl|gto|gbo|gts|gbs|gtp|gbp|gko|gml|gpt|gpb"
                             r"|g\d{1,2}|gm\d{1,2}|gp\d{1,2})$", re.I)
_EXCELLON_NAME_RE = re.compile(r"\.(drl|xln|exc|drd)$", re.I)


def sniff(path: Path) -> tuple[str, str | None]:
    """(kind, X2 FileFunction) of a file from its first bytes: gerber, excellon, ipc356, csv, other."""
    try:
        with open(path, "rb") as f:
            head = f.read(SNIFF_BYTES)
    except OSError:
        return "other", None
    if not head or head.count(b"\x00") > 0:
        return "other", None
    text = head.decode("latin-1")
    # mostly printable text, or it is not any of our formats
    printable = sum(1 for ch in text if ch.isprintable() or ch in "\r\n\t")
    if printable < 0.95 * len(text):
        return "other", None
    function = None
    m = _FUNCTION_RE.search(text)
    if m:
        function = m.group(1).strip()
    if _GERBER_RE.search(text):
        return "gerber", function
    if _EXCELLON_RE.search(text) or ("G90" in text and ";LEADER:" in text):
        return "excellon", function
    if _IPC356_RE.search(text) or (len(_IPC356_RECORD_RE.findall(text)) >= 2 and
                                   re.search(r"^999\s*$", text, re.M)):
        return "ipc356", function
    if path.suffix.lower() in (".csv", ".tsv"):
        return "csv", function
    return "other", function


# --- classification ------------------------------------------------------------------------

@dataclass
class _Claim:
    file: _File
    position: tuple          # ("L", n) 1-based | ("top",) | ("bottom",) | ("inner", k)
    how: str


def _scan(fab: FabSet, limits: InputLimits) -> list[_File]:
    """Every file under the fab root (hidden files, system files and the project file left out),
    with its kind and X2 FileFunction sniffed from its first bytes."""
    files: list[_File] = []
    found = []
    for p in fab.root.rglob("*"):
        if p.is_file():
            found.append(p)
            if len(found) > limits.max_zip_members:
                # a folder of fab outputs holds tens of files; this is likely the wrong folder
                raise InputError(f"more than {limits.max_zip_members} files under this folder: point at "
                                 f"the folder (or zip) of one board's fab outputs", path=str(fab.source))
    for path in sorted(found):
        rel = path.relative_to(fab.root).as_posix()
        if any(part.startswith(".") or part == "__MACOSX" for part in path.relative_to(fab.root).parts):
            continue
        if path.name.lower() in _SKIP_NAMES:
            continue
        kind, function = sniff(path)
        files.append(_File(path=path, rel=rel, kind=kind, function=function))
    return files


def _classify(fab: FabSet, files: list[_File], mapping: dict[str, str], limits: InputLimits,
              project_file: str | None) -> None:
    for f in files:
        if f.function:
            fab.attributes[f.path] = f.function
    by_rel = {f.rel: f for f in files}
    by_name: dict[str, list[_File]] = {}
    for f in files:
        by_name.setdefault(f.path.name, []).append(f)

    # 1. the explicit mapping
    mapped: dict[str, tuple[_File, str]] = {}
    for name, role in mapping.items():
        key = name.replace("\\", "/").strip("/")
        f = by_rel.get(key)
        if f is None:
            cands = by_name.get(PurePosixPath(key).name, [])
            if len(cands) == 1 and "/" not in key:
                f = cands[0]
        if f is None:
            raise InputError(f"files: {name!r} is not among the fab outputs in {fab.source} (found: "
                             f"{_list_names(files)})", path=project_file)
        mapped[f.rel] = (f, role)

    copper_claims: list[_Claim] = []
    outline_cands: list[tuple[int, _File, str]] = []   # (preference, file, how); lower is better
    drills: dict[str, tuple[_File, bool | None, str]] = {}
    netlists: list[tuple[_File, str]] = []
    boms: list[_File] = []
    decided: set[str] = set()
    mapped_roles = {role.split(" ")[0].split(":")[0] for _, role in mapped.values()}

    for rel, (f, role) in mapped.items():
        decided.add(rel)
        how = "[files] mapping"
        if role.startswith("copper:"):
            _expect(f, "gerber", role, fab, project_file)
            copper_claims.append(_Claim(f, ("L", int(role.split(":")[1])), how))
        elif role == "outline":
            _expect(f, "gerber", role, fab, project_file)
            outline_cands.append((0, f, how))
        elif role.startswith("drill"):
            if f.kind != "gerber":       # drill data written as Gerber is read too
                _expect(f, "excellon", role, fab, project_file)
            role, _, words = role.partition(" ")
            if words.strip():
                from .drill_format import parse_format_words
                try:
                    fab.drill_formats[f.path] = parse_format_words(words)
                except ValueError as exc:
                    raise InputError(f"files: {f.rel!r}: {exc}", path=project_file) from None
            plated = {"drill:plated": True, "drill:nonplated": False}.get(role)
            if plated is None:
                plated = _drill_plating_from_function(f.function)
            drills[rel] = (f, plated, how)
        elif role == "netlist":
            _expect(f, "ipc356", role, fab, project_file)
            netlists.append((f, how))
        elif role == "bom":
            boms.append(f)
        elif role == "ignore":
            fab.ignored.append((f.path, "ignored by the [files] mapping"))

    # 2. X2 file functions
    for f in files:
        if f.rel in decided or not f.function:
            continue
        func = [p.strip() for p in f.function.split(",")]
        head = func[0].lower()
        how = f"X2 FileFunction {f.function}"
        if f.kind == "gerber" and head == "copper":
            m = re.fullmatch(r"L(\d+)", func[1] if len(func) > 1 else "", re.I)
            if m:
                copper_claims.append(_Claim(f, ("L", int(m.group(1))), how))
            elif len(func) > 1 and func[1].lower().startswith("top"):
                copper_claims.append(_Claim(f, ("top",), how))
            elif len(func) > 1 and func[1].lower().startswith("bot"):
                copper_claims.append(_Claim(f, ("bottom",), how))
            else:
                continue   # no position: let the name rules try
            decided.add(f.rel)
        elif f.kind == "gerber" and head == "profile":
            outline_cands.append((1, f, how))
            decided.add(f.rel)
        elif f.kind in ("excellon", "gerber") and head in ("plated", "nonplated", "mixedplating"):
            # drill data (Excellon, or Gerber, which the drill reader reads as well)
            drills[f.rel] = (f, _drill_plating_from_function(f.function), how)
            decided.add(f.rel)
        elif f.kind == "gerber":
            fab.ignored.append((f.path, f"not copper ({how})"))
            decided.add(f.rel)

    # 2b. short extensions and two-letter names (readers.layer_names), before the common rules
    from .layer_names import copper_position
    for f in files:
        if f.rel in decided or f.kind != "gerber":
            continue
        pos = copper_position(f.path.name)
        if pos is not None and pos[0] != "function":
            copper_claims.append(_Claim(f, pos, "layer number in the file name" if pos[0] == "L"
                                        else f"file name ({pos[0]} by its extension or layer word)"))
            decided.add(f.rel)

    # 3. gerbonara's layer-name rules, on the files the content says could hold a role
    rest = [f for f in files if f.rel not in decided and f.kind in ("gerber", "excellon", "ipc356")]
    for key, group in _gerbonara_roles(rest).items():
        for f in group:
            how = f"file name ({key!r} by gerbonara's layer-name rules)"
            role = _role_of_gerbonara_key(key)
            if role is None:
                continue
            if f.kind == "gerber" and role[0] == "copper" and re.search(r"silk|mask|paste|legend", f.path.name, re.I):
                fab.ignored.append((f.path, "not copper (silk, mask or paste by its name)"))
            elif f.kind == "gerber" and role[0] == "copper":
                copper_claims.append(_Claim(f, role[1], how))
            elif f.kind == "gerber" and role[0] == "outline":
                pref = 2.0      # .gko, edge cuts, outline, profile ...
                if (m := re.match(r".*\.gm(\d+)$", f.path.name, re.I)):
                    pref = 3 + int(m.group(1)) / 1000.0   # lowest-numbered mechanical layer first
                outline_cands.append((pref, f, how))
            elif f.kind in ("excellon", "gerber") and role[0] == "drill":
                drills[f.rel] = (f, role[1], how)
            elif f.kind == "ipc356" and role[0] == "netlist":
                netlists.append((f, how))
            elif f.kind == "gerber" and role[0] == "other":
                fab.ignored.append((f.path, f"not copper ({how})"))
            else:
                continue
            decided.add(f.rel)

    # 4. numbers in file names (layer 1..N)
    for f in files:
        if f.rel in decided or f.kind != "gerber":
            continue
        if re.search(r"silk|mask|paste|legend|drill|outline|fab|assy|assembly", f.path.name, re.I):
            continue
        m = re.search(r"(?:^|[^a-z0-9])(?:inner|inr|in)[ _-]?(\d{1,2})(?![0-9])", f.path.stem, re.I)
        if m:
            copper_claims.append(_Claim(f, ("inner", int(m.group(1))), "inner-layer number in the file name"))
            decided.add(f.rel)
            continue
        m = re.search(r"(?:^|[^a-z0-9])(?:layer|lay|lyr|copper|cu|sig(?:nal)?|l)[ _-]?(\d{1,2})(?![0-9])",
                      f.path.stem, re.I)
        if m:
            copper_claims.append(_Claim(f, ("L", int(m.group(1))), "layer number in the file name"))
            decided.add(f.rel)

    # 5. inner layers named by their function (GND2, PWR ...): placed between top and bottom
    for f in files:
        if f.rel in decided or f.kind != "gerber":
            continue
        pos = copper_position(f.path.name)
        if pos is not None and pos[0] == "function":
            copper_claims.append(_Claim(f, pos, "inner layer named by its function"))
            decided.add(f.rel)

    # the rest by content alone
    for f in files:
        if f.rel in decided:
            continue
        if f.path.suffix.lower() in (".ipc", ".d356") and f.kind != "ipc356":
            raise InputError("named like an IPC-D-356 netlist but its content is not one (binary or "
                             "unknown text); replace it, or map it as \"ignore\" in the project file's [files]",
                             path=fab.error_name(f.path))
        if f.kind == "other" and (_GERBER_NAME_RE.search(f.path.name) or _EXCELLON_NAME_RE.search(f.path.name)):
            what = "a Gerber" if _GERBER_NAME_RE.search(f.path.name) else "an Excellon drill"
            raise InputError(f"looks like {what} file by its name but is not readable as one (empty, binary "
                             "or unknown text); replace it, or map it as \"ignore\" in the project file's [files]",
                             path=fab.error_name(f.path))
        if f.kind == "excellon":
            drills[f.rel] = (f, None, "Excellon content")
        elif f.kind == "ipc356":
            netlists.append((f, "IPC-D-356 content"))
        elif f.kind == "csv":
            boms.append(f)
        elif f.kind == "gerber":
            fab.ignored.append((f.path, "a Gerber file whose layer could not be told (map it in [files])"))
        else:
            fab.ignored.append((f.path, "not a Gerber, Excellon or IPC-D-356 file"))
        decided.add(f.rel)

    # the mapping overrides all: a role it names is filled by the mapped files only
    def set_aside(role: str, items: list, file_of) -> list:
        if role not in mapped_roles:
            return items
        keep = []
        for item in items:
            f = file_of(item)
            if f.rel in mapped:
                keep.append(item)
            else:
                fab.ignored.append((f.path, f"{role}: set aside, the [files] mapping names the {role}"))
        return keep

    copper_claims = set_aside("copper", copper_claims, lambda c: c.file)
    outline_cands = set_aside("outline", outline_cands, lambda c: c[1])
    netlists = set_aside("netlist", netlists, lambda c: c[0])
    drill_items = set_aside("drill", list(drills.values()), lambda c: c[0])
    boms = set_aside("bom", boms, lambda f: f)

    fab.claimed_copper = [c.file.path for c in copper_claims]
    _resolve_copper(fab, copper_claims, project_file)

    if outline_cands:
        outline_cands.sort(key=lambda c: (c[0], c[1].rel))
        best = [c for c in outline_cands if c[0] == outline_cands[0][0]]
        if len(best) > 1:
            raise InputError("two files could be the board outline: "
                             + ", ".join(f"{fab.display(c[1].path)} ({c[2]})" for c in best)
                             + "; name one in the project file's [files] as \"outline\" "
                               "and the other as \"ignore\"", path=str(fab.source))
        _, f, how = outline_cands[0]
        fab.outline = f.path
        fab.how[f.path] = how
        for _, other, how2 in outline_cands[1:]:
            fab.ignored.append((other.path, f"a further outline candidate ({how2}); "
                                            f"{fab.display(f.path)} used"))

    for f, plated, how in drill_items:
        fab.drills.append((f.path, plated))
        fab.how[f.path] = how

    if len(netlists) > 1:
        raise InputError("more than one IPC-D-356 netlist: "
                         + ", ".join(f"{fab.display(f.path)}" for f, _ in netlists)
                         + "; name one in [files] as \"netlist\" and the others as \"ignore\"",
                         path=str(fab.source))
    if netlists:
        fab.netlist = netlists[0][0].path
        fab.how[fab.netlist] = netlists[0][1]
    else:
        fab.notes.append("no IPC-D-356 netlist among the fab outputs: connectivity not checked")

    if boms:
        fab.bom = boms[0].path
        for f in boms[1:]:
            fab.ignored.append((f.path, f"a further CSV file; {fab.display(fab.bom)} recorded as the BOM"))


def _expect(f: _File, kind: str, role: str, fab: FabSet, project_file: str | None) -> None:
    if f.kind != kind:
        what = {"gerber": "a Gerber file", "excellon": "an Excellon drill file",
                "ipc356": "an IPC-D-356 netlist"}[kind]
        raise InputError(f"files: {f.rel!r} is mapped as {role} but its content is not {what}",
                         path=project_file)


def _drill_plating_from_function(function: str | None) -> bool | None:
    if not function:
        return None
    head = function.split(",")[0].strip().lower()
    if head == "plated" or "NPTH" not in function and function.endswith("PTH"):
        return True
    if head == "nonplated" or function.endswith("NPTH"):
        return False
    return None


def _list_names(files: list[_File], limit: int = 12) -> str:
    names = [f.rel for f in files]
    more = f", ... ({len(names) - limit} more)" if len(names) > limit else ""
    return ", ".join(names[:limit]) + more


def _gerbonara_roles(files: list[_File]) -> dict[str, list[_File]]:
    """gerbonara's layer-name rules (the best matching program's conventions), then its guesser."""
    from gerbonara import layer_rules, layers as glayers

    if not files:
        return {}
    paths = [f.path for f in files]
    by_path = {f.path: f for f in files}
    best: dict[str, list[Path]] = {}
    best_count = -1
    for generator, rules in layer_rules.MATCH_RULES.items():
        rules = dict(rules)      # apply_rules pops from the dict it is given
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                certain, cand = glayers.apply_rules(paths, rules)
        except (OSError, UnicodeDecodeError, ValueError):
            # a header rule could not read a file as text: judge by the names alone
            rules = dict(layer_rules.MATCH_RULES[generator])
            rules.pop("header regex", None)
            certain, cand = glayers.apply_rules(paths, rules)
        count = sum(len(v) for k, v in cand.items() if k is not None)
        if certain:
            best, best_count = cand, count
            break
        if count > best_count:
            best, best_count = cand, count
    out: dict[str, list[_File]] = {}
    matched: set[Path] = set()
    for key, group in best.items():
        if key is None:
            continue
        if key == "autoguess":
            continue
        out[key] = [by_path[p] for p in group]
        matched.update(group)
    # gerbonara's guesser for what no rule matched (and for the rules' "autoguess" bucket)
    rest = [p for p in paths if p not in matched]
    if rest:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                # gerbonara's per-name guesser (without its re-assignment of inner layers to
                # top/bottom, which guesses where a layer number in the name says more)
                prefix = glayers._common_prefix([p.name for p in rest])
                guessed = {}
                for p in rest:
                    name = p.name[len(prefix):] if prefix and p.name.startswith(prefix) else p.name
                    key = glayers._layername_autoguesser(name)
                    if key != "unknown unknown":
                        guessed.setdefault(key, []).append(p)
        except Exception:       # the guesser is a heuristic; failing it just leaves files unmapped
            guessed = {}
        for key, group in guessed.items():
            if re.fullmatch(r"inner_\d+ copper", key):
                continue   # the guesser's number may be a layer or an inner-layer number: step 4 decides
            if key.startswith("drill"):
                # the guesser finds "rou(te)" inside words such as "group": a drill needs the word
                group = [p for p in group if re.search(r"(?<![a-z])(drill|drl|routs?|route|rout|nc)(?![a-z])|"
                                                       r"pth|plated|holes?", p.stem, re.I)]
                if not group:
                    continue
            out.setdefault(f"{key}", []).extend(by_path[p] for p in group)
    return out


def _role_of_gerbonara_key(key: str) -> tuple | None:
    """gerbonara layer key -> ("copper", position) | ("outline",) | ("drill", plated) | ("netlist",) | ("other",)."""
    k = key.lower()
    if k == "top copper":
        return ("copper", ("top",))
    if k == "bottom copper":
        return ("copper", ("bottom",))
    m = re.fullmatch(r"inner_0*(\d+) copper", k)
    if m:
        return ("copper", ("inner", int(m.group(1))))
    if k == "mechanical outline":
        return ("outline",)
    if k.startswith("drill"):
        return ("drill", {"drill plated": True, "drill nonplated": False}.get(k))
    if k.endswith("netlist"):
        return ("netlist",)
    if re.search(r"mask|silk|paste|unknown", k) and "copper" not in k:
        return ("other",)
    return None


def _exact(c: _Claim) -> bool:
    """A claim of an exact layer number (X2 attribute or the [files] mapping), not a name's."""
    return c.how.startswith(("X2", "[files]"))


def _resolve_copper(fab: FabSet, claims: list[_Claim], project_file: str | None) -> None:
    functional = [c for c in claims if c.position[0] == "function"]
    if functional and not any(c.position == ("top",) for c in claims) or functional and \
            not any(c.position == ("bottom",) for c in claims):
        # named by function but no top and bottom to put them between: not taken as copper
        for c in functional:
            fab.ignored.append((c.file.path, "a Gerber file whose layer could not be told (map it in [files])"))
        claims = [c for c in claims if c.position[0] != "function"]
    if not claims:
        raise InputError("no copper layer found among the fab outputs (found: "
                         + (", ".join(fab.display(p) for p, _ in fab.ignored[:12]) or "no files")
                         + "); map the copper files in the project file's [files] as copper:1 .. copper:N",
                         path=str(fab.source))
    if not any(_exact(c) for c in claims) and _resolve_by_names(fab, claims):
        return
    # exact layer numbers decide; a layer named only by function has no place among them
    for c in [c for c in claims if c.position[0] == "function"]:
        fab.ignored.append((c.file.path, "a Gerber file whose layer could not be told (map it in [files])"))
    claims = [c for c in claims if c.position[0] != "function"]
    bottoms = [c for c in claims if c.position == ("bottom",)]
    fixed: list[tuple[int, _Claim]] = []
    for c in claims:
        if c.position[0] == "L":
            fixed.append((c.position[1], c))
        elif c.position == ("top",):
            fixed.append((1, c))
        elif c.position[0] == "inner":
            fixed.append((c.position[1] + 1, c))
    n = len(claims)
    if bottoms:
        n_bottom = max([n] + [p + 1 for p, _ in fixed])
        fixed.extend((n_bottom, c) for c in bottoms)
    by_pos: dict[int, list[_Claim]] = {}
    for pos, c in fixed:
        by_pos.setdefault(pos, []).append(c)
    clashes = {pos: cs for pos, cs in by_pos.items() if len(cs) > 1}
    if len(bottoms) > 1:       # label the bottom clash as such, not by a number it only inherits
        clashes = {p: cs for p, cs in clashes.items() if cs is not by_pos.get(n_bottom)}
        clashes["bottom"] = bottoms
    hint = ("; say which file is which in the project file's [files], e.g. \"NAME.gbr\" = \"copper:1\" "
            "(the copper stack is then exactly the mapped files)")
    if clashes:
        parts = []
        for pos, cs in sorted(clashes.items(), key=lambda kv: (isinstance(kv[0], str), str(kv[0]))):
            label = "the bottom copper layer" if pos == "bottom" else f"copper layer {pos}"
            parts.append(f"{label}: " + ", ".join(f"{fab.display(c.file.path)} ({c.how})" for c in cs))
        raise InputError("more than one file claims the same copper layer: " + "; ".join(parts) + hint,
                         path=str(fab.source))
    positions = sorted(by_pos)
    if positions != list(range(1, len(positions) + 1)):
        missing = [p for p in range(1, positions[-1] + 1) if p not in by_pos]
        found = ", ".join(f"L{p} {fab.display(by_pos[p][0].file.path)}" for p in positions)
        raise InputError(f"copper layers found at {found}, none at "
                         + ", ".join(f"L{p}" for p in missing) + hint, path=str(fab.source))
    for pos in positions:
        c = by_pos[pos][0]
        fab.copper.append((c.file.path, pos - 1))
        fab.how[c.file.path] = c.how


def _resolve_by_names(fab: FabSet, claims: list[_Claim]) -> bool:
    """A stack from names alone: top first, bottom last, the numbered layers between in the
    order of their numbers (``L02`` .. ``L11``, ``LAYER_1`` .. ``LAYER_2``, ``.ly2`` / ``.ly15``:
    a name's number orders, it need not be the position), then inner layers named by function
    in the most likely order (stated as an assumption with the [files] lines that fix it).
    Returns False (the exact-number rules then decide) when names give no top to start from."""
    tops = [c for c in claims if c.position == ("top",)]
    bottoms = [c for c in claims if c.position == ("bottom",)]
    numbered = [c for c in claims if c.position[0] in ("L", "inner")]
    functional = [c for c in claims if c.position[0] == "function"]
    if len(tops) > 1 or len(bottoms) > 1:
        return False                      # the clash error names them
    if not tops:
        return False                      # L1 .. Ln by number (or a gap the exact rules report)
    numbers = [c.position[1] for c in numbered]
    if len(set(numbers)) != len(numbers):
        return False                      # two files with one number: the clash error names them
    numbered.sort(key=lambda c: c.position[1])
    functional.sort(key=lambda c: (c.position[1] if c.position[1] is not None else 99, c.position[2],
                                   c.file.rel.lower()))
    stack = tops + numbered + functional + bottoms
    for pos, c in enumerate(stack, start=1):
        fab.copper.append((c.file.path, pos - 1))
        fab.how[c.file.path] = c.how
    renumbered = [c for pos, c in enumerate(stack, start=1) if c in numbered and
                  pos != (c.position[1] if c.position[0] == "L" else c.position[1] + 1)]
    lines = ", ".join(f'"{fab.relname(c.file.path)}" = "copper:{pos}"' for pos, c in enumerate(stack, start=1))
    if renumbered:
        fab.notes.append("copper layer order from the numbers in the file names (a name's number "
                         "orders the inner layers, it is not taken as the position): "
                         + ", ".join(f"{fab.display(c.file.path)} = L{stack.index(c) + 1}" for c in numbered))
    if len(functional) > 1 or (functional and numbered):
        fab.inner_order_guessed = [c.file.path for c in numbered + functional]
        fab.notes.append("inner copper layers named by function, their order not in the names or X2 "
                         "attributes: taken as " + ", ".join(f"{fab.display(c.file.path)} = L{stack.index(c) + 1}"
                                                             for c in functional)
                         + " (numbers in the names first, then ground before power before signal: "
                           "the most likely order); if wrong, set the order in loopcheck.toml: [files] "
                         + lines)
    return True
