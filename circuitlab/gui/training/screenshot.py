"""``--train-epochs N`` for the screenshot mode: train N epochs in the worker, then show the final state."""

import time

from PySide6.QtWidgets import QApplication

from circuitlab.gui.training.controller import RUNNING


def train_before_screenshot(window, args, timeout: float = 600.0) -> None:
    """Listed in ``gui.app.BEFORE_SCREENSHOT``: train ``args.train_epochs`` epochs and wait for them."""
    epochs = int(getattr(args, "train_epochs", 0) or 0)
    training = getattr(window, "training", None)
    if epochs <= 0 or training is None:
        return
    from circuitlab.gui.screenshot import parse_size
    from circuitlab.gui.training import arrange_docks
    size = parse_size(getattr(args, "size", "1600x1000"))
    window.resize(*size)
    window.show()
    QApplication.processEvents()
    arrange_docks(window, *size)
    train_epochs(training, epochs, timeout)
    training.controller.shutdown()  # the views keep the final state; no thread outlives the picture
    # show what the contributions view is for: the first connection's copies
    conns = window.document.circuit.connections
    if conns:
        training.views.select_connection(*conns[0].key)


def train_epochs(training, epochs: int, timeout: float = 600.0) -> bool:
    """Run exactly ``epochs`` epochs through the worker and wait; False if they did not finish in time."""
    controller = training.controller
    controller.stop()
    controller.shutdown()
    controller.epoch_limit = epochs
    try:
        if not controller.train():
            return False
        deadline = time.monotonic() + timeout
        while controller.state == RUNNING and time.monotonic() < deadline:
            QApplication.processEvents()
            time.sleep(0.005)
        QApplication.processEvents()
        return controller.state != RUNNING
    finally:
        controller.epoch_limit = None
