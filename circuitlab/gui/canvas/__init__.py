"""The circuit canvas: graphics items, the scene that mirrors the document, and the editing view."""

from circuitlab.gui.canvas.view import CircuitCanvas

__all__ = ["CircuitCanvas"]
