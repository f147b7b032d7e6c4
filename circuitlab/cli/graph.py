"""``export`` and ``import-graphml``: a circuit's graph to and from other tools.

``export`` names the format by the output's suffix: ``.graphml`` (units and
connections with all their attributes) or ``.csv`` (the weight matrix, row =
source unit, column = target unit, an empty cell where there is no
connection).
"""

import argparse
import csv
import io
from pathlib import Path

from circuitlab.cli.output import destination_problem, emit_json, error
from circuitlab.model import Circuit, CircuitFileError, ModelError, load_circuit, save_circuit
from circuitlab.model.fileformat import write_atomic
from circuitlab.model.graph import read_graphml, write_graphml

EXPORT_FORMATS = {".graphml": "GraphML", ".csv": "CSV weight matrix"}
CORNER = "source\\target"


def register(commands) -> None:
    p = commands.add_parser("export", help="write a circuit's graph as GraphML or its weight matrix as CSV")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("out", metavar="OUT", help="output file; its suffix (.graphml or .csv) names the format")
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
    suffix = Path(args.out).suffix.lower()
    if suffix not in EXPORT_FORMATS:
        return _fail(args, f"cannot tell the format of '{args.out}': use a name ending in "
                     + " or ".join(EXPORT_FORMATS), code=2)
    problem = destination_problem(args.out, [args.file])
    if problem:
        return _fail(args, problem, code=2)
    try:
        circuit = load_circuit(args.file)
        if suffix == ".graphml":
            write_graphml(circuit, args.out)
        else:
            write_atomic(args.out, weight_matrix_csv(circuit).encode("utf-8"))
    except CircuitFileError as exc:
        return _fail(args, str(exc), problems=exc.problems)
    except ModelError as exc:
        return _fail(args, f"{args.file}: {exc}")
    except OSError as exc:
        return _fail(args, f"cannot write {args.out} ({exc.strerror or exc})")
    result = {"input": args.file, "output": args.out, "format": EXPORT_FORMATS[suffix],
              "units": len(circuit.units), "connections": len(circuit.connections)}
    if args.json:
        emit_json({"ok": True, **result})
    else:
        print(f"wrote {args.out} ({result['format']}: {result['units']} units, "
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
