"""``validate`` and ``info``: check circuit files and summarise them."""

import argparse
import sys

from circuitlab.cli.output import emit_json
from circuitlab.model import CircuitFileError, clamp_mask, find_problems, load_circuit, target_mask
from circuitlab.model.circuit import Circuit


def register(commands) -> None:
    p = commands.add_parser("validate", help="check circuit files; exit 1 if any has problems")
    p.add_argument("files", nargs="+", metavar="FILE")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_validate)

    p = commands.add_parser("info", help="summarise a circuit file")
    p.add_argument("file", metavar="FILE")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_info)


def check_file(path: str) -> tuple[Circuit | None, list[str]]:
    """Load ``path`` and list its problems (structural or semantic) as ``path: reason`` lines."""
    try:
        circuit = load_circuit(path)
    except CircuitFileError as exc:
        return None, exc.problems
    return circuit, [str(p) for p in find_problems(circuit)]


def run_validate(args: argparse.Namespace) -> int:
    results = []
    for path in args.files:
        _, problems = check_file(path)
        results.append({"path": path, "valid": not problems, "problems": problems})
    ok = all(r["valid"] for r in results)
    if args.json:
        emit_json({"valid": ok, "files": results})
    else:
        for r in results:
            print(f"{'valid  ' if r['valid'] else 'INVALID'}  {r['path']}")
            for p in r["problems"]:
                print(f"    {p}")
    return 0 if ok else 1


def summarise(circuit: Circuit) -> dict:
    """A plain summary of a circuit, used by ``info``."""
    clamped, targeted = {}, {}
    for u in circuit.units:
        sched = circuit.schedule_for(u.name)
        if sched.clamp != "none" or u.initial_mode == "clamped":
            clamped[u.name] = sched.clamp if sched.clamp != "none" else "initial"
        if sched.target != "none":
            targeted[u.name] = sched.target + (f" {sched.target_last}" if sched.target == "last" else "")
    cells = {"clamped": 0, "targeted": 0}
    for seq in circuit.sequences:
        for u in circuit.units:
            sched = circuit.schedule_for(u.name)
            cells["clamped"] += sum(clamp_mask(u, sched, seq))
            cells["targeted"] += sum(target_mask(u, sched, seq))
    return {
        "name": circuit.name,
        "description": circuit.description,
        "units": [{"name": u.name, "activation": u.activation, "bias": u.bias,
                   "initial": u.initial_mode, "sign": u.sign} for u in circuit.units],
        "connections": [{"source": c.source, "target": c.target, "weight": c.weight,
                         "trains": c.trains, "tie": c.tie} for c in circuit.connections],
        "clamped_units": clamped,
        "targeted_units": targeted,
        "sequences": [{"name": s.name, "length": s.length, "held_out": s.held_out}
                      for s in circuit.sequences],
        "cells": cells,
        "training": circuit.training.model_dump(mode="json"),
        "trained": circuit.trained.model_dump(mode="json") if circuit.trained else None,
        "problems": [str(p) for p in find_problems(circuit)],
    }


def run_info(args: argparse.Namespace) -> int:
    circuit, problems = check_file(args.file)
    if circuit is None:
        if args.json:
            emit_json({"valid": False, "problems": problems})
        else:
            print(f"circuitlab: {args.file} cannot be read:", file=sys.stderr)
            for p in problems:
                print(f"    {p}", file=sys.stderr)
        return 1
    s = summarise(circuit)
    if args.json:
        emit_json(s)
        return 0
    print(f"{s['name']}  ({args.file})")
    if s["description"]:
        print(f"  {s['description']}")
    print(f"\n  {len(s['units'])} units")
    for u in s["units"]:
        extra = f", {u['sign']}" if u["sign"] else ""
        print(f"    {u['name']:<12} {u['activation']:<9} bias {u['bias']:+.3f}  initial {u['initial']}{extra}")
    print(f"  {len(s['connections'])} connections (delay one step)")
    for c in s["connections"]:
        flags = "" if c["trains"] else "  frozen"
        flags += f"  tie {c['tie']}" if c["tie"] else ""
        print(f"    {c['source']:>10} -> {c['target']:<10} {c['weight']:+.4f}{flags}")
    print("  clamped:  " + (", ".join(f"{k} ({v})" for k, v in s["clamped_units"].items()) or "none"))
    print("  targets:  " + (", ".join(f"{k} ({v})" for k, v in s["targeted_units"].items()) or "none"))
    seqs = s["sequences"]
    held = sum(q["held_out"] for q in seqs)
    print(f"  {len(seqs)} sequences ({held} held out), {s['cells']['clamped']} clamped cells, "
          f"{s['cells']['targeted']} target cells")
    t = s["training"]
    print(f"  training: {t['optimizer']}, learning rate {t['learning_rate']:g}, {t['epochs']} epochs, "
          f"{t['loss']} loss, seed {t['seed']}")
    if s["trained"]:
        print(f"  trained:  {s['trained']['epochs']} epochs, loss {s['trained']['loss']:.6g}")
    for p in s["problems"]:
        print(f"  problem:  {p}")
    return 0
