"""Files in the editor: save and reopen, bad files, unsaved-change prompts, autosave and recovery.

That a failed open leaves the current document untouched, and that an
autosave survives a crash and is offered at the next start, is common
practice for desktop editors.
"""

import os
import subprocess
import sys
import textwrap
from pathlib import Path

from PySide6.QtCore import QSettings
from PySide6.QtGui import QImage

from circuitlab.gui.commands import AddUnits, ConnectUnits, SetUnitFields
from circuitlab.model import Circuit, Unit, load_circuit, save_circuit

ROOT = Path(__file__).resolve().parents[2]


def edit(win):
    doc = win.document
    doc.push(AddUnits(doc, [Unit(name="a", x=-50), Unit(name="b", x=60, y=30)]))
    doc.push(ConnectUnits(doc, "a", "b", 0.25))
    doc.push(ConnectUnits(doc, "b", "b", -0.5))
    doc.push(SetUnitFields(doc, ["b"], "activation", "tanh"))


def test_save_reopen_equal_and_recent_list(make_main_window, tmp_path):
    win = make_main_window()
    edit(win)
    target = tmp_path / "mine"
    win.files.choose_save_path = lambda: str(target)
    win.files.actions["save_as"].trigger()
    saved = tmp_path / "mine.circuit.json"
    assert saved.exists() and not win.isWindowModified()
    assert "mine.circuit.json" in win.windowTitle()
    other = make_main_window(saved)
    assert other.document.circuit == win.document.circuit
    assert load_circuit(saved) == win.document.circuit
    assert win.files.recent_files()[0] == str(saved.resolve())
    # Save after a further edit writes to the same file without asking
    win.files.choose_save_path = lambda: (_ for _ in ()).throw(AssertionError("asked for a path"))
    win.document.push(SetUnitFields(win.document, ["a"], "bias", 0.3))
    win.files.actions["save"].trigger()
    assert load_circuit(saved).unit("a").bias == 0.3


def test_invalid_file_shows_the_validators_message_and_keeps_the_document(make_main_window, tmp_path):
    win = make_main_window()
    edit(win)
    before, depth, path = win.document.circuit.model_dump(), win.document.undo_stack.count(), win.document.path
    bad = tmp_path / "bad.circuit.json"
    bad.write_text('{"format": "circuitlab-circuit", "version": 1, '
                   '"units": [{"name": "a", "activation": "sigmoidal"}]}', encoding="utf-8")
    assert not win.files.open_path(str(bad))
    box = win.files.error_box
    assert box is not None and box.isVisible()
    message = box.text() + "\n" + box.informativeText()
    assert "bad.circuit.json" in message and "units[0].activation" in message
    assert win.document.circuit.model_dump() == before
    assert win.document.undo_stack.count() == depth and win.document.path == path
    assert win.isWindowModified()


def test_unsaved_changes_prompt(make_main_window, tmp_path):
    saved = tmp_path / "three.circuit.json"
    c = Circuit()
    for name in ("set", "reset", "state"):
        c.add_unit(Unit(name=name))
    save_circuit(c, saved)
    win = make_main_window()
    edit(win)
    win.files.ask_save_changes = lambda: "cancel"
    assert not win.files.new()
    assert win.document.circuit.unit_names() == ["a", "b"]
    assert not win.close()  # cancelling also keeps the window open
    win.files.ask_save_changes = lambda: "discard"
    assert win.files.open_path(str(saved))
    assert win.document.circuit.unit_names() == ["set", "reset", "state"]
    # Revert throws away edits since the last save
    win.document.push(SetUnitFields(win.document, ["state"], "bias", 2.0))
    assert win.files.revert()
    assert win.document.circuit.unit("state").bias == 0.0 and not win.isWindowModified()


CRASHING_EDITOR = textwrap.dedent("""
    import os, sys
    os.environ["QT_QPA_PLATFORM"] = "offscreen"
    from PySide6.QtCore import QSettings
    from circuitlab.gui.app import make_application
    app = make_application()
    QSettings.setDefaultFormat(QSettings.IniFormat)
    QSettings.setPath(QSettings.IniFormat, QSettings.UserScope, sys.argv[2])
    from circuitlab.gui.main_window import MainWindow
    from circuitlab.gui.commands import AddUnits, ConnectUnits
    from circuitlab.model import Unit
    win = MainWindow(autosave_dir=sys.argv[1])
    doc = win.document
    doc.push(AddUnits(doc, [Unit(name="kept", x=10), Unit(name="also", x=90)]))
    doc.push(ConnectUnits(doc, "kept", "also", 0.7))
    assert win.files.autosave_now()
    os._exit(3)  # die without any clean-up, as a crash would
""")


def test_autosave_then_crash_then_recovery(make_main_window, autosave_dir, isolated_settings):
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen"}
    proc = subprocess.run([sys.executable, "-c", CRASHING_EDITOR, str(autosave_dir),
                           str(isolated_settings / "settings")], env=env, cwd=ROOT, timeout=60,
                          capture_output=True, text=True)
    assert proc.returncode == 3, proc.stderr
    assert list(autosave_dir.glob("*.lock")), "the crashed editor leaves its lock behind"
    win = make_main_window()
    asked = []
    win.files.ask_recover = lambda path, saved_at: asked.append((path, saved_at)) or True
    assert win.files.offer_recovery()
    assert len(asked) == 1 and asked[0][1] > 0
    c = win.document.circuit
    assert c.unit_names() == ["kept", "also"] and c.connection("kept", "also").weight == 0.7
    assert win.isWindowModified()  # recovered work is not saved anywhere yet
    assert not list(autosave_dir.glob("session-*")), "the recovered autosave is cleared"
    assert not win.files.offer_recovery()


def test_autosave_of_a_running_editor_is_not_offered(make_main_window):
    first = make_main_window()
    edit(first)
    assert first.files.autosave_now()
    second = make_main_window()
    assert second.files.orphaned_autosaves() == []
    first.files.shutdown()  # clean exit removes the autosave
    assert not first.files.autosave_path.exists()


def test_layout_and_dock_state_persist(make_main_window):
    win = make_main_window()
    win.panel("properties").hide()
    win.panel("edit_history").show()
    win.close()
    assert QSettings().value("window/state") is not None
    again = make_main_window()
    assert not again.panel("properties").isVisible()
    assert again.panel("edit_history").isVisible()


def test_screenshot_command_renders_a_picture(tmp_path, examples_dir):
    out = tmp_path / "shot.png"
    env = {**os.environ, "XDG_CONFIG_HOME": str(tmp_path), "XDG_DATA_HOME": str(tmp_path)}
    env.pop("QT_QPA_PLATFORM", None)  # the command must switch to offscreen itself
    proc = subprocess.run([sys.executable, "-m", "circuitlab", str(examples_dir / "set_reset_latch.circuit.json"),
                           "--screenshot", str(out), "--size", "1500x950"], env=env, cwd=ROOT,
                          timeout=60, capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    image = QImage(str(out))
    assert image.width() >= 1500 and image.height() >= 950  # at least the size asked for
    colours = {image.pixel(x, y) for x in range(0, image.width(), 9) for y in range(0, image.height(), 9)}
    assert len(colours) > 30  # a drawn window, not a blank one
    bad = subprocess.run([sys.executable, "-m", "circuitlab", str(tmp_path / "missing.circuit.json"),
                          "--screenshot", str(tmp_path / "x.png")], env=env, cwd=ROOT,
                         timeout=60, capture_output=True, text=True)
    assert bad.returncode == 1 and "cannot be read" in bad.stderr
