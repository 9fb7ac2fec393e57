"""The Gerber reader's fast paths give what the plain computation gives: the dark/clear composition
against shapely applied in file order, the giant-aware union against one union_all, and the fast
coordinate parse against gerbonara's own parser, object by object."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from gerbonara.rs274x import GerberFile, GerberParser

from loopcheck.limits import DEFAULT_LIMITS
from loopcheck.readers import fast_union as fu
from loopcheck.readers import gerber as G


def _discs(rng, n, lo=0.2, hi=2.0, extent=50.0):
    return [shapely.Point(x, y).buffer(r, quad_segs=4) for x, y, r in
            zip(rng.uniform(0, extent, n), rng.uniform(0, extent, n), rng.uniform(lo, hi, n))]


def test_compose_matches_file_order_polarity():
    rng = np.random.default_rng(11)
    runs = []
    for k in range(9):
        dark = k % 2 == 0
        runs.append((dark, _discs(rng, 150 if dark else 60, 0.3, 1.5)))
    runs.insert(0, (True, [shapely.box(-5, -5, 55, 55)]))      # a pour under everything
    runs.insert(1, (False, _discs(rng, 200, 0.2, 0.8)))         # its clearances
    expect = shapely.Polygon()
    for dark, geoms in runs:
        u = shapely.union_all(geoms)
        expect = shapely.union(expect, u) if dark else shapely.difference(expect, u)
    got = fu.compose(runs)
    assert got.is_valid
    assert got.symmetric_difference(expect).area < 1e-9 * expect.area


def test_union_many_with_a_giant_matches_union_all():
    rng = np.random.default_rng(5)
    pour = shapely.difference(shapely.box(0, 0, 50, 50), shapely.union_all(_discs(rng, 300, 0.3, 0.6)))
    shapes = [pour] + _discs(rng, 900, 0.1, 0.7)
    got = fu.union_many(shapes)
    expect = shapely.union_all(shapes)
    assert got.is_valid and got.symmetric_difference(expect).area < 1e-9 * expect.area


def test_merged_chains_keep_dots_and_cover_the_same_strokes():
    lines = shapely.linestrings([[(0, 0), (1, 0)], [(2, 0), (1, 0)], [(2, 0), (2, 1)], [(5, 5), (5, 5)],
                                 [(3, 3), (4, 4)]])
    merged = G._merged_chains(np.asarray(lines))
    assert len(merged) == 3                       # one path through (1, 0) and (2, 0), the dot, one segment
    a = shapely.union_all(shapely.buffer(lines, 0.1, quad_segs=4))
    b = shapely.union_all(shapely.buffer(merged, 0.1, quad_segs=4))
    assert abs(a.area - b.area) < 1e-3 * a.area
    assert b.contains(shapely.Point(5, 5))


BODY = """G04 fast path check*
%FS{fs}X{nx}Y{ny}*%
%MO{unit}*%
%ADD10C,0.2*%
%ADD11R,1.0X0.5*%
%ADD12C,0*%
%LPD*%
D10*
X{a}Y{b}D02*
G01X{c}Y{b}D01*
Y{d}D01*
X-{a}D01*
G01*
X{c}Y-{d}D01*
D11*
X{b}Y{c}D03*
Y{a}D03*
D12*
X{a}Y{a}D02*
X{b}Y{b}D01*
D10*
G75*
G03X{c}Y{c}I{a}J0D01*
G01*
%LPC*%
G36*
X{a}Y{a}D02*
X{c}Y{a}D01*
X{c}Y{c}D01*
X{a}Y{c}D01*
X{a}Y{a}D01*
G37*
%LPD*%
X-{c}Y-{c}D03*
M02*
"""


@pytest.mark.parametrize("fs,unit,nx,ny,vals", [
    ("LA", "MM", "46", "46", ("1000000", "2500000", "4000000", "3000000")),
    ("LA", "IN", "24", "24", ("1000", "2500", "40000", "3")),
    ("TA", "MM", "33", "33", ("001", "0025", "004", "0030")),
])
def test_fast_parse_gives_gerbonaras_objects(tmp_path, fs, unit, nx, ny, vals):
    a, b, c, d = vals
    text = BODY.format(fs=fs, unit=unit, nx=nx, ny=ny, a=a, b=b, c=c, d=d)
    p = tmp_path / "t.gbr"
    p.write_text(text)
    mine, parser, _ = G._parse(p, text, DEFAULT_LIMITS)
    plain = GerberFile()
    GerberParser(plain).parse(text, filename=p.name)

    def rows(objs):
        out = []
        for o in objs:
            d = dict(o.__dict__)
            d.pop("aperture", None)
            if not d.get("attrs"):
                d.pop("attrs", None)        # the reader gives regions the (empty) object attributes
            d["unit"] = str(d.get("unit"))
            out.append((type(o).__name__, sorted(d.items())))
        return out

    assert rows(mine.objects) == rows(plain.objects)
    assert len(mine.objects) > 8
