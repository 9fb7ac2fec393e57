"""The keys ``check --format json`` shares with ``inspect --format json``, made by inspect's own
function (loopcheck.report.inspect.inspect_data), so the two reports cannot disagree.

``check`` has the Analysis, not inspect's ConnectivityResult; the integrity findings and the
checked flag it needs are the analysis's own.
"""

from __future__ import annotations

from typing import Any

from ..analysis import Analysis

# inspect keys that check reports in its own, richer form
_CHECK_OWNS = ("schema", "findings", "assumptions")


def inspect_keys(analysis: Analysis) -> dict[str, Any]:
    from ..connectivity import ConnectivityResult
    from .inspect import inspect_data

    aligned = not any(f.rule == "netlist-alignment" for f in analysis.integrity)
    conn = ConnectivityResult(findings=list(analysis.integrity),
                              checked=analysis.connectivity_checked, aligned=aligned)
    data = inspect_data(analysis.board, conn)
    return {k: v for k, v in data.items() if k not in _CHECK_OWNS}
