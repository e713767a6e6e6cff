"""Static PNG images of figures through plotly's kaleido and a local Chromium or Chrome.

kaleido (1.x) drives a browser found by choreographer: the ``BROWSER_PATH`` environment variable
if set, else ``chromium``, ``google-chrome`` and similar names on ``PATH``. We look first, so that
a missing browser gives one clear sentence instead of a traceback.
"""

from __future__ import annotations

import logging
import os
import shutil
import struct
import warnings
import zlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from growthcore.errors import GrowthcoreInputError

_BROWSER_NAMES = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "chrome")
NO_BROWSER = ("static PNG export needs Chromium or Chrome and none was found: install it (for example the "
              "'chromium' package) or set BROWSER_PATH to its executable")


class ImageExportError(GrowthcoreInputError):
    """Static images cannot be made here (no browser, or the browser failed)."""


@dataclass(frozen=True)
class ImageSize:
    """Layout size in CSS pixels and the scale factor; the PNG has ``round(width·scale)`` pixels across.

    ``dpi`` is written into the PNG (pHYs chunk) so that page-layout programs place a print image
    at its intended physical size; None leaves it out.
    """

    name: str
    width: int
    height: int
    scale: float = 1.0
    dpi: int | None = None

    @property
    def pixels(self) -> tuple[int, int]:
        return round(self.width * self.scale), round(self.height * self.scale)


#: Single panels. Print: 6.5 × 4.5 in (a text-width figure) at 300 dpi.
PANEL_SIZES: dict[str, ImageSize] = {
    "screen": ImageSize("screen", 960, 600, 1.0),
    "slide": ImageSize("slide", 1280, 720, 1.5),
    "print": ImageSize("print", 650, 450, 3.0, 300),
}
#: The one-page summary sheet. Print: A4 portrait (8.27 × 11.69 in) at 300 dpi; slide: 16:9.
SHEET_SIZES: dict[str, ImageSize] = {
    "screen": ImageSize("screen", 1200, 1550, 1.0),
    "slide": ImageSize("slide", 1280, 720, 1.5),
    "print": ImageSize("print", 827, 1169, 3.0, 300),
}
SIZE_NAMES = tuple(PANEL_SIZES)


def custom_size(base: ImageSize, *, width: int | None = None, height: int | None = None,
                scale: float | None = None) -> ImageSize:
    """``base`` with any of width, height (CSS pixels) and scale replaced; checks the values."""
    w, h, s = width or base.width, height or base.height, scale or base.scale
    if not (50 <= w <= 10000 and 50 <= h <= 10000):
        raise GrowthcoreInputError(f"image width and height must be 50..10000 pixels; got {w} × {h}")
    if not 0.1 <= s <= 10:
        raise GrowthcoreInputError(f"image scale must be 0.1..10; got {s:g}")
    if w * s * h * s > 200e6:
        raise GrowthcoreInputError(f"an image of {round(w * s)} × {round(h * s)} pixels is too large to make")
    return ImageSize(base.name, int(w), int(h), float(s), base.dpi)


def find_browser() -> str | None:
    """The browser kaleido will use, or None."""
    path = os.environ.get("BROWSER_PATH")
    if path:
        return path if os.path.isfile(path) and os.access(path, os.X_OK) else None
    for name in _BROWSER_NAMES:
        found = shutil.which(name)
        if found:
            return found
    return None


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk."""
    if data[:8] != b"\x89PNG\r\n\x1a\n" or data[12:16] != b"IHDR":
        raise ValueError("not a PNG image")
    return struct.unpack(">II", data[16:24])


def with_dpi(data: bytes, dpi: int) -> bytes:
    """The PNG with a pHYs chunk saying ``dpi`` (replacing any there) right after IHDR."""
    ppm = round(dpi / 0.0254)
    body = b"pHYs" + struct.pack(">IIB", ppm, ppm, 1)
    chunk = struct.pack(">I", 9) + body + struct.pack(">I", zlib.crc32(body) & 0xFFFFFFFF)
    out, pos = [data[:8]], 8
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        end = pos + 12 + length
        if kind != b"pHYs":
            out.append(data[pos:end])
        if kind == b"IHDR":
            out.append(chunk)
        pos = end
    return b"".join(out)


def render_pngs(figures: Sequence[Mapping[str, Any]], sizes: Sequence[ImageSize]) -> list[bytes]:
    """PNG bytes of each figure at its size, with one browser session for all of them."""
    if len(figures) != len(sizes):
        raise ValueError("one size per figure")
    browser = find_browser()
    if browser is None:
        raise ImageExportError(NO_BROWSER)
    try:
        import kaleido
        import plotly.io as pio
    except ImportError as exc:  # pragma: no cover - both are dependencies
        raise ImageExportError(f"static PNG export needs plotly and kaleido: {exc}") from None
    os.environ.setdefault("BROWSER_PATH", browser)
    out = []
    # choreographer logs (and then ignores) partial pipe reads of large images as tracebacks
    pipe_log = logging.getLogger("choreographer.channels.pipe")
    level = pipe_log.level
    pipe_log.setLevel(logging.CRITICAL)
    kaleido.start_sync_server(silence_warnings=True)
    try:
        for fig, size in zip(figures, sizes, strict=True):
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message="The kopts argument is ignored")
                fig = dict(fig, layout=dict(fig.get("layout", {}), width=size.width, height=size.height))
                png = pio.to_image(fig, format="png", width=size.width, height=size.height, scale=size.scale)
            out.append(with_dpi(png, size.dpi) if size.dpi else png)
    except RuntimeError as exc:  # kaleido reports a missing or failing browser this way
        raise ImageExportError(f"static PNG export failed in the browser: {str(exc).splitlines()[0]}") from None
    finally:
        kaleido.stop_sync_server(silence_warnings=True)
        pipe_log.setLevel(level)
    return out
