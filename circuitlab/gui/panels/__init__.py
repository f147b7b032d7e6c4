"""Dockable panels of the main window.

Each entry of ``PANEL_SETUPS`` names a function ``setup(window)`` that builds
its panel(s) and docks them with ``window.add_panel(...)`` (it may also add
actions with ``window.menu(name)`` and ``window.tool_bar(name)``). Modules are
imported only when the window is built. To add a panel, append one line here.
"""

import importlib

PANEL_SETUPS: list[str] = [
    "circuitlab.gui.panels.properties:setup",
    "circuitlab.gui.panels.sequences_panel:setup",
    "circuitlab.gui.training:setup",
    "circuitlab.gui.examples_menu:setup",
    "circuitlab.gui.analysis.panel:setup",
]


def setup_panels(window) -> None:
    """Run every panel setup function on ``window``, in list order."""
    for entry in PANEL_SETUPS:
        module, func = entry.split(":")
        getattr(importlib.import_module(module), func)(window)
