"""The Examples menu and the first start: ready-made circuits to open, train and take apart.

The example circuits are found relative to the package: the folder
``example_circuits/`` beside the ``circuitlab`` package folder, which is
where a repository checkout (and an editable install of it) keeps them.
An example opens as an untitled copy, so Save asks where to put the user's
own version and the shipped file stays as it is. A banner over the canvas
then shows the example's name and the "Try:" hint from its description.

On the first start (no file given and no recent files) the editor opens
``DEFAULT_EXAMPLE`` the same way.
"""

from pathlib import Path

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QFrame, QHBoxLayout, QLabel, QToolButton

from circuitlab.gui import visual_code as vc
from circuitlab.model import CircuitFileError, load_circuit

EXAMPLES_DIR = Path(__file__).resolve().parent.parent.parent / "example_circuits"
DEFAULT_EXAMPLE = "set_reset_latch.circuit.json"
BANNER_MARGIN = 10


def example_files(folder: Path | None = None) -> list[Path]:
    """The example circuit files, sorted by file name (empty if the folder is missing)."""
    folder = EXAMPLES_DIR if folder is None else folder
    return sorted(folder.glob("*.circuit.json")) if folder.is_dir() else []


def try_hint(description: str) -> str:
    """The one-line hint of an example: its "Try: ..." sentence, else its first sentence."""
    text = " ".join(description.split())
    start = text.find("Try:")
    if start >= 0:
        return text[start:]
    first, dot, _ = text.partition(". ")
    return first + ("." if dot else "")


class ExampleBanner(QFrame):
    """A one-line banner across the top of the canvas, with a button to close it."""

    def __init__(self, canvas):
        super().__init__(canvas)
        self.setObjectName("example_banner")
        self.setFrameShape(QFrame.StyledPanel)
        self.setAutoFillBackground(True)
        self.setStyleSheet(f"#example_banner {{ background: {vc.css(vc.BANNER_FILL)}; border: 1px solid "
                           f"{vc.css(vc.BANNER_RIM)}; border-radius: 4px; }} "
                           f"QLabel {{ color: {vc.css(vc.BANNER_TEXT)}; }}")
        self.label = QLabel(self)
        self.label.setTextFormat(Qt.PlainText)
        self.label.setWordWrap(True)  # one line on a normal canvas, never clipped on a narrow one
        self.close_button = QToolButton(self)
        self.close_button.setText("✕")
        self.close_button.setAutoRaise(True)
        self.close_button.setToolTip("Hide this hint")
        self.close_button.clicked.connect(self.hide)
        row = QHBoxLayout(self)
        row.setContentsMargins(8, 3, 3, 3)
        row.addWidget(self.label, 1)
        row.addWidget(self.close_button)
        self._canvas = canvas
        canvas.installEventFilter(self)
        self.hide()

    def show_hint(self, title: str, hint: str, description: str) -> None:
        self.label.setText(f"{title} — {hint}")
        self.setToolTip(description)
        self._place()
        self.show()
        self.raise_()

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if watched is self._canvas and event.type() == QEvent.Resize:
            self._place()
        return False

    def _place(self) -> None:
        # the banner sits in a margin the canvas keeps free above its viewport: it covers nothing
        width = max(self._canvas.width() - 2 * BANNER_MARGIN, 100)
        self.setFixedWidth(width)
        self.adjustSize()
        self.move(BANNER_MARGIN, BANNER_MARGIN // 2)
        if self.isVisibleTo(self._canvas) or not self.isHidden():
            self._canvas.set_top_margin(self.height() + BANNER_MARGIN)

    def showEvent(self, event) -> None:
        super().showEvent(event)
        self._place()

    def hideEvent(self, event) -> None:
        super().hideEvent(event)
        if self.isHidden():  # hidden for good, not only because the window is
            self._canvas.set_top_margin(0)


class ExamplesMenu(QObject):
    """The window's Examples menu, its banner, and opening examples."""

    def __init__(self, window, folder: Path | None = None):
        super().__init__(window)
        self.window = window
        self.folder = EXAMPLES_DIR if folder is None else folder
        self._opening = False
        self.banner = ExampleBanner(window.canvas)
        self.menu = window.menu("Examples")
        self.menu.aboutToShow.connect(self.fill_menu)
        self.fill_menu()
        window.document.replaced.connect(self._document_replaced)

    def fill_menu(self) -> None:
        """List every example by its circuit name, with its description as tip."""
        self.menu.clear()
        files = example_files(self.folder)
        for path in files:
            try:
                circuit = load_circuit(path)
            except CircuitFileError as exc:
                action = self.menu.addAction(f"{path.name} (cannot be read)")
                action.setToolTip(str(exc))
                action.setEnabled(False)
                continue
            action = QAction(circuit.name, self.menu)
            action.setData(str(path))
            action.setToolTip(circuit.description)
            action.setStatusTip(try_hint(circuit.description))
            action.triggered.connect(lambda _=False, p=path: self.open_example(p))
            self.menu.addAction(action)
        self.menu.setToolTipsVisible(True)
        if not files:
            self.menu.addAction(f"(no examples found in {self.folder})").setEnabled(False)

    def open_example(self, path: str | Path, ask: bool = True) -> bool:
        """Open ``path`` as an untitled copy and show its hint; False if cancelled or unreadable."""
        files = self.window.files
        if ask and not files.maybe_save():
            return False
        circuit = files.read_circuit(path, "The example cannot be opened")
        if circuit is None:
            return False
        self._opening = True
        try:
            self.window.document.replace(circuit, None)
        finally:
            self._opening = False
        hint = try_hint(circuit.description)
        self.banner.show_hint(circuit.name, hint, circuit.description)
        self.window.show_message(f"Opened the example '{circuit.name}'. {hint}", 15000)
        return True

    def open_on_first_start(self) -> bool:
        """On a first start (an empty untitled document, no recent files) open the default example."""
        window = self.window
        if window.document.path is not None or window.document.circuit.units:
            return False
        if window.files.recent_files():
            return False
        path = self.folder / DEFAULT_EXAMPLE
        return path.is_file() and self.open_example(path, ask=False)

    def _document_replaced(self) -> None:
        if not self._opening:
            self.banner.hide()


def setup(window) -> None:
    """Add the Examples menu to ``window`` (an entry of ``circuitlab.gui.panels.PANEL_SETUPS``)."""
    window.examples = ExamplesMenu(window)


def open_on_first_start(window) -> bool:
    """Called by the editor's start-up when no file was given."""
    return window.examples.open_on_first_start()
