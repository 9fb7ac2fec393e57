"""The board keys that ``inspect --format json`` and ``check --format json`` share.

One function, so the two reports can never disagree: ``layers[]`` (name, file, copper area),
``nets`` and ``components``. Every number is read off the Board; nothing is computed here beyond
counting.
"""

from __future__ import annotations

from typing import Any

from ..board import Board


def board_keys(board: Board) -> dict[str, Any]:
    layers = [{"index": layer.index, "name": layer.name, "file": layer.file,
               "copper_area_mm2": layer.copper_area_mm2,
               "thickness_um": layer.thickness_m * 1e6} for layer in board.layers]
    nets = [{"name": name, "terminals": sorted(p.terminal for p in pads if not p.is_via),
             "vias": sum(1 for p in pads if p.is_via)}
            for name, pads in sorted(board.nets.items())]
    components = [{"ref": ref, "value": board.component_values.get(ref),
                   "pins": sorted({p.pin for p in pads}, key=_natural),
                   "nets": sorted({p.net for p in pads})}
                  for ref, pads in sorted(board.components.items(), key=lambda kv: _natural(kv[0]))]
    return {"layers": layers, "nets": nets, "components": components}


def _natural(text: str) -> tuple:
    import re

    return tuple(int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text))
