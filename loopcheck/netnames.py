"""Net names cut by the netlist's writer, restored from the copper's Gerber X2 net names.

IPC-D-356A gives a net name 14 columns. Writers that do not use the standard's ``NNAME``
aliases cut a longer name to fit: some keep its last 14 characters (``/Radio/PA_BOOST`` is
written ``RADIO/PA_BOOST``, upper-cased, characters outside printable ASCII as ``?``), and
when two names cut to the same 14 characters, some keep the last 10 and append ``#1``,
``#2``. The netlist alone cannot give the full name back; the copper can, where its Gerber
files carry X2 net attributes (``%TO.N,<name>*%``, Ucamco, "The Gerber Layer Format
Specification", revision 2023.08, section 5.6.13).

What is done (``restore_cut_names``):

- each pad whose netlist name may have been cut (``Netlist.maybe_cut_names``) is looked up in
  the X2-attributed copper of its layers at its centre;
- an X2 name whose cut form (the writer's rule above) equals the netlist name is that net's
  full name. One full name: the netlist name stays the net's identity (``Pad.net``, what
  every stage and report shows, and what a project's expected names use), and
  ``Board.net_full_names`` maps it to the full name, shown once in ``inspect``;
- two or more full names behind one netlist name are two nets that the cut merged: their
  pads are kept apart, each under its full X2 name (the only names that tell them apart),
  and an assumption says so. Pads of that name with no X2 copper under them keep the
  netlist name.

Nothing is restored where the copper carries no X2 net names, and an X2 name that does not
end like the netlist name is left alone (a disagreement between netlist and copper is the
connectivity check's business, not this module's).
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Iterable

import numpy as np
import shapely

from .board import Board

FIELD = 14                                     # IPC-D-356A net name columns 4-17
_UNIQUIFIED = re.compile(r"(?P<base>.{1,12})#\d+$")


def cut_form(full: str) -> str:
    """The name as a writer that keeps the last 14 characters writes it (upper case, ``?`` for
    characters outside printable ASCII). Shorter names are returned unchanged in content."""
    s = "".join(ch if 33 <= ord(ch) <= 126 else "?" for ch in full).upper()
    return s[-FIELD:]


def may_be_cut_from(cut: str, full: str) -> bool:
    """True when ``cut`` (a netlist name) is what a writer makes of the longer ``full``:
    its last 14 characters, or (two names with the same tail) its last characters + ``#n``."""
    if len(full) <= FIELD:
        return False
    if cut_form(full) == cut.upper():
        return True
    m = _UNIQUIFIED.fullmatch(cut)
    return bool(m) and cut_form(full).endswith(m["base"].upper())


def maybe_cut(name: str) -> bool:
    """A netlist name that may have been cut: it fills the field, or ends in ``#n``."""
    return len(name) == FIELD or bool(_UNIQUIFIED.fullmatch(name))


def _could_match(full: str, cut_names: set[str], bases: list[str]) -> bool:
    if len(full) <= FIELD:
        return False
    form = cut_form(full)
    return form in cut_names or any(form.endswith(b) for b in bases)


def _x2_names_at(board: Board, pads: list, wanted: set[str]) -> list[set[str]]:
    """For each pad, the X2 net names (only those that could be cut to a wanted name) of the
    copper under its centre on its layers."""
    found: list[set[str]] = [set() for _ in pads]
    if not pads:
        return found
    cut_names = {w.upper() for w in wanted}
    bases = [m["base"].upper() for m in map(_UNIQUIFIED.fullmatch, wanted) if m]
    points = shapely.points(np.array([(p.x_mm, p.y_mm) for p in pads], dtype=float))
    for layer in board.layers:
        if not layer.net_copper:
            continue
        mine = np.array([k for k, p in enumerate(pads) if layer.index in p.layers], dtype=int)
        if len(mine) == 0:
            continue
        names = [n for n in layer.net_copper if _could_match(n, cut_names, bases)]
        if not names:
            continue
        tree = shapely.STRtree([layer.net_copper[n] for n in names])
        pad_i, geom_i = tree.query(points[mine], predicate="intersects")
        for a, b in zip(pad_i.tolist(), geom_i.tolist()):
            found[int(mine[a])].add(names[b])
    return found


def restore_cut_names(board: Board, candidates: Iterable[str]) -> None:
    """Restore cut netlist names from X2 net names (see the module docstring); changes
    ``board`` in place: ``net_full_names``, ``assumptions`` and, where one cut name merged two
    nets, the ``net`` of those pads."""
    wanted = {name for name in candidates if name}
    if not wanted or not any(layer.net_copper for layer in board.layers):
        return
    index = [k for k, p in enumerate(board.pads) if p.net in wanted]
    pads = [board.pads[k] for k in index]
    under = _x2_names_at(board, pads, wanted)
    per_name: dict[str, dict[str, list[int]]] = {}
    for k, pad, x2 in zip(index, pads, under):
        for full in x2:
            if may_be_cut_from(pad.net, full):
                per_name.setdefault(pad.net, {}).setdefault(full, []).append(k)
    if not per_name:
        return
    restored: dict[str, str] = {}
    split: dict[str, list[str]] = {}
    new_pads = list(board.pads)
    for name, fulls in sorted(per_name.items()):
        if len(fulls) == 1:
            restored[name] = next(iter(fulls))
            continue
        split[name] = sorted(fulls)
        taken: set[int] = set()
        for full, ks in sorted(fulls.items()):
            for k in ks:
                if k not in taken:          # a pad under two of them stays with the first
                    new_pads[k] = dataclasses.replace(new_pads[k], net=full)
                    taken.add(k)
    board.net_full_names.update(restored)
    if split:
        board.pads = new_pads
        for cached in ("nets", "components", "terminals"):
            board.__dict__.pop(cached, None)
    parts = []
    if restored:
        first = sorted(restored)[0]
        parts.append(f"{len(restored)} net name{'s' if len(restored) != 1 else ''} cut to "
                     f"{FIELD} characters by the netlist's writer restored from the copper's "
                     f"Gerber X2 net names (e.g. {first!r} is {restored[first]!r}); the netlist "
                     "names are kept as the nets' names")
    if split:
        first = sorted(split)[0]
        parts.append(f"{len(split)} cut net name{'s' if len(split) != 1 else ''} stood for more "
                     f"than one net in the copper's X2 names (e.g. {first!r}: "
                     f"{', '.join(repr(f) for f in split[first])}); those nets are kept apart "
                     "under their X2 names")
    board.assumptions.append("; ".join(parts))
