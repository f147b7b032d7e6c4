"""Start the editor: the application object, the main window, the screenshot mode."""

import importlib
import os
import sys

# Hooks run in --screenshot mode after the file is loaded and before the picture is taken:
# "module:function" taking (window, args). Other parts of the editor add theirs here.
BEFORE_SCREENSHOT: list[str] = ["circuitlab.gui.training.screenshot:train_before_screenshot",
                                 "circuitlab.gui.analysis.screenshot:analyse_before_screenshot"]


def make_application(argv: list[str] | None = None):
    """The QApplication (made once), named so QSettings and QStandardPaths use 'circuitlab'."""
    from PySide6.QtCore import qInstallMessageHandler
    from PySide6.QtWidgets import QApplication

    if QApplication.instance() is None:
        qInstallMessageHandler(_quiet_offscreen_notes)
    app = QApplication.instance() or QApplication(argv if argv is not None else sys.argv[:1])
    app.setOrganizationName("circuitlab")
    app.setApplicationName("circuitlab")
    app.setApplicationDisplayName("circuitlab")
    return app


def _quiet_offscreen_notes(mode, context, message: str) -> None:
    """Pass Qt's messages on to standard error, except the offscreen platform's note that it
    cannot resize windows to their hints, which it prints on every dock change in screenshot mode."""
    if message != "This plugin does not support propagateSizeHints()":
        print(message, file=sys.stderr)


def run_editor(args) -> int:
    """Open the editor on ``args.file``; with ``args.screenshot``, render offscreen and exit."""
    screenshot = getattr(args, "screenshot", None)
    if screenshot:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"
        from circuitlab.gui.screenshot import parse_size
        try:
            size = parse_size(args.size)
        except ValueError as exc:
            print(f"circuitlab: {exc}", file=sys.stderr)
            return 2
    app = make_application()
    from PySide6.QtCore import QTimer

    from circuitlab.gui.main_window import MainWindow

    window = MainWindow(restore_layout=not screenshot)
    if args.file:
        from circuitlab.model import CircuitFileError, load_circuit
        if screenshot:
            try:
                circuit = load_circuit(args.file)
            except CircuitFileError as exc:
                print(f"circuitlab: {exc}", file=sys.stderr)
                return 1
            window.document.replace(circuit, os.path.abspath(args.file))
        else:
            window.files.open_path(args.file, ask=False)
    elif not screenshot:
        from circuitlab.gui.examples_menu import open_on_first_start
        open_on_first_start(window)
    if screenshot:
        from circuitlab.gui.screenshot import render_window
        for entry in BEFORE_SCREENSHOT:
            module, func = entry.split(":")
            getattr(importlib.import_module(module), func)(window, args)
        ok = render_window(window, screenshot, size)
        window.shutdown(save_layout=False)
        app.aboutToQuit.emit()  # no event loop ran: give quit-time clean-ups their turn
        if not ok:
            print(f"circuitlab: could not write {screenshot}", file=sys.stderr)
            return 1
        return 0
    window.show()
    QTimer.singleShot(0, window.files.offer_recovery)
    return app.exec()
