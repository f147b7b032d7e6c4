'''A standalone Python file, NumPy only, that reproduces a circuit's forward pass.

The file embeds the unit names, activations, weights (as a connection list),
biases and initial states, and the clamped values of the circuit's
sequences, and needs nothing of circuitlab to run. Its ``run`` applies the
same arithmetic in the same order as ``engine.forward``, so it gives the same
numbers.
'''

import numpy as np

from circuitlab.engine.compile import Compiled, Parameters

_TEMPLATE = '''"""{title}: the forward pass of a trained recurrent circuit, exported by circuitlab.

Needs only NumPy. Units and their order: {names}.

    import numpy as np
    from {module} import run, run_sequence, UNITS, SEQUENCES
    y = run_sequence("{first}")          # (steps + 1, units): every state at every step
    y = run(steps=20, clamps={{"some_unit": [0.0] * 21}})

    net_j(t) = b_j + sum over connections i -> j of w_ij * y_i(t-1)
    y_j(t)   = f_j(net_j(t))  unless unit j is clamped at step t: then y_j(t) = its clamp value

This is a model: validate it for any real use before relying on it.
"""

import numpy as np

UNITS = {units!r}
ACTIVATIONS = {activations!r}
BIAS = np.array({bias!r}, dtype=float)
INITIAL_STATE = np.array({init!r}, dtype=float)
# (source, target, weight): one delay-one connection each
CONNECTIONS = {connections!r}
# per sequence: its number of steps and, per clamped unit, a value (or None: not clamped) at steps 0..T
SEQUENCES = {sequences!r}

WEIGHTS = np.zeros((len(UNITS), len(UNITS)))
for _i, _j, _w in CONNECTIONS:
    WEIGHTS[UNITS.index(_i), UNITS.index(_j)] = _w


def _activate(name, net):
    if name == "logistic":
        return 1.0 / (1.0 + np.exp(-np.maximum(net, -709.0)))
    if name == "tanh":
        return np.tanh(net)
    if name == "relu":
        return np.maximum(net, 0.0)
    return np.array(net, dtype=float, copy=True)


_GROUPS = [(a, np.array([j for j, b in enumerate(ACTIVATIONS) if b == a], dtype=int))
           for a in sorted(set(ACTIVATIONS))]


def run(steps, clamps=None):
    """Run the circuit for ``steps`` steps; returns y, an array (steps + 1, units).

    ``clamps`` maps a unit name to a list of steps + 1 entries: a number clamps
    the unit to it at that step, None leaves the unit free. A unit not clamped
    at step 0 starts from INITIAL_STATE.
    """
    n = len(UNITS)
    mask = np.zeros((steps + 1, n), dtype=bool)
    value = np.zeros((steps + 1, n))
    for name, row in (clamps or {{}}).items():
        j = UNITS.index(name)
        if len(row) != steps + 1:
            raise ValueError(f"unit {{name!r}}: {{len(row)}} clamp entries for {{steps + 1}} steps")
        for t, v in enumerate(row):
            if v is not None:
                mask[t, j], value[t, j] = True, float(v)
    y = np.empty((steps + 1, n))
    y[0] = np.where(mask[0], value[0], INITIAL_STATE)
    for t in range(1, steps + 1):
        net = y[t - 1] @ WEIGHTS
        net += BIAS
        for name, cols in _GROUPS:
            y[t, cols] = _activate(name, net[cols])
        np.copyto(y[t], value[t], where=mask[t])
    return y


def run_sequence(name):
    """Run one of the embedded sequences (see SEQUENCES) with its clamps."""
    seq = SEQUENCES[name]
    return run(seq["steps"], seq["clamps"])


if __name__ == "__main__":
    for _name in SEQUENCES:
        print(_name, run_sequence(_name)[-1])
'''


def standalone_source(compiled: Compiled, params: Parameters, title: str = "circuit",
                      module: str = "circuit_forward") -> str:
    """The text of the standalone file for ``compiled``'s units and sequences at ``params``."""
    names = list(compiled.unit_names)
    codes = ("logistic", "tanh", "linear", "relu")
    activations = [codes[c] for c in compiled.activation_codes]
    connections = [(names[i], names[j], float(params.W[i, j])) for i, j in compiled.connections]
    sequences = {}
    for s, seq in enumerate(compiled.sequence_names):
        L = int(compiled.lengths[s])
        cm, cv = compiled.clamp_mask[s, : L + 1], compiled.clamp_values[s, : L + 1]
        clamps = {names[j]: [float(cv[t, j]) if cm[t, j] else None for t in range(L + 1)]
                  for j in np.flatnonzero(cm.any(axis=0))}
        sequences[seq] = {"steps": L, "clamps": clamps}
    return _TEMPLATE.format(title=title.replace('"', "'"), names=", ".join(names) or "(none)",
                            units=names, module=module, first=compiled.sequence_names[0] if sequences else "name",
                            activations=activations, bias=[float(b) for b in params.bias],
                            init=[float(v) for v in params.init], connections=connections,
                            sequences=sequences)
