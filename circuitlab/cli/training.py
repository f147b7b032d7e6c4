"""``train``, ``run`` and ``gradcheck``: the engine from the command line.

``train`` prints the initial and final loss and writes the trained circuit
only where ``--out`` says (the input file is never overwritten). ``run``
writes every unit's state at every step as CSV. ``gradcheck`` compares the
BPTT gradient with finite differences and RTRL and exits 1 if they differ
by more than the tolerance.
"""

import argparse
import csv
import io
import math
import os
import sys

from circuitlab.cli.output import destination_problem, emit_json, error
from circuitlab.engine import EngineError, Trainer
from circuitlab.engine.gradcheck import DEFAULT_TOLERANCE
from circuitlab.model import CircuitFileError, ModelError, load_circuit, save_circuit
from circuitlab.model.csvdata import sequences_file_path
from circuitlab.model.fileformat import write_atomic
from circuitlab.runs.recorder import RunRecorder, add_record_options, now


def register(commands) -> None:
    p = commands.add_parser("train", help="train a circuit by BPTT; print the initial and final loss")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("--epochs", type=int, metavar="N", help="maximum number of epochs (default: the file's)")
    p.add_argument("--seed", type=int, metavar="S", help="seed of mini-batch order and --reinit (default: the file's)")
    p.add_argument("--reinit", action="store_true",
                   help="start from fresh seeded fan-in-scaled weights instead of the file's values")
    p.add_argument("--out", metavar="TRAINED.json", help="write the trained circuit here")
    p.add_argument("--log", metavar="CURVE.csv", help="write the learning curve (one row per epoch) here")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    add_record_options(p)
    p.set_defaults(run=run_train)

    p = commands.add_parser("run", help="run a circuit and write every unit's state at every step as CSV")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("--sequence", metavar="NAME", help="only this sequence (default: all)")
    p.add_argument("--steps", type=int, metavar="N",
                   help="run each sequence for N steps (for example past the training horizon)")
    p.add_argument("--fill", type=float, metavar="VALUE",
                   help="with --steps: the value of clamped units past their data (for example 0)")
    p.add_argument("--csv", metavar="OUT", help="write the CSV here (default: standard output)")
    p.add_argument("--with-targets", action="store_true",
                   help="add each target unit's target, error and cell loss beside the states")
    p.set_defaults(run=run_run)

    p = commands.add_parser("gradcheck", help="check BPTT gradients against finite differences and RTRL")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("--tolerance", type=float, default=DEFAULT_TOLERANCE, metavar="TOL",
                   help=f"largest relative error accepted (default {DEFAULT_TOLERANCE:g})")
    p.add_argument("--no-rtrl", action="store_true", help="skip RTRL (it is slow on large circuits)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_gradcheck)


def _load(path: str, as_json: bool):
    try:
        return load_circuit(path)
    except CircuitFileError as exc:
        _report(as_json, str(exc), exc.problems)
        return None


def _report(as_json: bool, message: str, problems: list[str] | None = None) -> None:
    if as_json:
        emit_json({"ok": False, "error": message, "problems": problems or []})
    else:
        error(message)


def _number(x):
    return x if x is None or math.isfinite(x) else None


# ------------------------------------------------------------------ train
def run_train(args: argparse.Namespace) -> int:
    circuit = _load(args.file, args.json)
    if circuit is None:
        return 2
    if args.epochs is not None and args.epochs < 1:
        _report(args.json, "--epochs must be at least 1")
        return 2
    if args.out and args.log and os.path.realpath(args.out) == os.path.realpath(args.log):
        _report(args.json, "--out and --log name the same file; give each its own")
        return 2
    inputs = [args.file] + ([str(sequences_file_path(circuit, args.file))] if circuit.sequences_file else [])
    for out in filter(None, (args.out, args.log)):
        problem = destination_problem(out, inputs)
        if problem:
            _report(args.json, problem)
            return 2
    if args.seed is not None:
        if not 0 <= args.seed <= 2**32 - 1:
            _report(args.json, "--seed must lie in 0..4294967295")
            return 2
        circuit.training.seed = args.seed
    try:
        trainer = Trainer(circuit, epochs=args.epochs)
    except EngineError as exc:
        _report(args.json, f"{args.file}: {exc}", exc.problems)
        return 2
    if args.reinit:
        trainer.reinitialise(circuit.training.seed)
    initial = trainer.loss()
    if not args.json:
        print(f"initial loss {initial:.6g}")
    started, start_parameters = now(), trainer.parameters
    interrupted = False
    try:
        _train_loop(trainer, show_progress=not args.json and sys.stderr.isatty())
    except KeyboardInterrupt:
        interrupted = True
    final = trainer.loss()
    reason = trainer.stopped_because or f"interrupted after {trainer.epochs_done} epochs"
    if interrupted:
        trainer.stopped_because = reason
    try:
        trainer.write_back(circuit)
    except EngineError as exc:
        _report(args.json, f"{args.file}: {exc}")
        return 1
    written = []
    try:
        if args.log:
            write_atomic(args.log, _curve_csv(trainer).encode("utf-8"))
            written.append(args.log)
        if args.out:
            save_circuit(circuit, args.out)
            written.append(args.out)
    except (OSError, ModelError) as exc:
        detail = f"{exc.filename} ({exc.strerror})" if isinstance(exc, OSError) and exc.strerror else exc
        _report(args.json, f"cannot write the results: {detail}; wrote only {', '.join(written) or 'nothing'}")
        return 2
    RunRecorder(args.db, not args.no_record).record_trainer(
        trainer, circuit, "cli", started=started, interrupted=interrupted,
        initial_parameters=start_parameters, file=args.file)
    failed = bool(trainer.history) and not trainer.history[-1].finite
    if args.json:
        emit_json({"ok": not failed, "initial_loss": _number(initial), "final_loss": _number(final),
                   "held_out_loss": _number(trainer.held_out_loss()), "epochs": trainer.epochs_done,
                   "stopped_because": reason, "written": written})
    else:
        print(f"final loss   {final:.6g}  after {trainer.epochs_done} epochs ({reason})")
        held = trainer.held_out_loss()
        if held is not None:
            print(f"held-out loss {held:.6g}")
        for path in written:
            print(f"wrote {path}")
        if not args.out:
            print("(the trained circuit was not saved; give --out FILE to save it)")
    return 1 if failed else 0


def _train_loop(trainer: Trainer, show_progress: bool) -> None:
    if not show_progress:
        trainer.run()
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    columns = (TextColumn("training"), BarColumn(), MofNCompleteColumn(),
               TextColumn("loss {task.fields[loss]}"), TimeRemainingColumn())
    with Progress(*columns, transient=True) as progress:
        task = progress.add_task("train", total=trainer.max_epochs, loss="-")
        while not trainer.done:
            rec = trainer.epoch()
            progress.update(task, completed=rec.epoch, loss=f"{rec.loss:.5g}")


def _curve_csv(trainer: Trainer) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["epoch", "loss", "held_out_loss", "grad_norm", "learning_rate"])
    for r in trainer.history:
        writer.writerow([r.epoch, repr(r.loss), "" if r.held_out_loss is None else repr(r.held_out_loss),
                         repr(r.grad_norm), repr(r.learning_rate)])
    return buffer.getvalue()


# -------------------------------------------------------------------- run
def run_run(args: argparse.Namespace) -> int:
    from circuitlab import api

    circuit = _load(args.file, False)
    if circuit is None:
        return 2
    if args.fill is not None and args.steps is None:
        error("--fill only applies with --steps (past the data)")
        return 2
    if args.with_targets and args.steps is not None:
        error("--with-targets compares the sequences as they are; leave out --steps")
        return 2
    problem = args.csv and destination_problem(args.csv, [args.file])
    if problem:
        error(problem)
        return 2
    if not circuit.sequences:
        error(f"{args.file}: has no sequences to run; add some in the editor or with 'sequences import'")
        return 2
    try:
        result = api.run(circuit, sequence=args.sequence, steps=args.steps, fill=args.fill)
    except api.MissingFillError as exc:
        error(f"{args.file}: {str(exc).replace('fill=VALUE', '--fill VALUE (for example --fill 0)')}")
        return 2
    except EngineError as exc:
        error(f"{args.file}: {exc}")
        return 2
    text = result.to_csv()
    if args.with_targets:
        from circuitlab.engine import compile_circuit
        from circuitlab.engine.analysis.predictions import predictions, states_with_targets_csv
        try:
            comp = compile_circuit(circuit, None if args.sequence is None else [args.sequence])
            text = states_with_targets_csv(predictions(comp, comp.parameters_from_circuit()))
        except EngineError as exc:
            error(f"{args.file}: {exc}")
            return 2
    if args.csv:
        try:
            write_atomic(args.csv, text.encode("utf-8"))
        except OSError as exc:
            error(f"cannot write {args.csv} ({exc.strerror or exc})")
            return 2
        print(f"wrote {args.csv} ({len(result.sequence_names)} sequences, {len(result.unit_names)} units)")
    else:
        sys.stdout.write(text)
    return 0


# -------------------------------------------------------------- gradcheck
def run_gradcheck(args: argparse.Namespace) -> int:
    from circuitlab import api

    if not 0 < args.tolerance < math.inf:
        _report(args.json, "--tolerance must be a positive number")
        return 2
    circuit = _load(args.file, args.json)
    if circuit is None:
        return 2
    try:
        report = api.check_gradients(circuit, tolerance=args.tolerance, rtrl=not args.no_rtrl)
    except EngineError as exc:
        _report(args.json, f"{args.file}: {exc}", exc.problems)
        return 2
    if args.json:
        emit_json({"ok": report.passed, **report.as_dict()})
    else:
        print(f"loss ({report.loss_name}) {report.loss:.6g}; largest relative error against BPTT:")
        print(f"{'parameters':<16} {'count':>5} {'finite diff.':>13} {'RTRL':>11}  worst")
        for g in report.groups:
            rtrl = f"{g.rtrl:11.2e}" if g.rtrl is not None else f"{'-':>11}"
            print(f"{g.group:<16} {g.count:>5} {g.finite_differences:13.2e} {rtrl}  {g.worst}")
        if not report.groups:
            print("(no trainable parameters)")
        if report.kink:
            print(f"note: {report.kink}")
        if report.one_sided:
            print(f"one-sided differences (next to a ReLU kink): {', '.join(report.one_sided)}")
        if report.excluded:
            print(f"left out of the verdict (finite differences cross a ReLU kink on both sides; "
                  f"BPTT and RTRL still compared): {', '.join(report.excluded)}")
        verdict = "agree" if report.passed else "DISAGREE"
        print(f"gradients {verdict} (tolerance {report.tolerance:g})")
    return 0 if report.passed else 1
