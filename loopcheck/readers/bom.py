"""A bill of materials or placement (pick-and-place) CSV: reference designator -> part value,
footprint, and (placement files) side and rotation.

Accepted header spellings (case and spaces ignored): reference ``Ref``, ``Reference``,
``Designator``, ``RefDes``, ``Ref Des``, ``Part``; value ``Value``, ``Val``, ``Comment``;
footprint ``Footprint``, ``Package``, ``Pattern``, ``Case``; placement ``Mid X``/``PosX``/``X``,
``Mid Y``/``PosY``/``Y``, ``Rotation``/``Rot``, ``Layer``/``Side``.
Delimiter comma, semicolon or tab (sniffed). A BOM row may group references
("C1, C2, C5", "C1 C2" or a range "C1-C4"); each gets the row's value.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError
from ..limits import DEFAULT_LIMITS, InputLimits

REF_HEADERS = {"ref", "reference", "references", "designator", "designators", "refdes", "refdesignator",
               "part", "parts", "reference designator", "reference designators"}
VALUE_HEADERS = {"value", "val", "comment", "values"}
FOOTPRINT_HEADERS = {"footprint", "package", "pattern", "case", "case package", "land pattern", "footprint name"}
SIDE_HEADERS = {"layer", "side", "tb", "mount side"}
ROTATION_HEADERS = {"rotation", "rot", "angle"}


def _norm(header: str) -> str:
    return re.sub(r"[\s_\-.]+", " ", header.strip().lower()).strip().replace("ref des", "refdes")


def _expand(ref: str) -> list[str]:
    """``C1-C4`` -> C1, C2, C3, C4 (a range written in one cell); anything else as it is."""
    if not ref:
        return []
    m = re.fullmatch(r"([A-Za-z]+)(\d+)-\1?(\d+)", ref)
    if m and int(m.group(2)) < int(m.group(3)) <= int(m.group(2)) + 1000:
        return [f"{m.group(1)}{i}" for i in range(int(m.group(2)), int(m.group(3)) + 1)]
    return [ref]


def read_bom(path: str | Path, limits: InputLimits = DEFAULT_LIMITS) -> dict[str, str]:
    """Read a BOM or placement CSV -> {ref: value}. Raises InputError on a malformed file."""
    return read_bom_parts(path, limits).values


@dataclass
class BomParts:
    """What one BOM or placement CSV says about each part (refs as written)."""

    values: dict[str, str] = field(default_factory=dict)
    footprints: dict[str, str] = field(default_factory=dict)   # "1206", "L_0805_2012Metric" ...
    sides: dict[str, str] = field(default_factory=dict)        # "top" | "bottom"
    rotations_deg: dict[str, float] = field(default_factory=dict)


def _text(path: Path, limits: InputLimits) -> list[str]:
    size = path.stat().st_size
    if size > limits.max_file_bytes:
        raise InputError(f"file of {size} bytes is over the limit of {limits.max_file_bytes}", path=str(path))
    raw = path.read_bytes()
    if b"\x00" in raw[:4096]:
        raise InputError("not a text CSV file (binary content)", path=str(path))
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    return text.splitlines()


def _header(lines: list[str], need_value: bool):
    """(index, dialect, normalised cells) of the first line with a reference column (and a value
    column when ``need_value``), within the first 50 lines; None when there is none."""
    for i, line in enumerate(lines[:50]):
        if not line.strip():
            continue
        try:
            d = csv.Sniffer().sniff(line, delimiters=",;\t")
        except csv.Error:
            d = csv.excel
        cells = [_norm(c) for c in next(csv.reader([line], d))]
        has_ref = any(c in REF_HEADERS or c.replace(" ", "") in REF_HEADERS for c in cells)
        has_val = any(c in VALUE_HEADERS for c in cells)
        has_place = any(c in SIDE_HEADERS or c in ROTATION_HEADERS for c in cells)
        if has_ref and (has_val or (not need_value and has_place)):
            return i, d, cells
    return None


def _col(header: list[str], names: set[str]) -> int | None:
    return next((i for i, c in enumerate(header) if c in names or c.replace(" ", "") in names), None)


def read_bom_parts(path: str | Path, limits: InputLimits = DEFAULT_LIMITS,
                   need_value: bool = True) -> BomParts:
    """Read a BOM (``need_value``) or a placement CSV -> :class:`BomParts`. Raises InputError on a
    malformed file. A placement file needs a side or rotation column instead of a value column."""
    path = Path(path)
    lines = _text(path, limits)
    found = _header(lines, need_value)
    if found is None:
        if need_value:
            raise InputError("no header row with a reference column (Ref/Reference/Designator/RefDes) and a value "
                             "column (Value/Val/Comment)", path=str(path))
        raise InputError("no header row with a reference column and a side or rotation column", path=str(path))
    header_index, dialect, _ = found
    reader = csv.reader(io.StringIO("\n".join(lines[header_index:])), dialect)
    header = [_norm(c) for c in next(reader)]
    ref_col = _col(header, REF_HEADERS)
    val_col = _col(header, VALUE_HEADERS)
    fp_col = _col(header, FOOTPRINT_HEADERS)
    side_col = _col(header, SIDE_HEADERS)
    rot_col = _col(header, ROTATION_HEADERS)
    out = BomParts()
    needed = max(c for c in (ref_col, val_col) if c is not None)
    for n, row in enumerate(reader, start=header_index + 2):
        if not row or all(not c.strip() for c in row):
            continue
        if len(row) <= needed:
            raise InputError(f"row has {len(row)} columns, the header {len(header)}", path=str(path), line=n)
        refs = []
        for r in re.split(r"[\s,;]+", row[ref_col].strip()):
            refs += _expand(r)
        for ref in refs:
            if not re.fullmatch(r"[A-Za-z][A-Za-z0-9_+\-]*", ref):
                raise InputError(f"reference {ref!r} is not a reference designator", path=str(path), line=n)
            if val_col is not None:
                value = row[val_col].strip()
                if ref in out.values and out.values[ref] != value:
                    raise InputError(f"{ref} listed twice with different values ({out.values[ref]!r}, {value!r})",
                                     path=str(path), line=n)
                out.values[ref] = value
            if fp_col is not None and fp_col < len(row) and row[fp_col].strip() not in ("", "-"):
                out.footprints[ref] = row[fp_col].strip()
            if side_col is not None and side_col < len(row):
                side = row[side_col].strip().lower()
                if side in ("top", "t", "f.cu", "front", "bottom", "b", "b.cu", "back", "bot"):
                    out.sides[ref] = "top" if side in ("top", "t", "f.cu", "front") else "bottom"
            if rot_col is not None and rot_col < len(row):
                try:
                    out.rotations_deg[ref] = float(row[rot_col])
                except ValueError:
                    pass
    return out
