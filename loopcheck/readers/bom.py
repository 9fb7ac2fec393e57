"""A bill of materials or placement (pick-and-place) CSV: reference designator -> part value.

Accepted header spellings (case and spaces ignored): reference ``Ref``, ``Reference``,
``Designator``, ``RefDes``, ``Ref Des``, ``Part``; value ``Value``, ``Val``, ``Comment``.
Delimiter comma, semicolon or tab (sniffed). A BOM row may group references
("C1, C2, C5", "C1 C2" or a range "C1-C4"); each gets the row's value.
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

from ..errors import InputError
from ..limits import DEFAULT_LIMITS, InputLimits

REF_HEADERS = {"ref", "reference", "references", "designator", "designators", "refdes", "refdesignator",
               "part", "parts", "reference designator", "reference designators"}
VALUE_HEADERS = {"value", "val", "comment", "values"}


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
    path = Path(path)
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
    lines = text.splitlines()
    # skip leading comment/title lines until a header with both columns appears
    header_index = None
    dialect = None
    for i, line in enumerate(lines[:50]):
        if not line.strip():
            continue
        try:
            d = csv.Sniffer().sniff(line, delimiters=",;\t")
        except csv.Error:
            d = csv.excel
        cells = [_norm(c) for c in next(csv.reader([line], d))]
        if any(c in REF_HEADERS or c.replace(" ", "") in REF_HEADERS for c in cells) and any(
                c in VALUE_HEADERS for c in cells):
            header_index, dialect = i, d
            break
    if header_index is None:
        raise InputError("no header row with a reference column (Ref/Reference/Designator/RefDes) and a value "
                         "column (Value/Val/Comment)", path=str(path))
    reader = csv.reader(io.StringIO("\n".join(lines[header_index:])), dialect)
    header = [_norm(c) for c in next(reader)]
    ref_col = next(i for i, c in enumerate(header) if c in REF_HEADERS or c.replace(" ", "") in REF_HEADERS)
    val_col = next(i for i, c in enumerate(header) if c in VALUE_HEADERS)
    out: dict[str, str] = {}
    for n, row in enumerate(reader, start=header_index + 2):
        if not row or all(not c.strip() for c in row):
            continue
        if len(row) <= max(ref_col, val_col):
            raise InputError(f"row has {len(row)} columns, the header {len(header)}", path=str(path), line=n)
        refs = []
        for r in re.split(r"[\s,;]+", row[ref_col].strip()):
            refs += _expand(r)
        value = row[val_col].strip()
        for ref in refs:
            if not re.fullmatch(r"[A-Za-z][A-Za-z0-9_+\-]*", ref):
                raise InputError(f"reference {ref!r} is not a reference designator", path=str(path), line=n)
            if ref in out and out[ref] != value:
                raise InputError(f"{ref} listed twice with different values ({out[ref]!r}, {value!r})",
                                 path=str(path), line=n)
            out[ref] = value
    return out
