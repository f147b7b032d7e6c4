"""``sweep``: a grid of training settings times seeds, run as tasks on dask.distributed."""

import argparse
import json
import math
import os
import sys

from circuitlab.cli.output import destination_problem, emit_json, error
from circuitlab.model import CircuitFileError, load_circuit
from circuitlab.model.fileformat import write_atomic
from circuitlab.runs import RunHistory
from circuitlab.runs.sweep import SweepError, plan_sweep, run_sweep, summary_csv, parse_assignment


def register(commands) -> None:
    p = commands.add_parser("sweep", help="train a grid of settings times seeds on a Dask cluster; "
                            "record every run and summarise each setting")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("--seeds", type=int, default=1, metavar="N",
                   help="runs per setting, with seeds 0..N-1 (each starts from fresh weights drawn with its seed)")
    p.add_argument("--set", action="append", default=[], metavar="training.SETTING=V1,V2",
                   help="a swept setting and its values (repeatable: the grid is every combination)")
    p.add_argument("--epochs", type=int, metavar="N", help="maximum epochs per run (default: the file's)")
    p.add_argument("--workers", type=int, default=2, metavar="K",
                   help="worker processes of the local cluster (default 2; ignored with --scheduler)")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="use this running Dask cluster instead")
    p.add_argument("--db", metavar="PATH", help="run history file (default: runs.sqlite in the user's "
                   "data folder, or $CIRCUITLAB_RUNS_DB)")
    p.add_argument("--out", metavar="RESULTS.csv", help="write the summary (one row per setting) here")
    p.add_argument("--resume", action="store_true", help="skip runs already in the history (same circuit, "
                   "settings, seed and epochs) that did not fail")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_sweep_command)


def _fail(args, message: str, code: int = 2) -> int:
    if args.json:
        emit_json({"ok": False, "error": message})
    else:
        error(message)
    return code


def run_sweep_command(args: argparse.Namespace) -> int:
    try:
        circuit = load_circuit(args.file)
    except CircuitFileError as exc:
        return _fail(args, str(exc))
    if args.seeds < 1:
        return _fail(args, "--seeds must be at least 1")
    if args.workers < 1:
        return _fail(args, "--workers must be at least 1")
    if args.out:
        problem = destination_problem(args.out, [args.file])
        if problem:
            return _fail(args, problem)
    try:
        grid = {}
        for text in args.set:
            key, values = parse_assignment(text)
            if key in grid:
                return _fail(args, f"--set {key} is given twice; list all its values in one --set")
            grid[key] = values
        plan = plan_sweep(circuit, grid, list(range(args.seeds)), args.epochs, os.path.abspath(args.file))
    except SweepError as exc:
        return _fail(args, str(exc))
    history = RunHistory(args.db)
    show = not args.json and sys.stderr.isatty()
    try:
        if show:
            result = _with_bar(plan, history, args)
        else:
            result = run_sweep(plan, history, args.workers, args.scheduler, args.resume)
    except SweepError as exc:
        return _fail(args, str(exc))
    except KeyboardInterrupt:
        return _fail(args, "the sweep was interrupted; the runs that finished are recorded "
                     "(run it again with --resume to finish it)", 1)
    if result.history_error:
        error(f"the runs could not all be recorded in the run history ({result.history_error}); "
              "the summary below is complete")
    written = []
    if args.out:
        try:
            write_atomic(args.out, summary_csv(plan.grid, result.summary).encode("utf-8"))
            written.append(args.out)
        except OSError as exc:
            error(f"cannot write {args.out} ({exc.strerror or exc})")
    failed = sum(r["failed"] for r in result.summary)
    if args.json:
        emit_json({"ok": True, "sweep_id": result.sweep_id, "runs": len(result.runs), "ran": result.ran,
                   "skipped": len(plan.tasks) - result.ran, "failed": failed,
                   "summary": _clean(result.summary), "written": written})
    else:
        _print_summary(plan, result)
        for path in written:
            print(f"wrote {path}")
    return 0


def _with_bar(plan, history, args):
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    columns = (TextColumn("sweep"), BarColumn(), MofNCompleteColumn(),
               TextColumn("finished {task.fields[finished]}, failed {task.fields[failed]}"),
               TextColumn("time left"), TimeRemainingColumn())
    with Progress(*columns, transient=True) as bar:
        task = bar.add_task("sweep", total=len(plan.tasks), finished=0, failed=0)

        def update(progress, _run):
            bar.update(task, total=progress.total, completed=progress.finished + progress.failed,
                       finished=progress.finished, failed=progress.failed)
        return run_sweep(plan, history, args.workers, args.scheduler, args.resume, on_progress=update)


def _clean(rows):
    return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in r.items()}
            for r in rows]


def _fmt(x, spec=".4g"):
    return "-" if x is None else format(x, spec)


def _print_summary(plan, result) -> None:
    skipped = len(plan.tasks) - result.ran
    print(f"sweep {result.sweep_id if result.sweep_id is not None else '(not recorded)'}: {result.ran} runs now"
          + (f", {skipped} already recorded" if skipped else ""))
    keys = list(plan.grid)
    head = "  ".join(f"{k.removeprefix('training.'):>14}" for k in keys)
    print(f"{head}{'  ' if keys else ''}{'runs':>4} {'failed':>6} {'reached':>7} {'epochs (q1-q3)':>18} "
          f"{'final valid.':>12} {'best valid.':>11} {'test (sd)':>18}")
    for row in result.summary:
        cells = "  ".join(f"{json.dumps(row[k]):>14}" for k in keys)
        epochs = (f"{row['epochs_to_target_median']:.0f} ({row['epochs_to_target_q1']:.0f}-"
                  f"{row['epochs_to_target_q3']:.0f})" if row["epochs_to_target_median"] is not None else "-")
        reached = _fmt(row["reached_target_fraction"], ".0%")
        test = (f"{_fmt(row['test_loss_mean'])} ({_fmt(row['test_loss_std'], '.2g')})"
                if row["test_loss_mean"] is not None else "-")
        print(f"{cells}{'  ' if keys else ''}{row['runs']:>4} {row['failed']:>6} {reached:>7} {epochs:>18} "
              f"{_fmt(row['final_validation_loss_mean']):>12} {_fmt(row['best_validation_loss_mean']):>11} "
              f"{test:>18}")
