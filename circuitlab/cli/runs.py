"""``runs list|show|export|delete``: the run history from the command line.

Runs are named by their id (the number ``runs list`` shows) or by a prefix
of their uid (at least 6 characters).
"""

import argparse
import csv
import io
import json
import math

import numpy as np

from circuitlab.cli.output import destination_problem, emit_json, error
from circuitlab.model import CircuitFileError, load_circuit
from circuitlab.model.fileformat import write_atomic
from circuitlab.runs import OUTCOMES, HistoryError, RunHistory, content_hash
from circuitlab.runs.record import CURVE_COLUMNS


def register(commands) -> None:
    p = commands.add_parser("runs", help="list, show, export or delete recorded training runs")
    sub = p.add_subparsers(dest="runs_command", metavar="ACTION", required=True)

    def common(q):
        q.add_argument("--db", metavar="PATH", help="run history file (default: runs.sqlite in the user's "
                       "data folder, or $CIRCUITLAB_RUNS_DB)")
        q.add_argument("--json", action="store_true", help="print one JSON object")

    q = sub.add_parser("list", help="list the recorded runs, newest first")
    q.add_argument("--circuit", metavar="FILE", help="only the runs of this circuit (same name and content hash)")
    q.add_argument("--name", metavar="NAME", help="only the runs of circuits with this name")
    q.add_argument("--sweep", type=int, metavar="ID", help="only the runs of this sweep")
    q.add_argument("--limit", type=int, metavar="N", help="at most N runs")
    common(q)
    q.set_defaults(run=run_list)

    q = sub.add_parser("show", help="everything recorded about one run")
    q.add_argument("run_id", metavar="RUN", help="run id or uid prefix")
    common(q)
    q.set_defaults(run=run_show)

    q = sub.add_parser("export", help="write one run's learning curves (.csv) or the whole run (.json)")
    q.add_argument("run_id", metavar="RUN", help="run id or uid prefix")
    q.add_argument("out", metavar="OUT", help="OUT.csv: one row per epoch; OUT.json: settings, curves, parameters")
    common(q)
    q.set_defaults(run=run_export)

    q = sub.add_parser("delete", help="delete recorded runs")
    q.add_argument("run_ids", nargs="+", metavar="RUN", help="run ids or uid prefixes")
    common(q)
    q.set_defaults(run=run_delete)


def _fail(args, message: str) -> int:
    if args.json:
        emit_json({"ok": False, "error": message})
    else:
        error(message)
    return 1


def _fmt(x, spec=".4g") -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) else format(x, spec)


def run_list(args: argparse.Namespace) -> int:
    name = args.name
    digest = None
    if args.circuit:
        try:
            circuit = load_circuit(args.circuit)
        except CircuitFileError as exc:
            return _fail(args, str(exc))
        name, digest = circuit.name, content_hash(circuit)
    if args.limit is not None and args.limit < 1:
        return _fail(args, "--limit must be at least 1")
    try:
        runs = RunHistory(args.db).list_runs(name, digest, args.sweep, args.limit)
    except HistoryError as exc:
        return _fail(args, str(exc))
    if args.json:
        emit_json({"ok": True, "runs": runs})
        return 0
    if not runs:
        print("no runs recorded" + (" for this circuit" if name else ""))
        return 0
    print(f"{'id':>5}  {'when (UTC)':<19}  {'circuit':<20} {'source':<6} {'seed':>10} {'epochs':>6} "
          f"{'outcome':<19} {'final loss':>10} {'best valid.':>11} {'test':>9}")
    for r in runs:
        print(f"{r['id']:>5}  {r['created'][:19].replace('T', ' '):<19}  {r['circuit_name'][:20]:<20} "
              f"{r['source']:<6} {r['seed']:>10} {r['epochs']:>6} {OUTCOMES.get(r['outcome'], r['outcome']):<19} "
              f"{_fmt(r['final_loss']):>10} {_fmt(r['best_validation_loss']):>11} {_fmt(r['test_loss']):>9}")
    return 0


def _get(args, run_id):
    try:
        run = RunHistory(args.db).get_run(run_id)
    except HistoryError as exc:
        return None, str(exc)
    return (run, None) if run is not None else (None, f"there is no run '{run_id}' in the history")


def _jsonable(run: dict) -> dict:
    out = dict(run)
    out["curves"] = {k: [None if not math.isfinite(v) else float(v) for v in run["curves"][k]]
                     for k in CURVE_COLUMNS}
    return out


def run_show(args: argparse.Namespace) -> int:
    run, problem = _get(args, args.run_id)
    if problem:
        return _fail(args, problem)
    if args.json:
        emit_json({"ok": True, "run": _jsonable(run)})
        return 0
    print(f"run {run['id']} ({run['uid']}), recorded {run['created']} from {run['source']}")
    print(f"circuit      {run['circuit_name']}  (content hash {run['circuit_hash'][:12]})"
          + (f"  {run['file']}" if run["file"] else ""))
    print(f"outcome      {OUTCOMES.get(run['outcome'], run['outcome'])}: {run['stopped_because'] or '-'}")
    if run["error"]:
        print(f"error        {run['error']}")
    print(f"seed {run['seed']}, {run['epochs']} epochs, {run['wall_time']:.2f} s on "
          f"{run['machine'].get('host', '?')}")
    print(f"final loss   {_fmt(run['final_loss'], '.6g')}   validation {_fmt(run['final_validation_loss'], '.6g')}"
          f"   test {_fmt(run['test_loss'], '.6g')} (at epoch {run['selected_epoch'] or '-'})")
    print(f"best validation loss {_fmt(run['best_validation_loss'], '.6g')} at epoch {run['best_epoch'] or '-'}")
    if run["setting"]:
        print("swept        " + ", ".join(f"{k}={v}" for k, v in run["setting"].items()))
    print("settings     " + ", ".join(f"{k}={v}" for k, v in run["settings"].items()))
    if run["final_parameters"]:
        w = run["final_parameters"]["weights"]
        print(f"weights      {len(w)}: " + ", ".join(f"{a}->{b} {v:.4g}" for a, b, v in w[:8])
              + (" ..." if len(w) > 8 else ""))
    return 0


def run_export(args: argparse.Namespace) -> int:
    problem = destination_problem(args.out, [])
    if problem:
        return _fail(args, problem)
    run, problem = _get(args, args.run_id)
    if problem:
        return _fail(args, problem)
    if args.out.lower().endswith(".csv"):
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(CURVE_COLUMNS)
        n = run["curves"]["epoch"].size
        # a column the run did not record (for example no test set) is written empty
        curves = {k: v if v.size == n else np.full(n, np.nan) for k, v in run["curves"].items()}
        for i in range(n):
            writer.writerow([int(curves["epoch"][i])] + ["" if not np.isfinite(v) else repr(float(v))
                                                         for v in (curves[k][i] for k in CURVE_COLUMNS[1:])])
        text = buffer.getvalue()
    else:
        text = json.dumps(_jsonable(run), indent=1, allow_nan=False) + "\n"
    try:
        write_atomic(args.out, text.encode("utf-8"))
    except OSError as exc:
        return _fail(args, f"cannot write {args.out} ({exc.strerror or exc})")
    if args.json:
        emit_json({"ok": True, "written": [args.out]})
    else:
        print(f"wrote {args.out}")
    return 0


def run_delete(args: argparse.Namespace) -> int:
    history = RunHistory(args.db)
    ids = []
    for run_id in args.run_ids:
        run, problem = _get(args, run_id)
        if problem:
            return _fail(args, problem + "; nothing was deleted")
        ids.append(run["id"])
    try:
        deleted = history.delete_runs(ids)
    except HistoryError as exc:
        return _fail(args, str(exc))
    if args.json:
        emit_json({"ok": True, "deleted": ids})
    else:
        print(f"deleted {deleted} run{'s' if deleted != 1 else ''}")
    return 0
