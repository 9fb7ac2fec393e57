"""Writer habits on top of synthesized fab outputs (tests only): the same board as
``loopcheck.synth`` writes it, re-written the way other design programs do.

- :func:`bare_excellon`: the drill file with coordinates written without a decimal point, in a
  chosen unit, digit count and zero suppression, with or without the units and format stated;
- :func:`strip_x2`: Gerber files without their X2 file attributes (then names alone tell layers);
- :func:`rename`: files renamed to another program's layer names.
"""

from __future__ import annotations

import re
from pathlib import Path

from loopcheck.readers.drill import read_excellon


def _number(mm: float, units: str, integer: int, decimal: int, zeros: str) -> str:
    value = mm / 25.4 if units == "inch" else mm
    sign = "-" if value < 0 else ""
    digits = f"{round(abs(value) * 10 ** decimal):0{integer + decimal}d}"
    if zeros == "leading":
        digits = digits.lstrip("0") or "0"
    else:
        digits = digits.rstrip("0") or "0"
    return sign + digits


def bare_excellon(path: Path, units: str = "inch", integer: int = 2, decimal: int = 4,
                  zeros: str = "leading", state_units: bool = True, state_format: bool = False,
                  tool_params: str = "") -> Path:
    """Re-write a drill file with bare coordinates (``X011000Y013000``); returns the path.

    units "inch" | "mm"; zeros "leading" (leading zeros left out) | "trailing"; state_units
    writes INCH / METRIC; state_format writes ``;FILE_FORMAT=I:D`` and LZ / TZ; tool_params is
    appended to each tool definition (``F200S65``: feed and speed)."""
    holes = read_excellon(path).holes
    tools: dict[float, int] = {}
    for h in holes:
        tools.setdefault(round(h.diameter_mm, 4), len(tools) + 1)
    lines = ["M48"]
    if state_format:
        lines.append(f";FILE_FORMAT={integer}:{decimal}")
    if state_units:
        word = "INCH" if units == "inch" else "METRIC"
        if state_format:
            word += ",TZ" if zeros == "leading" else ",LZ"
        lines.append(word)
    for d, t in tools.items():
        size = d / 25.4 if units == "inch" else d
        lines.append(f"T{t:02d}C{size:.4f}{tool_params}")
    lines.append("%")
    for d, t in tools.items():
        lines.append(f"T{t:02d}")
        for h in holes:
            if round(h.diameter_mm, 4) == d and h.end is None:
                lines.append(f"X{_number(h.x_mm, units, integer, decimal, zeros)}"
                             f"Y{_number(h.y_mm, units, integer, decimal, zeros)}")
    lines.append("M30")
    path.write_text("\n".join(lines) + "\n")
    return path


def strip_x2(path: Path) -> Path:
    """Remove the X2 file attributes (``%TF...*%``) from a Gerber file."""
    text = path.read_text()
    path.write_text(re.sub(r"^%TF[^\n]*\n", "", text, flags=re.M))
    return path


def rename(path: Path, new_name: str) -> Path:
    target = path.with_name(new_name)
    path.rename(target)
    return target
