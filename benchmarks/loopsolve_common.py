"""Shared set-up for the field-solve benchmarks: a board's stages and traced hot loops."""

from __future__ import annotations

import time


def board_loops(path: str):
    """(ctx, [(stage, LoopPath)]) for a board folder; loops that cannot be traced are left out."""
    from loopcheck.connectivity import check_connectivity
    from loopcheck.load import load_board
    from loopcheck.measure.hotloop import build_loop
    from loopcheck.measure.netcopper import MeasureContext
    from loopcheck.measure.routes import RouteError
    from loopcheck.stages import component_values, find_stages

    board, project = _load(path)
    conn = check_connectivity(board)
    stages = find_stages(board, project).stages
    values, _ = component_values(board, project)
    ctx = MeasureContext(board, values=dict(values), connectivity=conn if conn.checked else None)
    loops = []
    for st in stages:
        if not st.hot_loop:
            continue
        try:
            loops.append((st, build_loop(ctx, tuple(st.hot_loop))))
        except (RouteError, IndexError) as exc:
            print(f"  {st.name}: hot loop not traced ({type(exc).__name__}: {exc})")
    return ctx, loops


def _load(path: str):
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    project = load_project(path)
    return load_board(project), project
