"""Artefacts of a fit record: PNG panels and a summary sheet, residual CSV, a self-contained HTML report.

Unlike the engine, this package renders figures and so uses plotly (and kaleido for PNG files);
``tables`` needs neither.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from growthcore.io.writer import atomic_write_bytes, atomic_write_text
from growthcore.report.tables import residual_csv_text, residual_table, write_residual_csv

__all__ = ["residual_csv_text", "residual_table", "write_residual_csv", "write_html", "write_pngs"]

SHEET_NAME = "summary-sheet"


def write_pngs(record: Mapping[str, Any], directory: str | os.PathLike[str], *, size: str = "screen",
               width: int | None = None, height: int | None = None, scale: float | None = None) -> list[Path]:
    """One PNG per panel and the one-page summary sheet into ``directory`` (created if needed).

    ``size`` is ``screen``, ``slide`` or ``print`` (300 dpi); ``width``, ``height`` (CSS pixels) and
    ``scale`` override the panel size (the sheet keeps its page shape but takes ``scale``).
    Raises :class:`growthcore.report.images.ImageExportError` when no browser can draw them.
    """
    from growthcore.errors import GrowthcoreInputError
    from growthcore.report.images import PANEL_SIZES, SHEET_SIZES, custom_size, render_pngs
    from growthcore.report.panels import panel_figures, summary_sheets

    if size not in PANEL_SIZES:
        raise GrowthcoreInputError(f"image size must be one of {', '.join(PANEL_SIZES)}; got {size!r}")
    panel_size = custom_size(PANEL_SIZES[size], width=width, height=height, scale=scale)
    sheet_size = custom_size(SHEET_SIZES[size], scale=scale)
    figures = panel_figures(record, size=(panel_size.width, panel_size.height))
    pages = summary_sheets(record, width=sheet_size.width, height=sheet_size.height)
    names = [*figures, *(SHEET_NAME if k == 0 else f"{SHEET_NAME}-{k + 1}" for k in range(len(pages)))]
    figs = [*figures.values(), *pages]
    sizes = [panel_size] * len(figures) + [sheet_size] * len(pages)
    images = render_pngs(figs, sizes)
    out_dir = Path(directory)
    out_dir.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, png in zip(names, images, strict=True):
        path = out_dir / f"{name}.png"
        atomic_write_bytes(path, png)
        paths.append(path)
    return paths


def write_html(record: Mapping[str, Any], path: str | os.PathLike[str]) -> Path:
    """The self-contained HTML report (see :mod:`growthcore.report.page`)."""
    from growthcore.report.page import report_html

    out = Path(path)
    atomic_write_text(out, report_html(record))
    return out
