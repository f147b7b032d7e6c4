"""``analyze``: what a trained circuit learned (past the horizon, fixed points, noise robustness)."""

import argparse

from circuitlab.cli.output import emit_json, error
from circuitlab.engine import EngineError, compile_circuit
from circuitlab.engine.analysis import analyse
from circuitlab.model import CircuitFileError, load_circuit

SHOWN_UNITS = 8  # states printed per fixed point in the text report


def register(commands) -> None:
    p = commands.add_parser("analyze", help="check what a trained circuit learned: settling, fixed points, noise")
    p.add_argument("file", metavar="FILE", help="circuit file (.circuit.json)")
    p.add_argument("--clamp", action="append", default=[], metavar="UNIT=VALUE",
                   help="hold UNIT at VALUE for the fixed points (repeatable; inputs default to 0)")
    p.add_argument("--horizon", type=int, default=4, metavar="K",
                   help="run each sequence K times its length (default 4)")
    p.add_argument("--noise", default="0,0.01,0.05,0.1", metavar="LEVELS",
                   help="comma-separated noise sizes for the robustness curve (default 0,0.01,0.05,0.1)")
    p.add_argument("--tolerance", type=float, default=0.1, metavar="TOL",
                   help="how near its final target a state must stay to count as settled (default 0.1)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run_analyze)


def _parse_clamps(items: list[str]) -> dict[str, float]:
    held = {}
    for item in items:
        name, sep, value = item.partition("=")
        try:
            if not sep or not name:
                raise ValueError
            held[name] = float(value)
        except ValueError:
            raise ValueError(f"--clamp {item!r}: write UNIT=VALUE, for example --clamp cue=1") from None
    return held


def run_analyze(args: argparse.Namespace) -> int:
    def fail(message: str, code: int = 2) -> int:
        if args.json:
            emit_json({"ok": False, "error": message})
        else:
            error(message)
        return code

    try:
        held = _parse_clamps(args.clamp)
        levels = [float(v) for v in args.noise.split(",") if v.strip()]
    except ValueError as exc:
        return fail(str(exc) if "--clamp" in str(exc) else f"--noise {args.noise!r}: give numbers separated by commas")
    try:
        circuit = load_circuit(args.file)
        comp = compile_circuit(circuit)
        for name in held:
            comp.unit_index(name)  # an unknown unit is a mistake to name, not a part to skip
        result = analyse(comp, comp.parameters_from_circuit(), held=held, factor=args.horizon,
                         tolerance=args.tolerance, levels=levels)
    except (CircuitFileError, EngineError) as exc:
        return fail(f"{args.file}: {exc}")
    if args.json:
        emit_json({"ok": True, "file": args.file, **result.as_record()})
        return 0
    _print_report(result)
    return 0


def _print_report(result) -> None:
    if result.horizon is not None:
        h = result.horizon
        print(f"past the horizon ({h.lengths.max() // max(1, h.horizons.max())} x each sequence's length, "
              f"clamped inputs: {h.clamps}; tolerance {h.tolerance:g})")
        print(f"  {'unit':<16} {'settles':>8} {'oscillates':>11} {'leaves':>7}  periods")
        for r in h.summary():
            periods = ", ".join(str(p) for p in r["periods"]) or "-"
            print(f"  {r['unit']:<16} {r['settles']:>8} {r['oscillates']:>11} {r['leaves']:>7}  {periods}")
    if result.fixed_points is not None:
        fp = result.fixed_points
        names = fp.map.unit_names
        held = ", ".join(f"{names[i]} = {v:g}" for i, v in fp.map.held.items()) or "nothing held"
        print(f"fixed points ({held}; {fp.starts} starting points)")
        print(f"  free units' weights: spectral radius {fp.spectral_radius:.4g}, "
              f"largest singular value {fp.largest_singular_value:.4g}")
        for k, p in enumerate(fp.points, 1):
            tc = "inf" if p.time_constant == float("inf") else f"{p.time_constant:.3g}"
            shown = ", ".join(f"{names[i]}={p.state[i]:.4g}" for i in fp.map.free[:SHOWN_UNITS])
            more = " ..." if fp.map.size > SHOWN_UNITS else ""
            eig = ", ".join(f"{e.real:.3g}{e.imag:+.3g}j" for e in p.eigenvalues[:3])
            print(f"  {k}. {'stable' if p.stable else 'unstable'}, |lambda|max {p.largest_magnitude:.4g}, "
                  f"time constant {tc} steps: {shown}{more}")
            print(f"     eigenvalues {eig}{' ...' if len(p.eigenvalues) > 3 else ''}")
    if result.noise is not None:
        n = result.noise
        print(f"noise on the free units ({n.use} sequences, {n.levels[0].losses.size} repeats, seed {n.seed})")
        print(f"  {'sigma':>8} {'mean loss':>12} {'spread':>10}")
        for lv in n.levels:
            r = lv.as_record()
            mean = "-" if r["mean"] is None else f"{r['mean']:.5g}"
            spread = "-" if r["spread"] is None else f"{r['spread']:.2g}"
            print(f"  {lv.sigma:>8g} {mean:>12} {spread:>10}")
    for part, why in result.problems.items():
        print(f"{part.replace('_', ' ')}: not computed: {why}")
