"""``--show-analysis PAGE`` for the screenshot mode: compute every analysis page and show one of them."""

import time

from PySide6.QtWidgets import QApplication

PAGES = ("horizon", "fixed", "noise", "space", "predictions")


def analyse_before_screenshot(window, args, timeout: float = 120.0) -> None:
    """Listed in ``gui.app.BEFORE_SCREENSHOT``: press every page's button, wait, show ``args.show_analysis``."""
    key = getattr(args, "show_analysis", None)
    panel = getattr(window, "analysis", None)
    if not key or panel is None:
        return
    dock = window.panel("analysis")
    for other in ("training_unrolled", "training_curves", "training_contributions"):
        d = window.panel(other)
        if d is not None:
            d.hide()  # the picture is of the analysis: give it the whole bottom row
    activity = window.panel("training_activity")
    if activity is not None and dock not in window.tabifiedDockWidgets(activity):
        window.tabifyDockWidget(activity, dock)
    dock.show()
    dock.raise_()
    for page in panel.pages.values():
        page.compute()
    deadline = time.monotonic() + timeout
    while any(p.running is not None for p in panel.pages.values()) and time.monotonic() < deadline:
        QApplication.processEvents()
        time.sleep(0.01)
    panel.setCurrentWidget(panel.pages[key])
    from PySide6.QtCore import Qt
    from circuitlab.gui.screenshot import parse_size
    w, h = parse_size(getattr(args, "size", "1600x1000"))
    window.resize(w, h)
    window.show()
    QApplication.processEvents()
    window.resizeDocks([dock], [int(h * 0.58)], Qt.Orientation.Vertical)
    dock.raise_()
