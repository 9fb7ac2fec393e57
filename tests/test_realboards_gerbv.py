"""Every copper layer of the real boards in ../shared/realboards against gerbv's rendering.

Reference: gerbv 2.x anti-aliased PNG export, coverage summed (references.GERBV_NAME), within
1.5 % like the corpus. The boards are read in place and the tests skip, saying why, when the
folder or gerbv is absent.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from loopcheck.readers.discover import discover
from loopcheck.readers.gerber import read_gerber

import references as ref

REALBOARDS = Path(__file__).resolve().parents[1].parent / "shared" / "realboards"
BAND = 0.015   # 1.5 %


def _copper_files() -> list[str]:
    if not REALBOARDS.is_dir():
        return []
    out = []
    for board in sorted(p for p in REALBOARDS.iterdir() if (p / "expected.toml").exists()):
        stack = discover(board)
        out += [str(Path(path).resolve().relative_to(REALBOARDS)) for path, _ in stack.copper]
    return out


FILES = _copper_files()


def test_every_real_board_has_its_copper_layers():
    if not REALBOARDS.is_dir():
        pytest.skip(f"real boards absent: {REALBOARDS}")
    boards = {f.split("/")[0] for f in FILES}
    assert len(boards) == len([p for p in REALBOARDS.iterdir() if (p / "expected.toml").exists()])
    assert len(FILES) >= 2 * len(boards)


@pytest.mark.gerbv
@pytest.mark.parametrize("rel", FILES or ["(no real boards)"])
def test_real_board_copper_area_agrees_with_gerbv(rel):
    """Reference: gerbv 2.x anti-aliased PNG export, coverage summed (GERBV_NAME), 1.5 %."""
    if not FILES:
        pytest.skip(f"real boards absent: {REALBOARDS}")
    if not ref.gerbv_available():
        pytest.skip("gerbv not installed (Debian package gerbv)")
    p = REALBOARDS / rel
    layer = read_gerber(p)
    expect, dpi = ref.gerbv_area_of(p, layer.geometry)
    assert ref.relative_difference(layer.geometry.area, expect) < BAND, \
        f"{ref.GERBV_NAME} at {dpi} dpi: {expect:.3f} mm2, loopcheck {layer.geometry.area:.3f} mm2"
