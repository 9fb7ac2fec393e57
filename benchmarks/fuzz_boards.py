"""Mutation fuzzing of whole boards through the command line.

Each case copies one board (a demo board from ``boards/``, a real board from
``../shared/realboards`` when present, or a board written by ``loopcheck.synth``) into a fresh
temporary folder, damages it in one or a few ways, runs

    loopcheck check DIR --format json --output OUT        (most cases)
    loopcheck inspect DIR                                   (some cases)
    loopcheck check DIR.zip --format json --output OUT     (the zip form)

with a time limit, and judges the run by the bad-input contract:

- no ``Traceback`` on stderr; the process is not killed by a signal;
- exit code 0, 1 or 2, or 3 only with an internal-error message that names the module (an
  internal error is accepted by the contract but is a bug all the same: the summary lists them
  by class, from the traceback file the message names, and they are kept like failures);
- at most 2 GB of resident memory at its peak (the case's process, or the largest of its reader
  processes);
- done within 60 s of CPU time (the case's process group, its reader pool included; a
  wall-clock limit of ten times that stops it anyway): on a machine shared with other work, wall
  time measures the load, not the case;
- nothing written, changed or removed beside the inputs (every file's kind, size and SHA-256,
  and every link's target, are compared before and after; the working folder stays empty);
- no temporary files left behind (TMPDIR is a folder of the case, empty afterwards);
- on exit 2: no report file, and stderr is one line ``loopcheck: ...`` (one per refused board
  when the folder holds several boards);
- on exit 0 or 1 of ``check``: the report is there and is JSON.

A case is reproducible from the seed and its number alone: ``--seed S --only N``.

Usage:
    python3 benchmarks/fuzz_boards.py --seed 1 --count 10000          # on demand
    python3 benchmarks/fuzz_boards.py --seed 1 --count 200 --jobs 2   # what the test suite runs
    python3 benchmarks/fuzz_boards.py --seed 1 --start 2650 --count 7350   # cases 2650-9999

Cases run in forked children of a process that has already imported loopcheck (a case costs
its own work only, not the imports); ``--subprocess-every N`` runs every Nth case as a real
``python3 -m loopcheck`` instead, so that the command exactly as a user types it is exercised too.
Failing cases are kept, inputs and all, in a folder the summary names (``--keep DIR``).
"""

from __future__ import annotations

import argparse
import dataclasses
import hashlib
import io
import json
import os
import random
import re
import shutil
import signal
import stat
import sys
import tempfile
import time
import zipfile
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")   # one core per case; the cases run side by side
os.environ.setdefault("OMP_NUM_THREADS", "1")

REPO = Path(__file__).resolve().parents[1]
REALBOARDS = REPO.parent / "shared" / "realboards"
TIMEOUT_S = 60.0
MEMORY_LIMIT_BYTES = 6 * 1024 ** 3      # address space of one case: a runaway case fails alone
# peak resident memory of a case (its process and the largest of its reader processes) past
# which it fails: the bound issue 11 sets. Under the address-space limit a runaway case used to
# end in the geometry library's bad_alloc, exit 2, and pass
MEMORY_FAIL_MB = 2048
# exit code 3 is accepted only with loopcheck's internal-error message, which names where it
# happened: "loopcheck: the check could not be completed: 1 internal error ..." and then one line
# per error, "  hot loop measurement of stage1: IndexError: ... (report id 1a2b3c4d5e)"
INTERNAL_ERROR = re.compile(r"internal error", re.I)
NAMES_MODULE = re.compile(r"^\s+\S[^:\n]*: \w+.*\(report id \w+\)", re.M)
# its traceback goes to a file in the temporary folder, by design (not a leftover)
CRASH_REPORT = re.compile(r"^loopcheck-\w+-.*\.txt$")


# ----------------------------------------------------------------------------------------------
# boards to start from


@dataclass(frozen=True)
class Source:
    name: str            # "demo:led-driver-tidy", "real:bitaxe-ultra-acs", "synth:buck-mm"
    folder: Path
    real: bool = False   # a real board: slower to check; mostly inspected


def demo_sources() -> list[Source]:
    return [Source(f"demo:{p.name}", p) for p in sorted((REPO / "boards").iterdir())
            if p.is_dir() and any(p.glob("*.gbr"))]


def real_sources() -> list[Source]:
    if not REALBOARDS.is_dir():
        return []
    return [Source(f"real:{p.name}", p, real=True) for p in sorted(REALBOARDS.iterdir())
            if p.is_dir() and not p.name.startswith(".")]


def synth_sources(workdir: Path) -> list[Source]:
    """Small boards written by loopcheck.synth (its buck test board), in four writer habits."""
    sys.path.insert(0, str(REPO / "tests"))
    try:
        from synth_fixtures import write_buck
    finally:
        sys.path.pop(0)
    variants = {
        "buck-mm": dict(),
        "buck-inch": dict(gerber_units="inch", netlist_units="inch"),
        "buck-no-netlist": dict(netlist=False),
        "buck-conductors": dict(netlist_conductors=True),
    }
    out = []
    for name, options in variants.items():
        folder = workdir / "synth" / name
        write_buck(folder, **options)
        out.append(Source(f"synth:{name}", folder))
    return out


# ----------------------------------------------------------------------------------------------
# mutations: each takes the case's random generator and the board folder, damages it in place
# and returns a one-line description of what it did


def role_of(path: Path) -> str:
    """A file's role by a look at its name and head: gerber, drill, netlist, project, zip, other."""
    if path.name == "loopcheck.toml":
        return "project"
    if path.suffix.lower() == ".zip":
        return "zip"
    try:
        head = path.read_bytes()[:4096].decode("latin-1")
    except OSError:
        return "other"
    if head.startswith("M48") or "\nM48" in head[:200] or path.suffix.lower() in (".drl", ".xln"):
        return "drill"
    if path.suffix.lower() in (".ipc", ".356") or re.search(r"^P  (JOB|UNITS|CODE)", head, re.M):
        return "netlist"
    if "%FS" in head or "%MO" in head or "G04" in head:
        if re.search(r"Edge|profile|Profile|\.gm1$|\.gko$", path.name) or "Profile" in head:
            return "profile"
        if re.search(r"Cu|copper|\.gtl$|\.gbl$|\.g\d+$", path.name) or "Copper" in head:
            return "copper"
        return "gerber-other"
    return "other"


TARGET_WEIGHT = {"copper": 6, "netlist": 4, "drill": 3, "profile": 2, "project": 1,
                 "gerber-other": 0.3, "other": 0.2, "zip": 1}


def files_of(folder: Path) -> list[Path]:
    return sorted(p for p in folder.rglob("*") if p.is_file() and not p.is_symlink())


def pick_file(rng: random.Random, folder: Path, roles: tuple[str, ...] | None = None) -> Path | None:
    files = [p for p in files_of(folder) if roles is None or role_of(p) in roles]
    if not files:
        return None
    weights = [TARGET_WEIGHT.get(role_of(p), 0.2) for p in files]
    return rng.choices(files, weights)[0]


def rel(path: Path, folder: Path) -> str:
    return str(path.relative_to(folder))


def _lines(path: Path) -> list[bytes]:
    return path.read_bytes().splitlines(keepends=True)


def m_byte_flip(rng, folder):
    f = pick_file(rng, folder)
    data = bytearray(f.read_bytes())
    if not data:
        return f"{rel(f, folder)}: empty, untouched"
    n = rng.choice([1, 1, 2, 5, 20, 200])
    for _ in range(n):
        k = rng.randrange(len(data))
        data[k] = rng.choice([data[k] ^ (1 << rng.randrange(8)), rng.randrange(256),
                              ord(rng.choice("*%XYDGMT0123456789-+.,\n"))])
    f.write_bytes(bytes(data))
    return f"{rel(f, folder)}: {n} bytes changed"


def m_truncate(rng, folder):
    f = pick_file(rng, folder)
    data = f.read_bytes()
    k = rng.choice([0, rng.randrange(len(data) + 1), len(data) - rng.randrange(1, 40)])
    k = max(0, min(len(data), k))
    f.write_bytes(data[:k])
    return f"{rel(f, folder)}: cut to {k} of {len(data)} bytes"


def m_delete_lines(rng, folder):
    f = pick_file(rng, folder)
    lines = _lines(f)
    if not lines:
        return f"{rel(f, folder)}: empty, untouched"
    n = min(len(lines), rng.choice([1, 1, 3, 10, len(lines) // 2 or 1]))
    start = rng.randrange(len(lines))
    if rng.random() < 0.5:
        drop = set(range(start, min(len(lines), start + n)))
    else:
        drop = set(rng.sample(range(len(lines)), n))
    f.write_bytes(b"".join(line for i, line in enumerate(lines) if i not in drop))
    return f"{rel(f, folder)}: {len(drop)} lines deleted from line {min(drop) + 1}"


def m_repeat_lines(rng, folder):
    f = pick_file(rng, folder)
    lines = _lines(f)
    if not lines:
        return f"{rel(f, folder)}: empty, untouched"
    k = rng.randrange(len(lines))
    span = rng.choice([1, 1, 2, 5])
    times = rng.choice([1, 2, 10, 1000, 20000])
    block = lines[k:k + span]
    f.write_bytes(b"".join(lines[:k + span] + block * times + lines[k + span:]))
    return f"{rel(f, folder)}: lines {k + 1}..{k + len(block)} repeated {times} more times"


_NUMBER = re.compile(rb"(?<![A-Za-z_])[-+]?\d+(?:\.\d+)?")
HUGE = [b"99999999999", b"9" * 40, b"1e308", b"340282366920938463463374607431768211457",
        b"-0", b"0", b"0.000000001", b"NaN", b"inf", b"9" * 400, b"1E999"]


def _replace_numbers(rng, folder, make) -> str:
    f = pick_file(rng, folder)
    data = f.read_bytes()
    spans = [m.span() for m in _NUMBER.finditer(data)]
    if not spans:
        return f"{rel(f, folder)}: no number, untouched"
    n = rng.choice([1, 1, 3, 30])
    chosen = sorted(rng.sample(spans, min(n, len(spans))), reverse=True)
    for a, b in chosen:
        data = data[:a] + make(rng, data[a:b]) + data[b:]
    f.write_bytes(data)
    return f"{rel(f, folder)}: {len(chosen)} numbers replaced"


def m_huge_number(rng, folder):
    return _replace_numbers(rng, folder, lambda r, old: r.choice(HUGE))


def m_negative_number(rng, folder):
    def neg(r, old):
        s = old.lstrip(b"+-")
        return r.choice([b"-" + s, b"-" + s + b"0000", b"-1", b"-" + b"9" * 12])
    return _replace_numbers(rng, folder, neg)


def _gerber(rng, folder, roles=("copper", "profile")) -> Path | None:
    return pick_file(rng, folder, roles)


def _insert_after_header(rng, lines: list[bytes], new: list[bytes], anywhere: bool = True) -> list[bytes]:
    """Insert lines after the format/unit statements (or anywhere before M02)."""
    first = next((i + 1 for i, line in enumerate(lines) if line.startswith((b"%MO", b"%FS"))), 0)
    end = next((i for i, line in enumerate(lines) if line.startswith(b"M02")), len(lines))
    k = rng.randrange(first, max(first + 1, end)) if anywhere else first
    return lines[:k] + new + lines[k:]


def m_invalid_dcode(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    how = rng.choice(["insert-D0", "replace-select", "flash-before-aperture", "no-selects",
                      "no-apertures", "draw-before-aperture"])
    if how == "insert-D0":
        code = rng.choice([b"D0*\n", b"D00*\n", b"D1*\n", b"D2*\n", b"D3*\n", b"D9*\n", b"D-10*\n",
                           b"D10.5*\n", b"D*\n", b"D99999999999999999999*\n"])
        lines = _insert_after_header(rng, lines, [code, b"X0Y0D03*\n", b"X100Y100D01*\n"])
    elif how == "replace-select":
        idx = [i for i, line in enumerate(lines) if re.match(rb"^(G54)?D\d{2,}\*", line)]
        if idx:
            k = rng.choice(idx)
            lines[k] = rng.choice([b"D0*\n", b"D00*\n", b"D9999*\n", b"D-1*\n", b"D*\n", b"D3*\n"])
    elif how == "flash-before-aperture":
        k = next((i for i, line in enumerate(lines) if line.startswith((b"%ADD", b"%AM"))), len(lines))
        lines = lines[:k] + [b"X0Y0D03*\n"] + lines[k:]
    elif how == "draw-before-aperture":
        k = next((i for i, line in enumerate(lines) if line.startswith((b"%ADD", b"%AM"))), len(lines))
        lines = lines[:k] + [b"X0Y0D02*\n", b"X1000000Y0D01*\n"] + lines[k:]
    elif how == "no-selects":
        lines = [line for line in lines if not re.match(rb"^(G54)?D\d{2,}\*\s*$", line)]
    else:
        lines = [line for line in lines if not line.startswith(b"%ADD")]
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: {how}"


BAD_APERTURES = [b"C,0", b"C,-1", b"C,1e9", b"C,100000000", b"R,0X0", b"R,-1X2", b"O,1X0", b"P,1X0",
                 b"P,1X2", b"P,1X1000000", b"P,0.5X3X45X2", b"C,1X2", b"C", b"C,1X2X3X4", b"R,1",
                 b"NOSUCHMACRO,1", b"C,NaN", b"C,inf", b"R,1e308X1e308", b"O,0.5X0.5X9", b"P,1X3X1e308"]
BAD_MACROS = [
    b"%AMZZ*1,1,$1/0,0,0*%\n",
    b"%AMZZ*99,1,2,3*%\n",
    b"%AMZZ*$1=$1+1*1,1,$1,0,0*%\n",
    b"%AMZZ*5,1,0,0,0,1,0*%\n",
    b"%AMZZ*5,1,100000,0,0,1,0*%\n",
    b"%AMZZ*4,1,1000000,0,0,1,1,0*%\n",
    b"%AMZZ*4,1,1,0,0,0,0*%\n",
    b"%AMZZ*21,1,-1,-1,0,0,0*%\n",
    b"%AMZZ*7,0,0,1,2,0.1,45*%\n",
    b"%AMZZ*1,1,$9,0,0*%\n",
    b"%AMZZ*1,1,(((((((((((((((((((((1)))))))))))))))))))))),0,0*%\n",
    b"%AMZZ*20,1,0.1,0,0,0,0,0*%\n",
    b"%AMZZ*1,1,1e400,0,0*%\n",
]


def m_bad_aperture(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    idx = [i for i, line in enumerate(lines) if line.startswith(b"%ADD")]
    if rng.random() < 0.35:
        macro = rng.choice(BAD_MACROS)
        k = idx[0] if idx else 0
        code = re.match(rb"%ADD(\d+)", lines[k]).group(1) if idx else b"10"
        lines = lines[:k] + [macro] + lines[k:]
        # the aperture now uses the broken macro
        kk = k + 1
        lines[kk] = b"%ADD" + code + b"ZZ," + rng.choice([b"1", b"0", b"-1", b"1X2X3"]) + b"*%\n" if idx else lines[kk]
        f.write_bytes(b"".join(lines))
        return f"{rel(f, folder)}: broken aperture macro {macro.strip()[:40]!r}"
    if not idx:
        return f"{rel(f, folder)}: no aperture, untouched"
    k = rng.choice(idx)
    m = re.match(rb"%ADD(\d+)", lines[k])
    new = rng.choice(BAD_APERTURES)
    lines[k] = b"%ADD" + m.group(1) + new + b"*%\n"
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: aperture D{m.group(1).decode()} = {new.decode()}"


def m_step_repeat(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    nx = rng.choice([1, 2, 10, 1000, 100000, 10 ** 9, 0, -1])
    ny = rng.choice([1, 2, 10, 1000, 100000, 0])
    i = rng.choice([b"0", b"1", b"-1", b"1e6", b"0.001", b"99999999"])
    j = rng.choice([b"0", b"1", b"-1", b"0.001"])
    sr = b"%%SRX%dY%dI%sJ%s*%%\n" % (nx, ny, i, j)
    close = rng.random() < 0.7
    nested = rng.random() < 0.2
    new = [sr] + ([sr] if nested else [])
    lines = _insert_after_header(rng, lines, new)
    if close:
        end = next((k for k, line in enumerate(lines) if line.startswith(b"M02")), len(lines))
        lines = lines[:end] + [b"%SR*%\n"] + lines[end:]
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: step and repeat {sr.strip().decode()}{' nested' if nested else ''}" \
           f"{'' if close else ' never closed'}"


def m_format(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    data = f.read_bytes()
    how = rng.choice([b"%FSLAX99Y99*%", b"%FSLAX00Y00*%", b"%FSLAX16Y16*%", b"%FSLAX7Y7*%",
                      b"%FSTAX26Y26*%", b"%FSLIX26Y26*%", b"%FSLAX26*%", b"", b"%MOIN*%", b"%MOMM*%",
                      b"%MOXX*%", b"%MO*%"])
    if how.startswith(b"%FS"):
        data = re.sub(rb"%FS[^%]*%", lambda m: how, data, count=1)
    elif how.startswith(b"%MO"):
        data = re.sub(rb"%MO[^%]*%", lambda m: how, data, count=1)
    else:
        data = re.sub(rb"%(FS|MO)[^%]*%", b"", data)
    f.write_bytes(data)
    return f"{rel(f, folder)}: format/unit statement -> {how.decode() or 'deleted'}"


def m_arc(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    mode = rng.choice([b"G75*\n", b"G74*\n", b""])
    arc = rng.choice([b"G03X1000000Y0I1000000000J0D01*\n", b"G02X0Y0I0J0D01*\n",
                      b"G03X0Y0I1J1D01*\n", b"G02X99999999Y99999999I-99999999J0D01*\n",
                      b"G03X1Y1I0.5J0.5D01*\n", b"G02X0Y1I0J0D01*\n", b"G03D01*\n"])
    new = [b"X0Y0D02*\n", mode, arc, b"G01*\n"]
    lines = _insert_after_header(rng, lines, [x for x in new if x])
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: arc {arc.strip().decode()} after {mode.strip().decode() or 'no mode'}"


def m_region(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    region = rng.choice([
        [b"G36*\n", b"G37*\n"],
        [b"G36*\n", b"X0Y0D02*\n", b"G37*\n"],
        [b"G36*\n", b"X0Y0D02*\n", b"X1000Y0D01*\n", b"G37*\n"],
        [b"G36*\n", b"X0Y0D02*\n", b"X1000000Y1000000D01*\n", b"X1000000Y0D01*\n", b"X0Y1000000D01*\n",
         b"X0Y0D01*\n", b"G37*\n"],
        [b"G36*\n", b"X0Y0D02*\n", b"X1000Y0D01*\n", b"X0Y0D03*\n", b"G37*\n"],
        [b"G36*\n", b"X0Y0D02*\n", b"X1000Y0D01*\n"],
        [b"G37*\n"],
        [b"G36*\n", b"G36*\n", b"X0Y0D02*\n", b"X1000Y0D01*\n", b"X0Y1000D01*\n", b"G37*\n"],
    ])
    lines = _insert_after_header(rng, lines, region)
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: region {b''.join(region).decode().strip()!r}"


def m_polarity(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    new = rng.choice([b"%LPC*%\n", b"%IPNEG*%\n", b"%LMXY*%\n", b"%LR45*%\n", b"%LS0*%\n",
                      b"%LS1e9*%\n", b"%LS-1*%\n", b"%LPX*%\n", b"%LR1e308*%\n", b"%OFA1000B-1000*%\n",
                      b"%SFA0B0*%\n", b"%ASAYBX*%\n", b"%MIA1B1*%\n", b"%IR90*%\n"])
    lines = _insert_after_header(rng, lines, [new] * rng.choice([1, 1, 5]))
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: {new.strip().decode()} inserted"


def m_attributes(rng, folder):
    f = _gerber(rng, folder)
    if f is None:
        return "no Gerber file"
    lines = _lines(f)
    new = rng.choice([
        b"%TO.N," + b"N" * 100000 + b"*%\n",
        b"%TF.FileFunction,Copper,L99,Inr*%\n",
        b"%TF.FileFunction,Copper,L-1,Top*%\n",
        b"%TF.FileFunction,Copper,L0,Bot*%\n",
        b"%TF.FileFunction,Profile,NP*%\n",
        b"%TF.FilePolarity,Negative*%\n",
        b"%TO.P,U1,1,\\u0000\\u00ff*%\n",
        b"%TO.C,R1*%\n%TO.CVal,1e999*%\n",
        b"%TO.C,*%\n%TO.P,,*%\n",
        b"%TA.AperFunction,*%\n",
        b"%TD.NoSuch*%\n",
        b"%TF*%\n",
        b"G04 #@! TO.N,\xff\xfe*\n",
    ])
    lines = _insert_after_header(rng, lines, [new], anywhere=rng.random() < 0.5)
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: attribute {new[:40].strip()!r} inserted"


def m_encoding(rng, folder):
    f = pick_file(rng, folder)
    data = f.read_bytes()
    how = rng.choice(["crlf", "cr", "utf16", "nul", "bom", "latin1", "empty", "garbage", "one-line",
                      "long-line", "spaces"])
    if how == "crlf":
        data = data.replace(b"\n", b"\r\n")
    elif how == "cr":
        data = data.replace(b"\n", b"\r")
    elif how == "utf16":
        data = data.decode("latin-1").encode("utf-16")
    elif how == "nul":
        k = rng.randrange(len(data) + 1)
        data = data[:k] + b"\x00" * rng.choice([1, 100]) + data[k:]
    elif how == "bom":
        data = b"\xef\xbb\xbf" + data
    elif how == "latin1":
        k = rng.randrange(len(data) + 1)
        data = data[:k] + bytes(rng.randrange(128, 256) for _ in range(20)) + data[k:]
    elif how == "empty":
        data = b""
    elif how == "garbage":
        data = bytes(rng.randrange(256) for _ in range(rng.choice([10, 5000])))
    elif how == "one-line":
        data = data.replace(b"\n", b"").replace(b"\r", b"")
    elif how == "long-line":
        k = rng.randrange(len(data) + 1)
        data = data[:k] + b"0" * 2_000_000 + data[k:]
    else:
        data = re.sub(rb"\n", b" \t \n", data)
    f.write_bytes(data)
    return f"{rel(f, folder)}: {how}"


def m_drill(rng, folder):
    f = pick_file(rng, folder, ("drill",))
    if f is None:
        return "no drill file"
    data = f.read_bytes()
    how = rng.choice(["tool-size", "tool-zero", "no-header", "units", "coords-before-tool",
                      "undefined-tool", "repeat", "slot", "format", "span"])
    if how == "tool-size":
        data = re.sub(rb"(T\d+)C[\d.]+", lambda m: m.group(1) + b"C" + rng.choice(
            [b"0", b"-1", b"1e9", b"999999", b"0.000", b"NaN", b"."]), data, count=1)
    elif how == "tool-zero":
        data = data.replace(b"\nT01\n", b"\nT0\nX1Y1\nT01\n", 1)
    elif how == "no-header":
        data = re.sub(rb"M48.*?\n%\n", b"", data, flags=re.S)
    elif how == "units":
        data = data.replace(b"METRIC", b"INCH") if b"METRIC" in data else data.replace(b"INCH", b"METRIC")
    elif how == "coords-before-tool":
        data = re.sub(rb"\n%\n", b"\n%\nX99999Y-99999\nX1.5Y2.5\n", data, count=1)
    elif how == "undefined-tool":
        data = re.sub(rb"\nT0*1\n", b"\nT77\n", data, count=1)
    elif how == "repeat":
        data = re.sub(rb"\nT0*1\n", rng.choice([b"\nT01\nR1000000X1\n", b"\nT01\nR99999999999X0.01Y0.01\n"]),
                      data, count=1)
    elif how == "slot":
        data = re.sub(rb"\nT0*1\n", rng.choice([b"\nT01\nX0Y0G85X0Y0\n", b"\nT01\nG85X1\n", b"\nT01\nG00X0Y0\nM15\nG01X1e9Y0\nM16\n"]),
                      data, count=1)
    elif how == "format":
        data = data.replace(b"FMAT,2", rng.choice([b"FMAT,1", b"FMAT,9", b""]))
        data = re.sub(rb"(METRIC|INCH),(TZ|LZ)", lambda m: m.group(1) + rng.choice([b",LZ,000.000", b",TZ,00.0000000", b",XZ"]), data)
    else:
        data = re.sub(rb"TF\.FileFunction,[^\n]*", rng.choice(
            [b"TF.FileFunction,Plated,1,99,PTH", b"TF.FileFunction,Plated,0,0,Blind", b"TF.FileFunction,NonPlated,2,1,NPTH",
             b"TF.FileFunction,Plated,-1,2,PTH"]), data, count=1)
    f.write_bytes(data)
    return f"{rel(f, folder)}: {how}"


_POINT = re.compile(rb"X([+-]?)(\d+)Y([+-]?)(\d+)")


def _netlist(rng, folder) -> Path | None:
    return pick_file(rng, folder, ("netlist",))


def m_netlist_disagrees(rng, folder):
    """A netlist that does not agree with the copper: shifted, scaled, mirrored, nets swapped."""
    f = _netlist(rng, folder)
    if f is None:
        return "no netlist"
    lines = _lines(f)
    recs = [i for i, line in enumerate(lines) if line[:3] in (b"317", b"327", b"367") and _POINT.search(line)]
    if not recs:
        return f"{rel(f, folder)}: no test records, untouched"
    how = rng.choice(["shift", "scale", "mirror", "swap-nets", "rename-net", "merge-nets", "one-moved"])
    dx, dy = rng.choice([(5000, 0), (0, -20000), (123, 456), (999999, 999999)])
    s = rng.choice([0.5, 2.0, 10.0, 0.001, 25.4, 1 / 25.4])

    def move(line: bytes) -> bytes:
        def sub(m):
            x = int(m.group(2)) * (-1 if m.group(1) == b"-" else 1)
            y = int(m.group(4)) * (-1 if m.group(3) == b"-" else 1)
            if how in ("shift", "one-moved"):
                x, y = x + dx, y + dy
            elif how == "scale":
                x, y = round(x * s), round(y * s)
            else:
                x = -x
            w = len(m.group(2))
            xs, ys = str(abs(x)).zfill(w).encode(), str(abs(y)).zfill(len(m.group(4))).encode()
            return b"X" + (b"-" if x < 0 else b"+") + xs + b"Y" + (b"-" if y < 0 else b"+") + ys
        return _POINT.sub(sub, line, count=1)

    if how in ("shift", "scale", "mirror"):
        for i in recs:
            lines[i] = move(lines[i])
    elif how == "one-moved":
        i = rng.choice(recs)
        lines[i] = move(lines[i])
    else:
        net = lambda i: lines[i][3:17]  # noqa: E731  the net name field, columns 4-17
        nets = sorted({net(i) for i in recs})
        if len(nets) >= 2:
            a, b = rng.sample(nets, 2)
            for i in recs:
                n = net(i)
                if how == "swap-nets":
                    new = b if n == a else a if n == b else n
                elif how == "rename-net":
                    new = b"RENAMED".ljust(14) if n == a else n
                else:
                    new = b if n == a else n
                lines[i] = lines[i][:3] + new + lines[i][17:]
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: {how}"


def m_netlist_records(rng, folder):
    f = _netlist(rng, folder)
    if f is None:
        return "no netlist"
    lines = _lines(f)
    recs = [i for i, line in enumerate(lines) if line[:3] in (b"317", b"327", b"367")]
    how = rng.choice(["access", "units", "no-end", "duplicate", "short-record", "huge-size", "bad-code"])
    if how == "access" and recs:
        i = rng.choice(recs)
        lines[i] = re.sub(rb"A\d\d", rng.choice([b"A99", b"A00", b"A-1", b"AXX", b"A63"]), lines[i], count=1)
    elif how == "units":
        lines = [re.sub(rb"UNITS\s+CUST\s+\d", rng.choice([b"UNITS CUST 9", b"UNITS SI", b"UNITS"]), line)
                 for line in lines]
    elif how == "no-end":
        lines = [line for line in lines if not line.startswith(b"999")]
    elif how == "duplicate" and recs:
        i = rng.choice(recs)
        lines = lines[:i] + [lines[i]] * rng.choice([2, 1000]) + lines[i:]
    elif how == "short-record" and recs:
        i = rng.choice(recs)
        lines[i] = lines[i][:rng.randrange(3, max(4, len(lines[i])))].rstrip() + b"\n"
    elif how == "huge-size" and recs:
        i = rng.choice(recs)
        lines[i] = re.sub(rb"X\d{4}Y\d{4}", b"X9999Y9999", lines[i], count=1)
        lines[i] = re.sub(rb"D\d{4}", rng.choice([b"D9999", b"D0000", b"D-001"]), lines[i], count=1)
    elif recs:
        i = rng.choice(recs)
        lines[i] = rng.choice([b"3", b"399", b"389", b"378", b"0"]) + lines[i][3:]
    f.write_bytes(b"".join(lines))
    return f"{rel(f, folder)}: {how}"


def m_project(rng, folder):
    """The project file: bad TOML, paths leaving the folder, absurd values."""
    p = folder / "loopcheck.toml"
    old = p.read_text(errors="replace") if p.exists() else ""
    some = next((f.name for f in files_of(folder) if role_of(f) == "copper"), "x.gbr")
    outside = folder.parent / "outside" / "outside-copper.gbr"
    add = rng.choice([
        '\n[files]\n"../../../etc/passwd" = "copper:1"\n',
        f'\n[files]\n"{outside}" = "copper:1"\n',
        '\n[files]\n"/etc/hostname" = "netlist"\n',
        f'\n[files]\n"{some}" = "copper:0"\n',
        f'\n[files]\n"{some}" = "copper:99"\n',
        f'\n[files]\n"{some}" = "netlist"\n',
        f'\n[files]\n"{some}" = "drill"\n',
        '\n[board]\nfab = "../.."\n',
        '\n[board]\nfab = "/"\n',
        '\n[board]\nfab = "nothing-here.zip"\n',
        '\n[stackup]\ncopper_um = [-35, 1e300]\n',
        '\n[stackup]\ncopper_um = []\ndielectric_um = [0]\nfinished_mm = -1\n',
        '\n[operating_point]\niout_a = 1e308\nfsw_hz = 0\nedge_ns = -1\nvin_v = [40, 20]\n',
        '\n[operating_point]\niout_a = nan\nfsw_hz = inf\n',
        '\n[components]\nC1 = "1e999F"\nR1 = "-10"\nL1 = "0"\nRS1 = "abc"\n',
        '\n[stages.x]\ntopology = "flyback"\nswitch = "NOPE"\n',
        '\n[stages.x]\nswitch = "J1"\ninductor = "J1"\ninput_caps = ["J1"]\n',
        '\n[rules]\ndeck = "../../../etc/passwd"\n',
        '\n[rules]\ndeck = "nosuchdeck"\n',
        '\n[rules.thresholds."hot-loop-area"]\nwarning = -1\nerror = nan\n',
        '\n[[waivers]]\nrule = ""\nwhere = ""\n',
        "\n[[[broken toml\n",
        "\n" + "a = 1\n" * 2,
        "\x00\n",
    ])
    if rng.random() < 0.3:
        old = ""
    p.write_text(old + add)
    return f"loopcheck.toml: {add.strip()[:60]!r}"


def m_path_tricks(rng, folder):
    """Links and odd files inside the board folder."""
    how = rng.choice(["link-outside", "link-dev-zero", "link-loop", "link-dangling", "link-dir-up",
                      "dir-named-gerber", "fifo", "link-replaces-copper"])
    outside = folder.parent / "outside"
    outside.mkdir(exist_ok=True)
    copper = pick_file(rng, folder, ("copper",))
    name = f"extra-copper-L1-top.gbr"
    if how == "link-outside":
        target = outside / "outside-copper.gbr"
        shutil.copyfile(copper, target) if copper else target.write_text("G04 x*\nM02*\n")
        os.symlink(target, folder / name)
    elif how == "link-dev-zero":
        os.symlink(rng.choice(["/dev/zero", "/dev/urandom"]), folder / rng.choice([name, "netlist2.ipc"]))
    elif how == "link-loop":
        os.symlink(folder / "loop-a.gbr", folder / "loop-b.gbr")
        os.symlink(folder / "loop-b.gbr", folder / "loop-a.gbr")
    elif how == "link-dangling":
        os.symlink(folder / "nowhere.gbr", folder / name)
    elif how == "link-dir-up":
        os.symlink("..", folder / "up")
    elif how == "dir-named-gerber":
        (folder / name).mkdir()
    elif how == "fifo":
        os.mkfifo(folder / name)
    else:
        if copper is None:
            return "no copper file"
        target = outside / copper.name
        shutil.copyfile(copper, target)
        copper.unlink()
        os.symlink(target, copper)
    return f"{how}"


MUTATIONS: dict[str, Callable] = {
    "byte-flip": m_byte_flip,
    "truncate": m_truncate,
    "delete-lines": m_delete_lines,
    "repeat-lines": m_repeat_lines,
    "huge-number": m_huge_number,
    "negative-number": m_negative_number,
    "invalid-dcode": m_invalid_dcode,
    "bad-aperture": m_bad_aperture,
    "step-repeat": m_step_repeat,
    "format": m_format,
    "arc": m_arc,
    "region": m_region,
    "polarity": m_polarity,
    "attributes": m_attributes,
    "encoding": m_encoding,
    "drill": m_drill,
    "netlist-disagrees": m_netlist_disagrees,
    "netlist-records": m_netlist_records,
    "project": m_project,
    "path-tricks": m_path_tricks,
}
# archive forms: the (possibly mutated) board is zipped and checked as a .zip
ZIP_KINDS = ["zip-plain", "zip-bomb", "zip-paths", "zip-corrupt"]


def make_zip(rng, board: Path, zdir: Path, kind: str) -> tuple[Path, str]:
    z = zdir / "board.zip"
    files = [p for p in sorted(board.rglob("*")) if p.is_file()]
    detail = kind
    with zipfile.ZipFile(z, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in files:
            zf.write(p, str(p.relative_to(board)))
        if kind == "zip-bomb":
            how = rng.choice(["ratio", "nested", "members", "just-under"])
            detail += f": {how}"
            if how == "ratio":
                zf.writestr("bomb-copper-L1-top.gbr", b"G04*\n" + b" " * (rng.choice([5, 60]) * 1024 * 1024))
            elif how == "nested":
                inner = io.BytesIO()
                with zipfile.ZipFile(inner, "w", zipfile.ZIP_DEFLATED) as iz:
                    iz.writestr("inner.gbr", b"\x00" * (10 * 1024 * 1024))
                zf.writestr("nested.zip", inner.getvalue())
            elif how == "members":
                for k in range(rng.choice([400, 600])):
                    zf.writestr(f"m{k}.txt", b"x")
            else:
                # a member that compresses at about 150:1 (under the ratio limit) but is large
                block = bytes(rng.randrange(256) for _ in range(64)) + b"\x00" * 9600
                zf.writestr("large-copper-L1-top.gbr", b"G04*\n" + block * 2000)
        elif kind == "zip-paths":
            member = rng.choice(["../escaped.gbr", "../../escaped.gbr", "/abs/escaped.gbr", "a/../../escaped.gbr",
                                 "..\\..\\escaped.gbr", "C:\\escaped.gbr", "./././x.gbr", "", "dir/",
                                 "link.gbr"])
            detail += f": {member!r}"
            data = (board / files[0].relative_to(board)).read_bytes() if files else b"G04*\nM02*\n"
            if member == "link.gbr":
                info = zipfile.ZipInfo("link.gbr")
                info.external_attr = (stat.S_IFLNK | 0o777) << 16
                info.create_system = 3
                zf.writestr(info, rng.choice(["../../../etc/passwd", "/dev/zero", "../outside"]))
            elif member == "":
                info = zipfile.ZipInfo("x")
                info.filename = ""
                try:
                    zf.writestr(info, data)
                except Exception:
                    zf.writestr("y/", b"")
            else:
                zf.writestr(member, data)
    if kind == "zip-corrupt":
        data = bytearray(z.read_bytes())
        how = rng.choice(["truncate", "flip", "not-zip"])
        if how == "truncate":
            data = data[:rng.randrange(len(data))]
        elif how == "flip":
            for _ in range(rng.choice([1, 10, 100])):
                data[rng.randrange(len(data))] = rng.randrange(256)
        else:
            data = b"PK\x03\x04" + bytes(rng.randrange(256) for _ in range(1000))
        z.write_bytes(bytes(data))
        detail += f": {how}"
    return z, detail


# ----------------------------------------------------------------------------------------------
# cases


@dataclass
class Case:
    index: int
    source: str
    kinds: list[str]
    command: str                 # "check" | "inspect"
    zip_kind: str | None
    details: list[str] = field(default_factory=list)
    subprocess: bool = False

    @property
    def kind(self) -> str:
        """The case's mutation kind for the summary: the first mutation, or the zip form."""
        return self.zip_kind if self.zip_kind and self.zip_kind != "zip-plain" else (
            self.kinds[0] if self.kinds else "zip-plain")


@dataclass
class Outcome:
    case: Case
    rc: int | None
    seconds: float
    peak_mb: float
    cpu_s: float
    verdict: str                 # "exit-0" .. "exit-3-internal", or a failure class
    failures: list[str]
    stderr: str
    kept: str | None = None


FAILURE_CLASSES = ("traceback", "signal", "bad-exit", "timeout", "wrote-beside-inputs", "temp-left",
                   "report-on-exit-2", "exit-2-message", "no-report")


def plan_case(seed: int, index: int, sources: list[Source], subprocess_every: int,
              real_check: bool = True) -> Case:
    """Case ``index`` of ``seed``: its board, mutations and command (the same every time).

    ``real_check`` False: the real boards are only inspected, never checked (a check of one
    takes up to half a minute; the test suite's run leaves it out)."""
    rng = random.Random(f"{seed}:{index}")
    weights = [0.15 if s.real else 1.0 for s in sources]
    src = rng.choices(sources, weights)[0]
    r = rng.random()
    zip_kind = None
    kinds: list[str] = []
    if r < 0.12:
        zip_kind = rng.choice(ZIP_KINDS)
        if zip_kind == "zip-plain" or rng.random() < 0.3:
            kinds = [rng.choice(list(MUTATIONS))]
    else:
        n = rng.choices([1, 2, 3], [0.75, 0.18, 0.07])[0]
        kinds = [rng.choice(list(MUTATIONS)) for _ in range(n)]
    command = "inspect" if (src.real and rng.random() < 0.75) or rng.random() < 0.15 else "check"
    if src.real and not real_check:
        command = "inspect"
    sub = subprocess_every > 0 and index % subprocess_every == subprocess_every - 1
    return Case(index=index, source=src.name, kinds=kinds, command=command, zip_kind=zip_kind, subprocess=sub)


def prepare(case: Case, seed: int, source: Source, casedir: Path) -> tuple[list[str], Path]:
    """Copy and mutate; returns the loopcheck arguments and the report path."""
    rng = random.Random(f"{seed}:{case.index}:mutate")
    board = casedir / "board"
    shutil.copytree(source.folder, board, symlinks=True)
    for p in [board, *board.rglob("*")]:          # the shared boards are read-only
        if not p.is_symlink():
            p.chmod(p.stat().st_mode | stat.S_IWUSR)
    for sub in ("out", "cwd", "tmp"):
        (casedir / sub).mkdir()
    for kind in case.kinds:
        try:
            case.details.append(f"{kind}: {MUTATIONS[kind](rng, board)}")
        except (OSError, ValueError, IndexError) as exc:   # a mutation that does not apply here
            case.details.append(f"{kind}: not applied ({type(exc).__name__}: {exc})")
    target = board
    if case.zip_kind:
        zdir = casedir / "zipin"
        zdir.mkdir()
        z, detail = make_zip(rng, board, zdir, case.zip_kind)
        case.details.append(detail)
        shutil.rmtree(board)
        target = z
    out = casedir / "out" / "report.json"
    if case.command == "check":
        args = ["check", str(target), "--format", "json", "--output", str(out)]
    else:
        args = ["inspect", str(target)]
        if rng.random() < 0.3:
            args += ["--format", "json"]
    return args, out


def snapshot(root: Path, skip: tuple[str, ...] = ("out", "tmp", "stdout", "stderr")) -> dict[str, tuple]:
    """Every entry under ``root``: kind, size and SHA-256 of files, targets of links."""
    seen: dict[str, tuple] = {}
    for dirpath, dirnames, filenames in os.walk(root, followlinks=False):
        here = Path(dirpath)
        if here == root:
            dirnames[:] = [d for d in dirnames if d not in skip]
            filenames = [f for f in filenames if f not in skip]
        for name in dirnames + filenames:
            p = here / name
            key = str(p.relative_to(root))
            st = os.lstat(p)
            if stat.S_ISLNK(st.st_mode):
                seen[key] = ("link", os.readlink(p))
            elif stat.S_ISDIR(st.st_mode):
                seen[key] = ("dir",)
            elif stat.S_ISREG(st.st_mode):
                h = hashlib.sha256()
                with open(p, "rb") as fh:
                    for chunk in iter(lambda: fh.read(1 << 20), b""):
                        h.update(chunk)
                seen[key] = ("file", st.st_size, h.hexdigest())
            else:
                seen[key] = ("other", stat.S_IFMT(st.st_mode))
    return seen


def _child(args: list[str], casedir: Path, use_subprocess: bool) -> None:
    """In the forked child: own process group, stdout/stderr to files, run loopcheck, exit."""
    os.setpgid(0, 0)
    try:
        import resource
        resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT_BYTES, MEMORY_LIMIT_BYTES))
    except (ImportError, ValueError, OSError):
        pass
    for fd, name in ((1, "stdout"), (2, "stderr")):
        f = os.open(casedir / name, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
        os.dup2(f, fd)
        os.close(f)
    devnull = os.open(os.devnull, os.O_RDONLY)
    os.dup2(devnull, 0)
    os.chdir(casedir / "cwd")
    os.environ["TMPDIR"] = str(casedir / "tmp")
    if use_subprocess:
        env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
        os.execve(sys.executable, [sys.executable, "-m", "loopcheck", *args], env)
    tempfile.tempdir = None
    # the parent's sys.stdout may not be fd 1 (a test runner's capture): write to the files
    sys.stdout = open(1, "w", encoding="utf-8", closefd=False)
    sys.stderr = open(2, "w", encoding="utf-8", errors="backslashreplace", closefd=False)
    code = 1
    try:
        from loopcheck.cli import main
        main(args, prog_name="loopcheck")
        code = 0
    except SystemExit as exc:
        if exc.code is None:
            code = 0
        elif isinstance(exc.code, int):
            code = exc.code
        else:
            print(exc.code, file=sys.stderr)
            code = 1
    except BaseException:              # what the interpreter would print for an uncaught one
        import traceback
        traceback.print_exc()
        code = 1
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    finally:
        os._exit(code & 0xFF)


@dataclass
class Running:
    case: Case
    pid: int
    start: float
    casedir: Path
    args: list[str]
    out: Path
    before: dict
    seed: int = 0
    timed_out: bool = False
    cpu_s: float = 0.0


_TICK = os.sysconf("SC_CLK_TCK") if hasattr(os, "sysconf") else 100


def group_cpu_seconds() -> dict[int, float]:
    """CPU time [s] by process group, from /proc: each member's own time plus its reaped
    children's (a case's group is the case and the reader pool it may start)."""
    out: dict[int, float] = {}
    try:
        pids = [int(d) for d in os.listdir("/proc") if d.isdigit()]
    except OSError:
        return out
    for pid in pids:
        try:
            fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
            group = int(fields[2])
            out[group] = out.get(group, 0.0) + sum(int(x) for x in fields[11:15]) / _TICK
        except (OSError, IndexError, ValueError):
            continue
    return out


def judge(run: Running, status: int, rusage, keep: Path | None, timeout: float) -> Outcome:
    case, casedir = run.case, run.casedir
    seconds = time.monotonic() - run.start
    cpu = max((rusage.ru_utime + rusage.ru_stime) if rusage is not None else 0.0, run.cpu_s)
    stderr = (casedir / "stderr").read_text(errors="replace")
    failures = []
    rc: int | None
    if os.WIFSIGNALED(status):
        rc = -os.WTERMSIG(status)
    else:
        rc = os.WEXITSTATUS(status)
    if run.timed_out:
        failures.append("timeout")
    elif rc < 0:
        failures.append("signal")
    if "Traceback (most recent call last)" in stderr:
        failures.append("traceback")
    if rc is not None and rc >= 0 and not run.timed_out:
        if rc == 3:
            if not (INTERNAL_ERROR.search(stderr) and NAMES_MODULE.search(stderr)):
                failures.append("bad-exit")
        elif rc not in (0, 1, 2):
            failures.append("bad-exit")
    if snapshot(casedir) != run.before:
        failures.append("wrote-beside-inputs")
    left = [p for p in (casedir / "tmp").iterdir() if not (rc == 3 and CRASH_REPORT.match(p.name))]
    if left:
        failures.append("temp-left")
    crash_reports = [p for p in (casedir / "tmp").iterdir() if CRASH_REPORT.match(p.name)]
    traceback_text = "".join(p.read_text(errors="replace") for p in crash_reports)
    outs = [p.name for p in (casedir / "out").iterdir()]
    if rc == 2:
        if outs:
            failures.append("report-on-exit-2")
        lines = stderr.strip("\n").split("\n")
        # one line, or one per refused board when the folder holds several
        if not lines or not all(line.startswith("loopcheck: ") for line in lines) or (
                len(lines) > 1 and not all(line.startswith("loopcheck: board ") for line in lines)):
            failures.append("exit-2-message")
    if rc in (0, 1) and case.command == "check" and not run.timed_out:
        # one report, or one per board when the folder holds several (report-NAME.json)
        stem, suffix = run.out.stem, run.out.suffix
        reports = [n for n in outs if n == run.out.name or (n.startswith(stem + "-") and n.endswith(suffix))]
        try:
            for n in reports:
                json.loads((run.out.parent / n).read_text())
            if not reports or sorted(outs) != sorted(reports):
                failures.append("no-report")      # none, or stray files beside the reports
        except (OSError, ValueError):
            failures.append("no-report")
    peak_mb = rusage.ru_maxrss / 1024 if rusage is not None else 0.0
    if peak_mb > MEMORY_FAIL_MB:
        failures.append("memory")
    verdict = failures[0] if failures else ("exit-3-internal" if rc == 3 else f"exit-{rc}")
    stderr = stderr[-3000:]
    if rc == 3 and traceback_text:            # the saved traceback tells one bug from another
        stderr = stderr + "\n[saved traceback]\n" + traceback_text[-4000:]
    outcome = Outcome(case=case, rc=rc, seconds=seconds, cpu_s=cpu, peak_mb=peak_mb, verdict=verdict,
                      failures=failures, stderr=stderr)
    if (failures or rc == 3) and keep is not None:        # an internal error is a bug to fix too
        dest = keep / f"case-{case.index:06d}-{failures[0] if failures else 'internal-error'}"
        shutil.rmtree(dest, ignore_errors=True)
        shutil.copytree(casedir, dest, symlinks=True, ignore_dangling_symlinks=True,
                        ignore=lambda d, names: [n for n in names if stat.S_ISFIFO(os.lstat(os.path.join(d, n)).st_mode)])
        (dest / "case.json").write_text(json.dumps({
            "seed": run.seed, "index": case.index, "source": case.source, "kinds": case.kinds,
            "zip_kind": case.zip_kind, "details": case.details, "command": ["loopcheck", *run.args],
            "rc": rc, "failures": failures, "seconds": round(seconds, 2), "cpu_s": round(cpu, 2)}, indent=1))
        outcome.kept = str(dest)
    return outcome


def _kill(run: Running) -> None:
    try:
        os.killpg(run.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass


def warm_imports() -> None:
    """Import what a check and an inspect import, once, before the children are forked."""
    import importlib
    for name in ("loopcheck.cli", "loopcheck.project", "loopcheck.load", "loopcheck.analysis",
                 "loopcheck.rules", "loopcheck.report.common", "loopcheck.report.jsonreport",
                 "loopcheck.report.inspect", "loopcheck.connectivity", "loopcheck.readers.gerber",
                 "loopcheck.readers.drill", "loopcheck.readers.ipc356", "loopcheck.readers.discover",
                 "loopcheck.readers.bom", "scipy.sparse.linalg", "pyamg"):
        try:
            importlib.import_module(name)
        except Exception:                  # a module that does not exist yet: the child imports
            pass


def run_cases(seed: int, indices: list[int], *, jobs: int, timeout: float = TIMEOUT_S,
              wall_timeout: float | None = None,
              keep: Path | None = None, workdir: Path | None = None, subprocess_every: int = 0,
              sources: list[Source] | None = None, progress: Callable[[Outcome], None] | None = None,
              real_check: bool = True) -> list[Outcome]:
    """Run the cases ``indices`` of ``seed``, ``jobs`` at a time; returns their outcomes.

    A case is stopped, and fails as a hang, when its process group has used ``timeout`` seconds
    of CPU or ``wall_timeout`` seconds of wall time (default ten times ``timeout``): on a machine
    shared with other work a wall clock alone would blame the load."""
    wall_timeout = wall_timeout or 10 * timeout
    running: dict[int, Running] = {}
    own_workdir = workdir is None
    workdir = Path(tempfile.mkdtemp(prefix="loopcheck-fuzz-")) if own_workdir else workdir
    try:
        if sources is None:
            sources = demo_sources() + real_sources() + synth_sources(workdir)
        by_name = {s.name: s for s in sources}
        warm_imports()
        pending = list(indices)
        last_cpu_poll = 0.0
        outcomes: list[Outcome] = []
        while pending or running:
            while pending and len(running) < jobs:
                index = pending.pop(0)
                case = plan_case(seed, index, sources, subprocess_every, real_check)
                casedir = workdir / f"case-{index:06d}"
                shutil.rmtree(casedir, ignore_errors=True)
                casedir.mkdir(parents=True)
                args, out = prepare(case, seed, by_name[case.source], casedir)
                before = snapshot(casedir)
                sys.stdout.flush()
                sys.stderr.flush()
                pid = os.fork()
                if pid == 0:
                    _child(args, casedir, case.subprocess)
                running[pid] = Running(case, pid, time.monotonic(), casedir, args, out, before, seed)
            time.sleep(0.01)
            now = time.monotonic()
            if now - last_cpu_poll > 0.5:
                last_cpu_poll = now
                by_group = group_cpu_seconds()
                for pid, run in running.items():
                    run.cpu_s = max(run.cpu_s, by_group.get(pid, 0.0))
            for pid, run in list(running.items()):
                got, status, rusage = os.wait4(pid, os.WNOHANG)
                if got == 0:
                    if run.cpu_s > timeout or now - run.start > wall_timeout:
                        run.timed_out = True
                        _kill(run)
                    continue
                _kill(run)                       # anything the case left running in its group
                del running[pid]
                outcome = judge(run, status, rusage, keep, timeout)
                outcomes.append(outcome)
                shutil.rmtree(run.casedir, ignore_errors=True)
                if progress:
                    progress(outcome)
        return sorted(outcomes, key=lambda o: o.case.index)
    finally:
        for run in running.values():             # stopped early (Ctrl-C, SIGTERM): no strays
            _kill(run)
            os.waitpid(run.pid, 0)
        if own_workdir:
            shutil.rmtree(workdir, ignore_errors=True)


_FRAME = re.compile(r'File "([^"]*loopcheck[^"]*)", line (\d+), in (\w+)')


def signature(o: Outcome) -> str:
    """What tells one failure class from another: for a traceback, the exception and the last
    loopcheck frame; otherwise the failure and the first line of stderr without its numbers."""
    if "traceback" in o.failures or (o.verdict == "exit-3-internal" and "[saved traceback]" in o.stderr):
        frames = _FRAME.findall(o.stderr)
        last = [line for line in o.stderr.strip().splitlines() if line and not line.startswith(" ")]
        exc = last[-1] if last else "?"
        where = ""
        if frames:
            f, n, fn = frames[-1]
            where = f" at {f.split('loopcheck/')[-1]}:{n} {fn}"
        kind = "traceback" if "traceback" in o.failures else "internal error (exit 3)"
        return f"{kind} {exc.split(':')[0]}{where}"
    first = o.stderr.strip().splitlines()[0] if o.stderr.strip() else ""
    first = re.sub(r"/\S*case-\d+/", "", first)
    return f"{o.failures[0] if o.failures else o.verdict}: {re.sub(r'[0-9]+', 'N', first)[:120]}"


def summary(outcomes: list[Outcome]) -> str:
    table: dict[str, Counter] = defaultdict(Counter)
    for o in outcomes:
        table[o.case.kind][o.verdict] += 1
    verdicts = sorted({o.verdict for o in outcomes}, key=lambda v: (v in FAILURE_CLASSES, v))
    width = max([len(k) for k in table] + [18])
    lines = [f"{'mutation kind':<{width}} " + " ".join(f"{v:>15}" for v in verdicts)]
    for kind in sorted(table):
        lines.append(f"{kind:<{width}} " + " ".join(f"{table[kind][v]:>15}" for v in verdicts))
    total = Counter(o.verdict for o in outcomes)
    lines.append(f"{'all':<{width}} " + " ".join(f"{total[v]:>15}" for v in verdicts))
    by_cmd = Counter((o.case.command + (" zip" if o.case.zip_kind else "")
                      + (" subprocess" if o.case.subprocess else "")) for o in outcomes)
    lines.append("commands: " + ", ".join(f"{k}: {n}" for k, n in sorted(by_cmd.items())))
    times = sorted(o.seconds for o in outcomes)
    if times:
        cpus = sorted(o.cpu_s for o in outcomes)
        lines.append(f"seconds per case: median {times[len(times) // 2]:.2f}, max {times[-1]:.1f}; "
                     f"CPU seconds: median {cpus[len(cpus) // 2]:.2f}, max {cpus[-1]:.1f}; "
                     f"peak memory max {max(o.peak_mb for o in outcomes):.0f} MB")
    classes: dict[str, list[int]] = defaultdict(list)
    for o in outcomes:
        if o.failures or o.verdict == "exit-3-internal":
            classes[signature(o)].append(o.case.index)
    if classes:
        lines.append("failure classes (and internal errors, exit 3: accepted, but bugs to fix):")
        for sig, idx in sorted(classes.items(), key=lambda kv: -len(kv[1])):
            lines.append(f"  {len(idx):5d}  {sig}  (cases {', '.join(map(str, idx[:8]))}"
                         f"{' ...' if len(idx) > 8 else ''})")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--seed", type=int, required=True)
    ap.add_argument("--count", type=int, default=200, help="how many cases, numbered from --start")
    ap.add_argument("--start", type=int, default=0,
                    help="first case number (to resume a run of N cases stopped at case K: "
                         "--start K --count N-K)")
    ap.add_argument("--only", type=int, nargs="*", help="run only these case numbers")
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--timeout", type=float, default=TIMEOUT_S,
                    help="CPU seconds a case may use before it counts as a hang (default 60)")
    ap.add_argument("--wall-timeout", type=float, default=None,
                    help="wall-clock seconds before a case is stopped (default 10 x --timeout)")
    ap.add_argument("--keep", type=Path, default=None,
                    help="folder for failing cases (default: a new temporary folder)")
    ap.add_argument("--subprocess-every", type=int, default=20,
                    help="run every Nth case as a real 'python3 -m loopcheck' (0: never)")
    ap.add_argument("--no-real", action="store_true", help="leave out ../shared/realboards")
    ap.add_argument("--no-real-check", action="store_true",
                    help="inspect the real boards, never check them (the test suite's profile)")
    ap.add_argument("--log", type=Path, default=None, help="append one JSON line per case here")
    ap.add_argument("--show", action="store_true", help="print each case's plan and verdict")
    a = ap.parse_args(argv)
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(143))     # clean up as on Ctrl-C
    keep = a.keep or Path(tempfile.mkdtemp(prefix="loopcheck-fuzz-failures-"))
    keep.mkdir(parents=True, exist_ok=True)
    indices = a.only if a.only else list(range(a.start, a.start + a.count))
    workdir = Path(tempfile.mkdtemp(prefix="loopcheck-fuzz-"))
    sources = demo_sources() + ([] if a.no_real else real_sources()) + synth_sources(workdir)
    if not REALBOARDS.is_dir():
        print(f"note: {REALBOARDS} is absent: real boards are left out", file=sys.stderr)
    logf = open(a.log, "a") if a.log else None
    t0 = time.monotonic()
    done = [0]

    def progress(o: Outcome) -> None:
        done[0] += 1
        if logf:
            logf.write(json.dumps({"seed": a.seed, "index": o.case.index, "source": o.case.source,
                                   "kind": o.case.kind, "kinds": o.case.kinds, "zip": o.case.zip_kind,
                                   "command": o.case.command, "subprocess": o.case.subprocess,
                                   "details": o.case.details, "rc": o.rc, "verdict": o.verdict,
                                   "failures": o.failures, "seconds": round(o.seconds, 2), "cpu_s": round(o.cpu_s, 2),
                                   "peak_mb": round(o.peak_mb), "kept": o.kept,
                                   "stderr": o.stderr[-1500:] if o.failures or o.rc == 3 else o.stderr[:300]}) + "\n")
            logf.flush()
        if a.show or o.failures:
            print(f"[{done[0]}/{len(indices)} {time.monotonic() - t0:.0f}s] case {o.case.index} "
                  f"{o.case.source} {o.case.command} {'; '.join(o.case.details)[:150]} -> {o.verdict}"
                  f" rc={o.rc} {o.seconds:.1f}s ({o.cpu_s:.1f} s CPU)" + (f" kept in {o.kept}" if o.kept else ""), flush=True)

    try:
        outcomes = run_cases(a.seed, indices, jobs=a.jobs, timeout=a.timeout,
                             wall_timeout=a.wall_timeout, keep=keep, workdir=workdir,
                             subprocess_every=a.subprocess_every, sources=sources, progress=progress,
                             real_check=not a.no_real_check)
    finally:
        shutil.rmtree(workdir, ignore_errors=True)
        if logf:
            logf.close()
    failed = [o for o in outcomes if o.failures]
    print(f"seed {a.seed}, {len(outcomes)} cases ({indices[0]}..{indices[-1]}), "
          f"{time.monotonic() - t0:.0f} s with {a.jobs} jobs")
    print(summary(outcomes))
    if failed:
        print(f"{len(failed)} failing cases, kept in {keep}:")
        for o in failed:
            print(f"  case {o.case.index}: {', '.join(o.failures)}: {o.case.source} "
                  f"{'; '.join(o.case.details)[:200]}")
    else:
        print("no failing case")
    internal = [o for o in outcomes if o.verdict == "exit-3-internal"]
    if internal:
        print(f"{len(internal)} cases ended in an internal error (exit 3), kept in {keep}")
    if not failed and not internal:
        keep.rmdir() if not any(keep.iterdir()) else None
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
