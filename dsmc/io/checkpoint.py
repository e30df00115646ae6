"""Restartable run state in HDF5, written atomically.

A checkpoint holds the case text, the seed and :meth:`Simulation.state`
(particles, every random-stream state, NTC state, sample accumulators,
schedule counters).  A run resumed from it continues bit-identically to one
that was never interrupted, on any thread count (the random streams belong to
cells and particle blocks, not threads).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from dsmc.errors import UserError
from dsmc.io.results import Data, read_results, write_results

SCHEMA = ("dsmc-checkpoint", 1)


def write_checkpoint(path: str | Path, state: dict, case_text: str, seed: int, replica: int | None):
    """Replace ``path`` by a checkpoint of ``state`` (written under a temporary name first)."""
    arrays = {}
    attrs = {"case_text": case_text, "seed": seed, "replica": -1 if replica is None else replica}
    for key, val in state.items():
        if isinstance(val, str):
            attrs["s:" + key] = val
        else:
            arrays[key] = Data(np.asarray(val), "1")
    write_results(path, {"@attrs": attrs, "state": arrays}, overwrite=True, schema=SCHEMA)


def read_checkpoint(path: str | Path, case_text: str, seed: int, replica: int | None) -> dict:
    """The state stored at ``path``, after checking it belongs to this case and seed."""
    tree = read_results(path, schema=SCHEMA, what="checkpoint")
    attrs = tree.get("@attrs", {})
    if attrs.get("case_text") != case_text:
        raise UserError(f"{path}: checkpoint of a different case text; resume with the case it was "
                        "written for")
    if attrs.get("seed") != seed or attrs.get("replica") != (-1 if replica is None else replica):
        raise UserError(f"{path}: checkpoint of seed {attrs.get('seed')} replica "
                        f"{attrs.get('replica')}, not of this run")
    state = {k: d.value for k, d in tree["state"].items() if k != "@attrs"}
    for k, v in attrs.items():
        if k.startswith("s:"):
            state[k[2:]] = v
    return state
