"""``export`` and ``import-graphml``: a circuit's graph to and from other tools.

``export`` names the format by the output's suffix, or by ``--to``:
``.graphml`` (units and connections with all their attributes), ``.csv`` (the
weight matrix, row = source unit, column = target unit, an empty cell where
there is no connection; biases and initial states go to OUT.units.csv
beside it), ``.json`` (the circuit file), ``.npz`` (NumPy arrays), ``.py``
(a standalone NumPy-only forward pass), ``.png`` / ``.svg`` (the canvas).
"""

import argparse
import csv
import io
from pathlib import Path

from circuitlab.cli import export as writers
from circuitlab.cli.output import destination_problem, emit_json, error
from circuitlab.engine import EngineError
from circuitlab.model import Circuit, CircuitFileError, ModelError, load_circuit, save_circuit
from circuitlab.model.fileformat import write_atomic
from circuitlab.model.graph import read_graphml, write_graphml

CORNER = "source\\target"


def register(commands) -> None:
    p = commands.add_parser("export", help="write a circuit as GraphML, CSV, NPZ, a standalone Python file or a picture")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("out", metavar="OUT", help="output file; its suffix names the format unless --to does")
    p.add_argument("--to", choices=list(writers.FORMATS), help="the format, whatever OUT's suffix")
    p.add_argument("--width", type=int, default=1600, metavar="PX",
                   help="width of a PNG picture in pixels (default 1600)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_export)

    p = commands.add_parser("import-graphml", help="make a circuit file from a GraphML graph")
    p.add_argument("graphml", metavar="IN.graphml")
    p.add_argument("out", metavar="OUT.circuit.json")
    p.add_argument("--force", action="store_true", help="replace OUT if it exists")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_import_graphml)


def weight_matrix_csv(circuit: Circuit) -> str:
    """The weight matrix as CSV text: unit names as header and first column.

    Raises ``ModelError`` if a connection names a unit the circuit lacks.
    """
    names = circuit.unit_names()
    for c in circuit.connections:  # a connection to a missing unit would silently vanish
        circuit.unit(c.source)
        circuit.unit(c.target)
    weights = {c.key: c.weight for c in circuit.connections}
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([CORNER, *names])
    for source in names:
        writer.writerow([source, *(repr(weights[(source, t)]) if (source, t) in weights else ""
                                   for t in names)])
    return buffer.getvalue()


def run_export(args: argparse.Namespace) -> int:
    kind = args.to or writers.format_of(args.out)
    if kind is None:
        suffixes = " ".join(x for v in writers.FORMATS.values() for x in v[0])
        return _fail(args, f"cannot tell the format of '{args.out}': use a name ending in one of "
                     f"{suffixes}, or give --to", code=2)
    if not 16 <= args.width <= 20_000:
        return _fail(args, "--width must lie between 16 and 20000 pixels", code=2)
    outputs = [args.out] + ([writers.units_csv_path(args.out)] if kind == "csv" else [])
    for out in outputs:
        problem = destination_problem(out, [args.file])
        if problem:
            return _fail(args, problem, code=2)
    try:
        circuit = load_circuit(args.file)
        if kind == "graphml":
            write_graphml(circuit, args.out)
        elif kind == "csv":
            write_atomic(args.out, weight_matrix_csv(circuit).encode("utf-8"))
            write_atomic(outputs[1], writers.units_csv(circuit).encode("utf-8"))
        elif kind == "circuit":
            save_circuit(circuit, args.out)
        elif kind == "npz":
            writers.write_npz(circuit, args.out)
        elif kind == "py":
            writers.write_standalone(circuit, args.out)
        elif not writers.write_picture(circuit, args.out, args.width):
            return _fail(args, f"could not write {args.out}")
    except CircuitFileError as exc:
        return _fail(args, str(exc), problems=exc.problems)
    except (ModelError, EngineError) as exc:
        return _fail(args, f"{args.file}: {exc}")
    except OSError as exc:
        return _fail(args, f"cannot write {args.out} ({exc.strerror or exc})")
    result = {"input": args.file, "output": args.out, "outputs": outputs, "format": writers.FORMATS[kind][1],
              "units": len(circuit.units), "connections": len(circuit.connections)}
    if args.json:
        emit_json({"ok": True, **result})
    else:
        print(f"wrote {', '.join(outputs)} ({result['format']}: {result['units']} units, "
              f"{result['connections']} connections)")
    return 0


def run_import_graphml(args: argparse.Namespace) -> int:
    problem = destination_problem(args.out, [args.graphml])
    if problem:
        return _fail(args, problem, code=2)
    if Path(args.out).exists() and not args.force:
        return _fail(args, f"{args.out} exists; pass --force to replace it")
    try:
        circuit = read_graphml(args.graphml)
        if circuit.name == "untitled":
            circuit.name = Path(args.graphml).stem
        save_circuit(circuit, args.out)
    except ModelError as exc:
        return _fail(args, str(exc))
    except OSError as exc:
        return _fail(args, f"cannot write {args.out} ({exc.strerror or exc})")
    if args.json:
        emit_json({"ok": True, "input": args.graphml, "output": args.out,
                   "units": len(circuit.units), "connections": len(circuit.connections)})
    else:
        print(f"wrote {args.out} ({len(circuit.units)} units, {len(circuit.connections)} connections; "
              "set clamps, targets and sequences in the editor)")
    return 0


def _fail(args: argparse.Namespace, message: str, problems: list[str] | None = None, code: int = 1) -> int:
    if args.json:
        emit_json({"ok": False, "error": message, "problems": problems or [message]})
    else:
        error(message)
    return code
