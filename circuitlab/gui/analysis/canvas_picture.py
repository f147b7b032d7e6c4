"""The canvas as a picture file (PNG at a chosen width, or SVG), also without a window.

``export FILE OUT.png`` uses this offscreen: it builds the canvas scene of the
circuit, exactly as the editor draws it, and renders the part the units and
arrows cover.
"""

from pathlib import Path

from PySide6.QtCore import QRectF, QSize, Qt
from PySide6.QtGui import QImage, QPainter
from PySide6.QtSvg import QSvgGenerator

DEFAULT_WIDTH = 1600   # a picture fit for a paper figure
MARGIN = 30.0


def _source_rect(scene) -> QRectF:
    rect = scene.content_rect()
    if rect.isEmpty():
        rect = QRectF(-100, -100, 200, 200)
    return rect.adjusted(-MARGIN, -MARGIN, MARGIN, MARGIN)


def render_scene(scene, path: str | Path, width: int = DEFAULT_WIDTH) -> bool:
    """Draw ``scene``'s circuit into ``path``: SVG if it ends in .svg, else a PNG ``width`` pixels wide."""
    source = _source_rect(scene)
    height = max(1, round(width * source.height() / source.width()))
    scene.clearSelection()
    if str(path).lower().endswith(".svg"):
        generator = QSvgGenerator()
        generator.setFileName(str(path))
        generator.setSize(QSize(width, height))
        generator.setViewBox(QRectF(0, 0, width, height))
        generator.setTitle("circuitlab circuit")
        painter = QPainter(generator)
        try:
            scene.render(painter, QRectF(0, 0, width, height), source, Qt.AspectRatioMode.KeepAspectRatio)
        finally:
            painter.end()
        return Path(path).exists()
    image = QImage(width, height, QImage.Format.Format_ARGB32)
    image.fill(Qt.GlobalColor.white)
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    painter.setRenderHint(QPainter.RenderHint.TextAntialiasing)
    try:
        scene.render(painter, QRectF(0, 0, width, height), source, Qt.AspectRatioMode.KeepAspectRatio)
    finally:
        painter.end()
    return image.save(str(path), "PNG")


def save_circuit_picture(circuit, path: str | Path, width: int = DEFAULT_WIDTH) -> bool:
    """Render ``circuit``'s canvas offscreen to ``path`` (needs no window or screen)."""
    import os
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from circuitlab.gui.app import make_application
    from circuitlab.gui.canvas.scene import CircuitScene
    from circuitlab.gui.document import Document

    make_application()
    document = Document(circuit)
    scene = CircuitScene(document)
    try:
        return render_scene(scene, path, width)
    finally:
        scene.deleteLater()
        document.deleteLater()
