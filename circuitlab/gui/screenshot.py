"""Render the whole main window offscreen to a PNG (``circuitlab FILE --screenshot OUT.png``)."""

import sys

from PySide6.QtWidgets import QApplication


def parse_size(text: str) -> tuple[int, int]:
    """'1600x1000' -> (1600, 1000); raises ValueError with a plain message."""
    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise ValueError(f"--size must look like 1600x1000, not {text!r}") from None
    if not (200 <= w <= 10_000 and 200 <= h <= 10_000):
        raise ValueError(f"--size {text}: width and height must lie between 200 and 10000")
    return w, h


def settle(rounds: int = 5) -> None:
    for _ in range(rounds):
        QApplication.processEvents()


def render_window(window, path: str, size: tuple[int, int]) -> bool:
    """Show ``window`` at ``size``, fit the circuit into the canvas and save a picture of it."""
    window.resize(*size)
    window.show()
    settle()
    window.canvas.fit_to_view()
    window.check_problems()  # normally shortly after an edit; the picture is taken at once
    settle()
    image = window.grab()
    if (window.width(), window.height()) != size:
        print(f"circuitlab: the window needs at least {window.width()}x{window.height()}; "
              "the picture has that size", file=sys.stderr)
    return image.save(path)
