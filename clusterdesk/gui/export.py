"""Writing the window's plots as PNG or SVG, and the analysis's tables and report.

PNG goes through pyqtgraph's ImageExporter (a new exporter per export). SVG
does not use pyqtgraph's SVG exporter, which raises ValueError on PySide6
6.11 and later; the scene is rendered through QtSvg's QSvgGenerator instead.
Files are written to a temporary name next to the target and moved into place,
so a failed export never leaves half a file.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from PySide6.QtCore import QRectF, QSize
from PySide6.QtGui import QPainter
from PySide6.QtSvg import QSvgGenerator

from ..errors import InputError
from ..report.tables import write_tables

__all__ = ["export_png", "export_svg", "export_tables", "report_writer", "export_report"]


def _temporary_beside(path: Path) -> Path:
    handle, name = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=path.suffix, dir=path.parent)
    os.close(handle)
    return Path(name)


def _check_folder(path: Path) -> None:
    if not path.parent.is_dir():
        raise InputError(f"The folder {path.parent} does not exist; choose another place to save.")


def export_png(plot_item, path, *, width: int | None = None) -> Path:
    """Write a plot as a PNG image.

    Parameters
    ----------
    plot_item : pyqtgraph.PlotItem
    path : str or Path
    width : int, optional
        Image width in pixels (default: twice the plot's width on screen, for print).

    Returns
    -------
    Path
    """
    from pyqtgraph.exporters import ImageExporter

    path = Path(path)
    _check_folder(path)
    exporter = ImageExporter(plot_item)  # a new exporter per export
    rect = plot_item.sceneBoundingRect()
    exporter.parameters()["width"] = int(width or max(2 * rect.width(), 800))
    temporary = _temporary_beside(path)
    try:
        exporter.export(str(temporary))
        if temporary.stat().st_size == 0:
            raise InputError(f"The image for {path.name} came out empty; make the window larger and try again.")
        os.replace(temporary, path)
    finally:
        temporary.unlink(missing_ok=True)
    return path


def export_svg(plot_item, path, *, title: str = "ClusterDesk plot") -> Path:
    """Write a plot as an SVG drawing (vector), rendered through QSvgGenerator.

    Parameters
    ----------
    plot_item : pyqtgraph.PlotItem
    path : str or Path
    title : str
        Stored as the drawing's title.

    Returns
    -------
    Path
    """
    path = Path(path)
    _check_folder(path)
    scene = plot_item.scene()
    source = plot_item.sceneBoundingRect()
    size = QSize(int(source.width()), int(source.height()))
    temporary = _temporary_beside(path)
    try:
        generator = QSvgGenerator()
        generator.setFileName(str(temporary))
        generator.setSize(size)
        generator.setViewBox(QRectF(0, 0, size.width(), size.height()))
        generator.setTitle(title)
        generator.setDescription("Written by ClusterDesk")
        painter = QPainter()
        if not painter.begin(generator):
            raise InputError(f"{path.name} could not be written; check that the folder is writable.")
        try:
            painter.setRenderHint(QPainter.RenderHint.Antialiasing)
            scene.render(painter, QRectF(0, 0, size.width(), size.height()), source)
        finally:
            painter.end()
        os.replace(temporary, path)
    finally:
        temporary.unlink(missing_ok=True)
    return path


def export_tables(analysis, folder) -> dict:
    """Write ranking.csv, components.csv, assignments.csv and summary.json into ``folder``.

    Returns
    -------
    dict of str to Path
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise InputError(f"{folder} is not a folder; choose a folder for the tables.")
    return write_tables(analysis, folder)


def report_writer():
    """The HTML report writer, or None when this version has none."""
    try:
        from ..report.html import write_report
    except ImportError:
        return None
    return write_report


def export_report(analysis, path) -> Path:
    """Write the HTML report of the analysis to ``path``."""
    writer = report_writer()
    if writer is None:
        raise InputError("This version of ClusterDesk has no report writer yet.")
    path = Path(path)
    _check_folder(path)
    return Path(writer(analysis, path))
