"""Regenerate the demo boards: fab outputs and loopcheck.toml for each (invented scenarios).

    python3 boards/make_demo_boards.py            # writes boards/<name>/

Each board is checked first (clearances, pads on their net's copper, every net joined); a board
that fails is not written. Roles are deliberately not named in loopcheck.toml: stage detection
must find them. Part values travel in the Gerber X3 component attributes.
"""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE))

from demo_geometry import BUILDERS, check  # noqa: E402

from loopcheck.synth import write_fab  # noqa: E402

PROJECTS = {
    "led-driver-tidy": """\
# Invented demo board: constant-current LED driver (buck, P-channel high-side switch, Schottky
# rectifier, sense resistor in the inductor path), tidy 2-layer layout. No stage roles are named:
# loopcheck finds them from the netlist.
[board]
name = "led-driver-tidy"

[stackup]
copper_um = [35, 35]
dielectric_um = [1510]
dielectric_er = [4.5]
finished_mm = 1.6

[operating_point]
vin_v = [20, 40]
vout_v = 12.0
iout_a = 1.5
fsw_hz = 400e3
edge_ns = 20
""",
    "sync-buck-4layer": """\
# Invented demo board: 4-layer synchronous buck, 12 V to 5 V at 3 A, with a solid ground plane
# on layer 2 under its switching loop. No stage roles are named.
[board]
name = "sync-buck-4layer"

[stackup]
copper_um = [35, 35, 35, 35]
dielectric_um = [200, 1000, 200]
dielectric_er = [4.3, 4.5, 4.3]
finished_mm = 1.6

[operating_point]
vin_v = 12.0
vout_v = 5.0
iout_a = 3.0
fsw_hz = 500e3
edge_ns = 10
""",
}
PROJECTS["led-driver-sprawl"] = PROJECTS["led-driver-tidy"].replace(
    "tidy 2-layer layout", "the same circuit laid out sprawling").replace(
    'name = "led-driver-tidy"', 'name = "led-driver-sprawl"')


def _write_whole(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    with os.fdopen(fd, "w") as f:
        f.write(text)
    os.chmod(tmp, 0o644)
    os.replace(tmp, path)


def main(out: Path = HERE) -> None:
    for name, build in BUILDERS.items():
        builder = build()
        problems = check(builder)
        if problems:
            raise SystemExit(f"{name}: not written:\n  " + "\n  ".join(problems))
        folder = out / name
        folder.mkdir(parents=True, exist_ok=True)
        for old in folder.iterdir():
            if old.is_file() and old.suffix in (".gbr", ".drl", ".ipc"):
                old.unlink()
        written = write_fab(builder.board(), folder)
        _write_whole(folder / "loopcheck.toml", PROJECTS[name])
        size = sum(p.stat().st_size for p in written.values())
        print(f"{name}: {len(written)} files, {size / 1024:.0f} kB")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE)
