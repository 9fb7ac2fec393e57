"""Outside references for copper area: two Gerber renderers nobody on this project wrote.

* gerbv (Debian package, 2.9.x): anti-aliased PNG export, white on black; the copper area is the
  summed coverage, sum(pixel) / 255 times the area of one pixel.
* pygerber 2.4.3 (PyPI): its raster renderer (no anti-aliasing), dark and region colours white,
  background and clear black; the area is the count of white pixels times the pixel area.

Both render the whole layer unclipped, so they are compared with loopcheck's unclipped layer.
Pillow (a pygerber dependency) decodes the PNGs.
"""

from __future__ import annotations

import io
import math
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np

GERBV_NAME = "gerbv 2.x anti-aliased PNG export, coverage summed"
PYGERBER_NAME = "pygerber 2.4.3 RasterRenderer2 (binary raster), pixels counted"

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus"


def gerbv_available() -> bool:
    return shutil.which("gerbv") is not None


def pygerber_available() -> bool:
    try:
        import pygerber  # noqa: F401
    except ImportError:
        return False
    return True


def choose_dpi(width_mm: float, height_mm: float, max_pixels: float = 60e6,
               lo: int = 1000, hi: int = 4000) -> int:
    """Highest dpi in [lo, hi] whose image of the given extent stays under ``max_pixels``."""
    area_in2 = max(width_mm, 0.01) * max(height_mm, 0.01) / 25.4 ** 2
    dpi = int(math.sqrt(max_pixels / area_in2))
    return max(lo, min(dpi, hi))


def gerbv_area_mm2(path, dpi: int, timeout_s: float = 300.0) -> float:
    """Copper area [mm2] of one Gerber file as gerbv renders it (anti-aliased coverage summed)."""
    from PIL import Image

    Image.MAX_IMAGE_PIXELS = None
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "layer.png"
        cmd = ["gerbv", "--export=png", f"--dpi={dpi}", "--border=2", "--antialias",
               "--foreground=#FFFFFFFF", "--background=#000000", f"--output={out}", str(path)]
        subprocess.run(cmd, check=True, capture_output=True, timeout=timeout_s)
        with Image.open(out) as im:
            img = np.asarray(im.convert("L"), dtype=np.float64)
    pixel_mm2 = (25.4 / dpi) ** 2
    return float(img.sum() / 255.0 * pixel_mm2)


def pygerber_area_mm2(path, dpmm: int = 40) -> float:
    """Copper area [mm2] of one Gerber file as pygerber's raster renderer draws it."""
    from PIL import Image
    from pygerber.backend.rasterized_2d.color_scheme import ColorScheme
    from pygerber.common.rgba import RGBA
    from pygerber.gerberx3.api.v2 import GerberFile, ImageFormatEnum

    white, black = RGBA.from_rgba(255, 255, 255, 255), RGBA.from_rgba(0, 0, 0, 255)
    scheme = ColorScheme(background_color=black, clear_color=black, solid_color=white,
                         clear_region_color=black, solid_region_color=white)
    Image.MAX_IMAGE_PIXELS = None
    parsed = GerberFile.from_file(path).parse()
    buf = io.BytesIO()
    parsed.render_raster(buf, color_scheme=scheme, dpmm=dpmm, image_format=ImageFormatEnum.PNG)
    buf.seek(0)
    with Image.open(buf) as im:
        img = np.asarray(im.convert("L"), dtype=np.float64)
    return float(img.sum() / 255.0 / dpmm ** 2)


def relative_difference(value: float, reference: float) -> float:
    return abs(value - reference) / reference if reference else abs(value)


def gerbv_area_of(path, geometry, max_pixels: float = 16e6) -> tuple[float, int]:
    """gerbv's copper area [mm2] of ``path`` at the highest dpi that keeps an image of
    ``geometry``'s extent under ``max_pixels``, and that dpi."""
    x0, y0, x1, y1 = geometry.bounds
    dpi = choose_dpi(x1 - x0, y1 - y0, max_pixels=max_pixels)
    return gerbv_area_mm2(path, dpi), dpi
