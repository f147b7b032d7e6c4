"""``circuitlab bench``: the speed figures of the tool, measured on this machine.

Each suite is a function returning a list of result dicts
``{"name", "value", "unit", "goal"}``; suites are imported only when run, so
the Qt suites load Qt only then.
"""

import argparse
import importlib
import platform

from circuitlab.cli.output import emit_json

# suite name -> "module:function"
SUITES: dict[str, str] = {
    "engine": "circuitlab.engine.benchmarks:run",
    "grid": "circuitlab.gui.panels.schedule_grid_bench:run",
    "editor": "circuitlab.gui.benchmarks:run",
    "training-views": "circuitlab.gui.training.benchmarks:run",
}


def register(commands) -> None:
    p = commands.add_parser("bench", help="measure the speed of the engine and the editor")
    p.add_argument("--only", action="append", choices=sorted(SUITES) or None, metavar="SUITE",
                   help=f"run only this suite (repeatable): {', '.join(sorted(SUITES))}")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_bench)


def run_bench(args: argparse.Namespace) -> int:
    chosen = args.only or sorted(SUITES)
    results = []
    for name in chosen:
        module, func = SUITES[name].split(":")
        for r in getattr(importlib.import_module(module), func)():
            results.append({"suite": name, **r})
    if args.json:
        emit_json({"machine": platform.platform(), "python": platform.python_version(),
                   "results": results})
        return 0
    print(f"{'suite':<8} {'measurement':<52} {'value':>12}  goal")
    for r in results:
        print(f"{r['suite']:<8} {r['name']:<52} {r['value']:>10.4g} {r['unit']:<4} {r.get('goal', '')}")
    return 0
