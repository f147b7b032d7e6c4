"""The model, the engine and the command line load no Qt (checked in a fresh interpreter)."""

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


PROBE = """
import importlib, json, pkgutil, sys
import circuitlab.model, circuitlab.engine, circuitlab.cli
modules = []
for package in (circuitlab.model, circuitlab.engine):
    for info in pkgutil.walk_packages(package.__path__, package.__name__ + "."):
        importlib.import_module(info.name)
        modules.append(info.name)
from circuitlab.cli import main

code = main(["validate", *sys.argv[1:]])
qt = sorted(m for m in sys.modules if m.split(".")[0] in ("PySide6", "shiboken6", "pyqtgraph"))
print(json.dumps({"code": code, "qt": qt, "modules": modules}))
"""


def test_model_engine_and_validate_load_no_qt():
    done = subprocess.run([sys.executable, "-c", PROBE, *map(str, EXAMPLES)], capture_output=True,
                          text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout.strip().splitlines()[-1])
    assert report["code"] == 0
    assert report["qt"] == []
    assert "circuitlab.model.fileformat" in report["modules"]  # the walk did import the modules
