"""Part values as written on schematics and BOMs, read as numbers in SI units.

Spellings understood (spaces and a trailing unit are ignored):

- plain numbers: ``0.068``, ``1.5e-3``;
- an SI prefix after the number: ``100n``, ``10uF``, ``22µH``, ``2.2k``, ``68m`` (milli), ``1M``
  (mega), ``2G`` (giga); ``f p n u µ m k K M G``;
- the prefix (or ``R`` for ohms) in place of the decimal point: ``4k7``, ``2G2``, ``4u7``,
  ``0R1``, ``1R5``, ``R068``, ``4Ω3``;
- an ``R`` after a prefix only says ohms: ``68mR``;
- units: ``ohm``/``ohms``/``Ω``, ``F``/``farad``, ``H``/``henry``, ``V``, ``A``, ``W``.

Anything else (a part number, "DNP") reads as None.
"""

from __future__ import annotations

import re

__all__ = ["parse_value"]

SI_PREFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3,
             "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "R": 1.0, "r": 1.0}

_UNIT = re.compile(r"(?i)(ohms?|Ω|farads?|henrys?|henries|volts?|amps?|watts?|[FHVAW])$")
_PREFIXES = "fpnuµμmkKMGRr"
_PLAIN = re.compile(rf"(\d+(?:\.\d*)?|\.\d+)([eE][-+]?\d+)?([{_PREFIXES}]?)")
_INFIX = re.compile(rf"(\d*)([{_PREFIXES}])(\d+)")


def parse_value(text: str | float | None) -> float | None:
    """A part value in SI units: "0R1" -> 0.1, "68mR" -> 0.068, "4k7" -> 4700.0, "10uF" -> 1e-05.

    Parameters
    ----------
    text : the value as written (or already a number)

    Returns
    -------
    The value [ohm, F, H, V, A or W as the part's kind implies], or None when the text holds no
    value.
    """
    if text is None or isinstance(text, bool):
        return None
    if isinstance(text, (int, float)):
        return float(text)
    s = str(text).strip().replace(" ", "")
    s = re.sub(r"(?<=\d)[Ωω](?=\d)", "R", s)          # "4Ω3": the ohm sign in place of the point
    s = _UNIT.sub("", s)
    s = re.sub(r"(?<=[fpnuµμmkKMG])[Rr]$", "", s)       # "68mR": the R only says ohms
    m = _PLAIN.fullmatch(s)
    if m:
        number, exponent, prefix = m.groups()
        value = float(number + (exponent or ""))
        return value * SI_PREFIX[prefix] if prefix else value
    m = _INFIX.fullmatch(s)
    if m:
        whole, prefix, frac = m.groups()
        return float(f"{whole or 0}.{frac}") * SI_PREFIX[prefix]
    return None
