"""Export of the training views: the picture (PNG via pyqtgraph's exporter, SVG) and the data (CSV).

SVG is drawn with Qt's own ``QSvgGenerator`` from the item's part of the
scene: pyqtgraph 0.14's SVG exporter fails to parse the path data that Qt
6.11 writes ("not enough values to unpack"), for every plot.
"""

import csv
import numbers
from pathlib import Path

import pyqtgraph.exporters as exporters
from PySide6.QtCore import QRectF, QSize
from PySide6.QtGui import QPainter
from PySide6.QtSvg import QSvgGenerator
from PySide6.QtWidgets import QFileDialog, QMenu, QMessageBox, QToolButton


def export_png(item, path: str | Path, width: int | None = None) -> None:
    """Render a pyqtgraph item (a PlotItem or a layout) to a PNG file."""
    exporter = exporters.ImageExporter(item)
    if width:
        exporter.parameters()["width"] = int(width)
    exporter.export(str(path))


def export_svg(item, path: str | Path) -> None:
    """Render a pyqtgraph item's region of its scene as vector graphics."""
    source = item.sceneBoundingRect()
    generator = QSvgGenerator()
    generator.setFileName(str(path))
    generator.setSize(QSize(int(source.width()), int(source.height())))
    generator.setViewBox(QRectF(0, 0, source.width(), source.height()))
    generator.setTitle("circuitlab plot")
    painter = QPainter(generator)
    try:
        item.scene().render(painter, QRectF(0, 0, source.width(), source.height()), source)
    finally:
        painter.end()


def csv_cell(value):
    """A table value as CSV text that ``float()`` reads back to the same number.

    NumPy scalars are plain Python numbers first: ``repr(np.float64(1.0))`` is
    ``'np.float64(1.0)'``, which no CSV reader takes for a number.
    """
    if isinstance(value, bool) or not isinstance(value, numbers.Number):
        return value
    if isinstance(value, numbers.Integral):
        return str(int(value))
    return repr(float(value))


def write_csv(path: str | Path, header: list[str], rows: list[list]) -> None:
    """Plain comma-separated values with one header line (full float precision)."""
    with open(path, "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(header)
        out.writerows([csv_cell(v) for v in row] for row in rows)


def export_button(parent, name: str, item_of, table_of, more_tables: dict | None = None) -> QToolButton:
    """A small "Export" button with PNG / SVG / CSV entries for one view.

    ``item_of()`` returns the pyqtgraph item to draw, ``table_of()`` returns
    ``(header, rows)``; both are called at export time so they see the latest
    data. ``more_tables`` maps a label to another ``table_of`` (a view with
    several plots offers each plot's numbers).
    """
    button = QToolButton(parent)
    button.setText("Export")
    button.setToolTip(f"Save the {name} as a picture (PNG, SVG) or its numbers as CSV")
    button.setPopupMode(QToolButton.ToolButtonPopupMode.InstantPopup)
    menu = QMenu(button)
    stem = name.replace(" ", "_")

    def save(kind: str, table=table_of, suffix: str = "") -> None:
        filters = {"png": "PNG image (*.png)", "svg": "SVG drawing (*.svg)", "csv": "CSV table (*.csv)"}
        path, _ = QFileDialog.getSaveFileName(parent, f"Export {name}", f"{stem}{suffix}.{kind}",
                                              filters[kind])
        if not path:
            return
        try:
            if kind == "png":
                export_png(item_of(), path)
            elif kind == "svg":
                export_svg(item_of(), path)
            else:
                write_csv(path, *table())
        except OSError as exc:
            QMessageBox.warning(parent, f"Export {name}", f"Could not write {path}: {exc.strerror or exc}")

    for kind, label in (("png", "Picture (PNG)..."), ("svg", "Drawing (SVG)..."), ("csv", "Data (CSV)...")):
        menu.addAction(label, lambda k=kind: save(k))
    for label, table in (more_tables or {}).items():
        menu.addAction(f"Data: {label} (CSV)...",
                       lambda t=table, l=label: save("csv", t, "_" + l.replace(" ", "_")))
    button.setMenu(menu)
    return button
