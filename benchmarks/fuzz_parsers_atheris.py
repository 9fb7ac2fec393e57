"""Coverage-guided fuzzing of the Gerber, Excellon and IPC-D-356 readers (atheris, libFuzzer).

Each input is written to a file and read by one reader (the Gerber one as a copper layer and as
an outline); a reader may return or raise InputError, and anything else it raises is a crash.
The first input of each crash class (exception type and innermost frame) is saved under
--artifacts as ``crash-<hash>`` with its traceback beside it (``.txt``) and fuzzing goes on;
``--stop-on-crash`` stops at the first. An input that takes more than ``--timeout`` seconds
stops the run and is saved as ``timeout-<hash>``.

The seed corpus is every file of that kind in boards/, ../shared/realboards (when present) and
a loopcheck.synth board, cut to --seed-bytes (libFuzzer mutates small inputs best).

    pip install atheris                      # 3.0.0 installs as a wheel on CPython 3.11
    python3 benchmarks/fuzz_parsers_atheris.py gerber --seconds 180
    python3 benchmarks/fuzz_parsers_atheris.py excellon --seconds 180
    python3 benchmarks/fuzz_parsers_atheris.py ipc356 --seconds 180
    python3 benchmarks/fuzz_parsers_atheris.py gerber --replay crash-1234abcd   # one input, traceback

Extra arguments after ``--`` go to libFuzzer as they are. The loopcheck fuzzed is the one on
PYTHONPATH (default: this checkout).
"""

from __future__ import annotations

import argparse
import atexit
import dataclasses
import hashlib
import os
import sys
import tempfile
import traceback
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
if not os.environ.get("PYTHONPATH"):          # this checkout, unless PYTHONPATH names another
    sys.path.insert(0, str(REPO))

READERS = ("gerber", "excellon", "ipc356")


def seed_files(reader: str) -> list[Path]:
    """Files of the reader's kind from the demo boards, the real boards and a synthesized board."""
    sys.path.insert(0, str(REPO / "tests"))
    from synth_fixtures import write_buck
    sys.path.pop(0)
    synth = Path(tempfile.mkdtemp(prefix="loopcheck-atheris-synth-"))
    write_buck(synth / "buck")
    write_buck(synth / "buck-inch", gerber_units="inch", netlist_units="inch", netlist_conductors=True)
    folders = [REPO / "boards", REPO.parent / "shared" / "realboards", synth]
    want = {"gerber": (".gbr", ".gtl", ".gbl", ".g1", ".g2", ".g3", ".gm1"),
            "excellon": (".drl",), "ipc356": (".ipc",)}[reader]
    return sorted(p for f in folders if f.is_dir() for p in f.rglob("*") if p.suffix.lower() in want)


def make_target(reader: str, scratch: Path):
    """The function libFuzzer calls with each input."""
    from loopcheck.errors import InputError
    from loopcheck.limits import InputLimits

    # small limits keep one input fast; exceeding them is an InputError, as it should be
    small = dict(max_file_bytes=1_000_000, max_step_repeat_objects=5_000, max_objects_per_layer=50_000,
                 max_profile_segments=5_000)
    known = {f.name for f in dataclasses.fields(InputLimits)}
    limits = InputLimits(**{k: v for k, v in small.items() if k in known})
    path = scratch / {"gerber": "input.gbr", "excellon": "input.drl", "ipc356": "input.ipc"}[reader]
    if reader == "gerber":
        from loopcheck.readers.gerber import read_gerber, read_profile

        def read(p):
            read_gerber(p, limits)
            try:
                read_profile(p, limits)
            except InputError:
                pass
    elif reader == "excellon":
        from loopcheck.readers.drill import read_excellon

        def read(p):
            read_excellon(p, limits)
    else:
        from loopcheck.readers.ipc356 import read_ipc356

        def read(p):
            read_ipc356(p, limits)

    def one_input(data: bytes) -> None:
        path.write_bytes(data)
        try:
            read(path)
        except InputError:
            pass

    return one_input


def crash_signature(exc: BaseException) -> str:
    """The exception type and the innermost loopcheck or gerbonara frame: one crash class."""
    tb = traceback.extract_tb(exc.__traceback__)
    ours = [f for f in tb if "loopcheck" in f.filename or "gerbonara" in f.filename] or tb
    f = ours[-1]
    return f"{type(exc).__name__} at {f.filename.split('site-packages/')[-1]}:{f.lineno} {f.name}"


def collecting(target, artifacts: Path, found: dict[str, int]):
    """A target that saves the first input of each crash class and goes on fuzzing."""
    last = artifacts / "last-input"         # what was being read when a run was stopped

    def one_input(data: bytes) -> None:
        last.write_bytes(data)
        try:
            target(data)
        except Exception as exc:                      # noqa: BLE001  every class is recorded
            sig = crash_signature(exc)
            found[sig] = found.get(sig, 0) + 1
            if found[sig] == 1:
                name = artifacts / f"crash-{hashlib.sha1(sig.encode()).hexdigest()[:12]}"
                name.write_bytes(data)
                name.with_suffix(".txt").write_text(sig + "\n\n" + "".join(traceback.format_exception(exc)))
                print(f"NEW CRASH CLASS: {sig} -> {name}", flush=True)
    return one_input


def main() -> int:
    argv = sys.argv[1:]
    extra: list[str] = []
    if "--" in argv:
        k = argv.index("--")
        argv, extra = argv[:k], argv[k + 1:]
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("reader", choices=READERS)
    ap.add_argument("--seconds", type=int, default=180, help="how long to fuzz (libFuzzer -max_total_time)")
    ap.add_argument("--timeout", type=int, default=20, help="seconds one input may take")
    ap.add_argument("--corpus", type=Path, default=None, help="corpus folder (default: a new temporary one)")
    ap.add_argument("--artifacts", type=Path, default=Path("."), help="where crash-* and timeout-* go")
    ap.add_argument("--seed-bytes", type=int, default=4096, help="seed files are cut to this many bytes")
    ap.add_argument("--stop-on-crash", action="store_true",
                    help="stop at the first crash (libFuzzer's own way); default: save the first input "
                         "of each crash class (exception type and innermost frame) and go on")
    ap.add_argument("--replay", type=Path, nargs="*", help="run these inputs once each, without fuzzing")
    a = ap.parse_args(argv)

    try:
        import atheris
    except ImportError:
        print("atheris is not installed: pip install atheris", file=sys.stderr)
        return 2
    scratch = Path(tempfile.mkdtemp(prefix="loopcheck-atheris-"))
    with atheris.instrument_imports(include=["loopcheck", "gerbonara"]):
        target = make_target(a.reader, scratch)
    if a.replay:
        for p in a.replay:
            print(f"{p}:", flush=True)
            target(p.read_bytes())              # a crash raises here, with its traceback
            print("  read, or refused with InputError")
        return 0
    corpus = a.corpus or Path(tempfile.mkdtemp(prefix=f"loopcheck-atheris-{a.reader}-"))
    corpus.mkdir(parents=True, exist_ok=True)
    if not any(corpus.iterdir()):
        for k, p in enumerate(seed_files(a.reader)):
            data = p.read_bytes()
            (corpus / f"seed-{k:03d}").write_bytes(data[:a.seed_bytes])
            if len(data) > a.seed_bytes:          # the file's end too (M02, 999, M30)
                (corpus / f"seed-{k:03d}-tail").write_bytes(data[:200] + data[-a.seed_bytes // 2:])
    a.artifacts.mkdir(parents=True, exist_ok=True)
    print(f"fuzzing the {a.reader} reader for {a.seconds} s; corpus {corpus}; "
          f"crashes go to {a.artifacts.resolve()}", flush=True)
    args = [sys.argv[0], str(corpus), f"-max_total_time={a.seconds}", f"-timeout={a.timeout}",
            f"-artifact_prefix={a.artifacts.resolve()}{os.sep}", "-rss_limit_mb=3000", "-max_len=65536",
            *extra]
    if a.stop_on_crash:
        atheris.Setup(args, target)
    else:
        found: dict[str, int] = {}
        atexit.register(lambda: print("crash classes: " + (", ".join(f"{k} ({n} inputs)" for k, n in found.items())
                                                           or "none"), flush=True))
        atheris.Setup(args, collecting(target, a.artifacts, found))
    atheris.Fuzz()
    return 0


if __name__ == "__main__":
    sys.exit(main())
