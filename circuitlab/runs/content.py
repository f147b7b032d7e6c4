"""The content hash: which runs belong to "the same circuit".

A circuit's content hash is the SHA-256 (hex) of its *canonical JSON*:

- the document as the file format writes it (``model_dump(mode="json")``),
  leaving out fields that hold their default value, so that an optional
  field added in a later version does not change the hash of older circuits;
- without what training or layout changes: the circuit's name and
  description, the canvas positions (``x``, ``y``), the training settings and
  the record of the last run (``trained``), the sequences file's path (the
  sequences themselves count), the format name and version;
- without the trained values: the weight of every connection that trains,
  the bias of every unit whose bias trains, and the initial value of every
  unit whose initial state is learned (frozen values are part of the design
  and count);
- keys sorted, no whitespace, UTF-8.

So training a circuit, restoring a run's weights, moving units on the
canvas or changing a learning rate keeps its hash; adding a unit, a
connection, a clamp or a sequence row changes it.
"""

import hashlib
import json

from circuitlab.model import Circuit

_DROPPED = ("format", "version", "name", "description", "training", "trained", "sequences_file")


def canonical_document(circuit: Circuit) -> dict:
    """The part of ``circuit`` that the content hash covers (see the module docstring)."""
    doc = circuit.model_dump(mode="json", exclude_defaults=True, warnings=False)
    for key in _DROPPED:
        doc.pop(key, None)
    units = {u.name: u for u in circuit.units}
    for unit in doc.get("units", []):
        unit.pop("x", None)
        unit.pop("y", None)
        source = units[unit["name"]]
        if source.bias_trains:
            unit.pop("bias", None)
        if source.initial_mode == "learned":
            unit.pop("initial_value", None)
    for conn, source in zip(doc.get("connections", []), circuit.connections):
        if source.trains:
            conn.pop("weight", None)
    return doc


def canonical_json(circuit: Circuit) -> str:
    """Sorted keys, no whitespace: the text that is hashed."""
    return json.dumps(canonical_document(circuit), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, allow_nan=False)


def content_hash(circuit: Circuit) -> str:
    """SHA-256 (64 hex digits) of ``canonical_json(circuit)``."""
    return hashlib.sha256(canonical_json(circuit).encode("utf-8")).hexdigest()
