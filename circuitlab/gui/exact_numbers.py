"""Numbers shown exactly and read back exactly: the one text form of a value in the editor's fields.

A field shows the shortest text that reads back to the same float (Python's
``repr``), so showing a value and reading the field gives the value back bit
for bit; nothing is rounded for display. Reading refuses what cannot be the
value asked for (not a number, infinite, a fraction where a whole number is
needed) with a plain message, instead of rounding it silently.
"""

import math

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QLineEdit


def format_number(value) -> str:
    """The shortest exact text of ``value``: 1.5e-07, 0.9375, 3000000000, 1 (for 1.0)."""
    if value is None:
        return ""
    if isinstance(value, bool) or isinstance(value, int):
        return str(int(value))
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


def parse_float(text: str) -> float:
    """A finite float from the text; ValueError with a plain message otherwise."""
    t = text.strip().replace("\u2212", "-")
    try:
        v = float(t)
    except ValueError:
        raise ValueError(f"'{text.strip()}' is not a number") from None
    if not math.isfinite(v):
        raise ValueError(f"'{text.strip()}' is not a finite number (the largest is about 1.8e308)")
    return v


def parse_int(text: str) -> int:
    """A whole number from the text (``3000000000``, ``1e6``, ``2_000``); ValueError otherwise."""
    t = text.strip().replace("\u2212", "-")
    try:
        return int(t)
    except ValueError:
        pass
    v = parse_float(t)
    if v != math.floor(v) or abs(v) > 2**53:
        raise ValueError(f"'{text.strip()}' is not a whole number")
    return int(v)


class ExactField(QLineEdit):
    """A text field for one number that shows it exactly and reports only edits the user typed.

    ``committed(text)`` is emitted on Enter or when focus leaves, and only if
    the user changed the text since it was last shown: pressing Enter in an
    untouched field does nothing. ``show_value`` leaves the field alone while
    the user is typing in it. Escape puts the shown value back.
    """

    committed = Signal(str)

    def __init__(self, placeholder: str = "", parent=None):
        super().__init__(parent)
        self.setPlaceholderText(placeholder)
        self.default_placeholder = placeholder
        self._shown = ""
        self.editingFinished.connect(self._finished)

    def is_being_edited(self) -> bool:
        return self.hasFocus() and self.isModified() and self.text() != self._shown

    def show_text(self, text: str, placeholder: str | None = None) -> None:
        """Show ``text`` unless the user is in the middle of an edit."""
        if placeholder is not None:
            self.setPlaceholderText(placeholder)
        if self.is_being_edited():
            return
        self._shown = text
        if self.text() != text:
            self.setText(text)  # resets the modified flag
        self.setModified(False)

    def show_value(self, value) -> None:
        self.show_text(format_number(value))

    def revert(self) -> None:
        self.setText(self._shown)
        self.setModified(False)

    def keyPressEvent(self, event) -> None:
        if event.key() == Qt.Key.Key_Escape and self.isModified():
            self.revert()
            return
        super().keyPressEvent(event)

    def _finished(self) -> None:
        if not self.isModified():
            return
        self.setModified(False)
        if self.text() == self._shown:
            return
        self.committed.emit(self.text())
