"""``sequences export`` and ``sequences import``: a circuit's sequences as CSV (long layout)."""

import argparse
import os
from pathlib import Path

from circuitlab.cli.output import destination_problem, error
from circuitlab.model import CircuitFileError, ModelError, load_circuit, save_circuit
from circuitlab.model.csvdata import (SequenceCsvError, circuit_csv, read_csv_file, sequences_file_path,
                                      write_csv_file)


def register(commands) -> None:
    p = commands.add_parser("sequences", help="export or import a circuit's sequences as CSV")
    sub = p.add_subparsers(dest="action", metavar="ACTION", required=True)
    e = sub.add_parser("export", help="write the circuit's sequences to a CSV file")
    e.add_argument("file", metavar="FILE", help="circuit file")
    e.add_argument("csv", metavar="DATA.csv", help="CSV file to write (replaced if it exists)")
    e.set_defaults(run=run_export)
    i = sub.add_parser("import", help="read sequences from a CSV file into the circuit; "
                       "on any problem, exit 1 and write nothing")
    i.add_argument("file", metavar="FILE", help="circuit file")
    i.add_argument("csv", metavar="DATA.csv", help="CSV file to read")
    i.add_argument("--replace", action="store_true",
                   help="replace the existing sequences (default: add to them)")
    i.add_argument("--out", metavar="OUT.json", help="write the result here (default: FILE itself)")
    i.set_defaults(run=run_import)


def run_export(args: argparse.Namespace) -> int:
    problem = destination_problem(args.csv, [args.file])
    if problem:
        error(problem)
        return 1
    try:
        circuit = load_circuit(args.file)
        write_csv_file(args.csv, circuit_csv(circuit))
    except CircuitFileError as exc:
        error(str(exc))
        return 1
    except OSError as exc:
        error(f"cannot write {args.csv} ({exc.strerror or exc})")
        return 1
    print(f"wrote {len(circuit.sequences)} sequences to {args.csv}")
    return 0


def run_import(args: argparse.Namespace) -> int:
    problem = destination_problem(args.out or args.file, [args.csv])
    if problem:
        error(problem)
        return 1
    try:
        circuit = load_circuit(args.file)
        sequences = read_csv_file(args.csv, circuit.unit_names())
    except (CircuitFileError, SequenceCsvError) as exc:
        error(str(exc))
        return 1
    if args.replace:
        circuit.sequences = []
    try:
        for seq in sequences:
            circuit.add_sequence(seq)
    except ModelError as exc:
        error(f"{args.csv}: {exc}; nothing was imported (use --replace to replace the existing sequences)")
        return 1
    out = Path(args.out or args.file)
    note = ""
    if circuit.sequences_file and os.path.realpath(out) != os.path.realpath(args.file) and (
            os.path.realpath(sequences_file_path(circuit, out))
            == os.path.realpath(sequences_file_path(circuit, args.file))):
        # Saving would rewrite the CSV file that FILE reads its sequences from.
        note = f"; its sequences are stored in it, so {circuit.sequences_file} is left as it was"
        circuit.sequences_file = None
    try:
        save_circuit(circuit, out)
    except (OSError, ModelError) as exc:
        error(f"cannot write {out} ({getattr(exc, 'strerror', None) or exc})")
        return 1
    print(f"imported {len(sequences)} sequences into {out} ({len(circuit.sequences)} in all){note}")
    return 0
