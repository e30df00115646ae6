"""Checkpoint files used through `dsmc run --resume`, and atomic writing.

A truncated or damaged checkpoint, one of another schema or schema version, of another case
or of another seed is refused with one line naming the checkpoint, exit status 2, no result
file, and the checkpoint left as it was. A write interrupted by an exception or Ctrl-C leaves
neither a half file under the final name nor a temporary; a SIGKILL in the middle of a write
leaves the final name absent (or the previous file intact)."""

from __future__ import annotations

import signal
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest

from dsmc.case import parse_case
from dsmc.cli import main
from dsmc.io import results
from dsmc.io.checkpoint import write_checkpoint
from dsmc.io.results import write_results
from dsmc.runner import checkpoint_path
from dsmc.simulation import Simulation

from conftest import one_error_line

TEXT = """\
[gas]
species = "Ar"
temperature = 300.0
pressure = 100.0
[domain]
length = 1.0e-3
cells = 5
[boundary.xmin]
model = "diffuse"
velocity = [0.0, -50.0, 0.0]
[boundary.xmax]
model = "maxwell"
accommodation = 0.8
temperature = 350.0
[numerics]
particles_per_cell = 10
[run]
seed = 7
transient_steps = 10
sample_steps = 40
batches = 4
"""


def make_checkpoint(path: Path, text: str = TEXT, steps: int = 25, seed=None) -> Path:
    """A real checkpoint of ``text`` after ``steps`` steps of its schedule."""
    sim = Simulation(parse_case(text), seed=seed)
    sim.run(stop=lambda: sim.step_count >= steps)
    write_checkpoint(path, sim.state(), text, sim.seed, None)
    return path


@pytest.fixture
def setup(tmp_path):
    case = tmp_path / "c.toml"
    case.write_text(TEXT, encoding="utf-8")
    out = tmp_path / "c.h5"
    return case, out, checkpoint_path(out, None)


def resume(case: Path, out: Path, *extra) -> int:
    return main(["run", str(case), "-o", str(out), "--resume", "--quiet", "--threads", "1",
                 *map(str, extra)])


def fields(path: Path) -> dict:
    with h5py.File(path) as f:
        return {k: f[k][()] for k in ("fields/temperature", "fields/velocity",
                                      "walls/xmin/shear_stress", "run/steps")}


def test_an_intact_checkpoint_resumes_to_the_uninterrupted_result(setup, tmp_path):
    case, out, ckpt = setup
    make_checkpoint(ckpt)
    assert resume(case, out) == 0
    assert not ckpt.exists()  # removed once the result is written
    straight = tmp_path / "straight.h5"
    assert main(["run", str(case), "-o", str(straight), "--quiet", "--threads", "1"]) == 0
    a, b = fields(out), fields(straight)
    assert all(np.array_equal(a[k], b[k]) for k in a), (a, b)


# ----------------------------------------------------------------------------
# refused checkpoints: (how to damage or replace it, text the message contains)


def _truncated_half(p):
    data = p.read_bytes()
    p.write_bytes(data[: len(data) // 2])


def _truncated_head(p):
    p.write_bytes(p.read_bytes()[:512])


def _empty(p):
    p.write_bytes(b"")


def _garbage(p):
    p.write_bytes(bytes(range(256)) * 64)


def _text(p):
    p.write_text("not a checkpoint\n")


def _result_file(p):
    write_results(p, {"@attrs": {"title": "a result"}}, overwrite=True)


def _newer_version(p):
    write_results(p, {"@attrs": {"case_text": TEXT, "seed": 7, "replica": -1}, "state": {}},
                  overwrite=True, schema=("dsmc-checkpoint", 2))


def _older_version(p):
    with h5py.File(p, "r+") as f:
        f.attrs["schema_version"] = 0


def _no_schema(p):
    p.unlink()
    with h5py.File(p, "w") as f:
        f["x"] = np.arange(3)


def _other_case(p):
    make_checkpoint(p, TEXT.replace("accommodation = 0.8", "accommodation = 0.9"))


def _other_seed(p):
    make_checkpoint(p, seed=8)


def _missing(p):
    p.unlink()


REFUSED = [
    (_truncated_half, "unreadable or damaged HDF5 file"),
    (_truncated_head, "unreadable or damaged HDF5 file"),
    (_empty, "unreadable or damaged HDF5 file"),
    (_garbage, "unreadable or damaged HDF5 file"),
    (_text, "unreadable or damaged HDF5 file"),
    (_result_file, "not a checkpoint file of this program (schema 'dsmc-results')"),
    (_no_schema, "not a checkpoint file of this program (schema '')"),
    (_newer_version, "checkpoint schema version 2, this program reads version 1"),
    (_older_version, "checkpoint schema version 0, this program reads version 1"),
    (_other_case, "checkpoint of a different case text"),
    (_other_seed, "checkpoint of seed 8 replica -1, not of this run"),
    (_missing, "no such checkpoint file"),
]


@pytest.mark.parametrize("damage, expected", REFUSED, ids=[d.__name__[1:] for d, _ in REFUSED])
def test_resume_refuses(setup, capsys, damage, expected):
    case, out, ckpt = setup
    make_checkpoint(ckpt)
    damage(ckpt)
    before = ckpt.read_bytes() if ckpt.exists() else None
    assert resume(case, out) == 2
    stdout, err = capsys.readouterr()
    line = one_error_line(err)
    assert line.startswith(f"dsmc: error: {ckpt}: "), line
    assert expected in line, line
    assert stdout == ""
    assert not out.exists()
    assert (ckpt.read_bytes() if ckpt.exists() else None) == before  # left as it was
    assert sorted(p.name for p in out.parent.iterdir() if p.name.endswith(".part")) == []


def test_resume_with_another_seed_on_the_command_line(setup, capsys):
    case, out, ckpt = setup
    make_checkpoint(ckpt)
    assert resume(case, out, "--seed", 8) == 2
    assert "checkpoint of seed 7 replica -1, not of this run" in one_error_line(
        capsys.readouterr().err)
    assert ckpt.exists() and not out.exists()


def _drop(name):
    def damage(p):
        with h5py.File(p, "r+") as f:
            del f["state"][name]
    damage.__name__ = f"_without_{name}"
    return damage


def _reshape(name):
    def damage(p):
        with h5py.File(p, "r+") as f:
            data = f["state"][name][()]
            del f["state"][name]
            f["state"][name] = data.ravel()[:-1]
    damage.__name__ = f"_reshaped_{name}"
    return damage


@pytest.mark.parametrize("damage", [_drop("pos"), _drop("coll_state"), _reshape("v")],
                         ids=["without-pos", "without-coll_state", "reshaped-v"])
def test_resume_refuses_an_incomplete_state(setup, capsys, damage):
    case, out, ckpt = setup
    make_checkpoint(ckpt)
    damage(ckpt)
    status = resume(case, out)  # once a KeyError/ValueError traceback from restore
    assert status == 2
    assert one_error_line(capsys.readouterr().err).startswith(f"dsmc: error: {ckpt}: ")


# ----------------------------------------------------------------------------
# nothing is ever partially written


def _interrupt_after(monkeypatch, groups: int, exc=KeyboardInterrupt):
    """Make the HDF5 tree writer raise ``exc`` after writing ``groups`` top-level entries."""
    real = results._write_tree
    depth = [0]

    def writer(group, tree):
        depth[0] += 1
        try:
            if depth[0] == 1:
                part = dict(list(tree.items())[:groups])
                real(group, part)
                raise exc()
            return real(group, tree)
        finally:
            depth[0] -= 1

    monkeypatch.setattr(results, "_write_tree", writer)


def test_result_write_interrupted_by_ctrl_c_leaves_nothing(setup, monkeypatch, capsys):
    case, out, _ = setup
    _interrupt_after(monkeypatch, groups=3)
    assert main(["run", str(case), "-o", str(out), "--quiet", "--threads", "1"]) == 130
    assert "interrupted" in capsys.readouterr().err
    assert sorted(p.name for p in case.parent.iterdir()) == ["c.toml"]


def test_result_write_failing_keeps_the_previous_file(setup, monkeypatch):
    case, out, _ = setup
    out.write_bytes(b"previous result")
    _interrupt_after(monkeypatch, groups=2, exc=OSError)
    with pytest.raises(OSError):
        main(["run", str(case), "-o", str(out), "--quiet", "--threads", "1", "--force"])
    assert out.read_bytes() == b"previous result"
    assert sorted(p.name for p in case.parent.iterdir()) == ["c.h5", "c.toml"]


def test_checkpoint_write_interrupted_keeps_the_previous_checkpoint(setup, monkeypatch):
    _, _, ckpt = setup
    make_checkpoint(ckpt, steps=5)
    before = ckpt.read_bytes()
    _interrupt_after(monkeypatch, groups=0)
    with pytest.raises(KeyboardInterrupt):
        make_checkpoint(ckpt, steps=30)
    assert ckpt.read_bytes() == before
    assert sorted(p.name for p in ckpt.parent.iterdir()) == ["c.h5.checkpoint", "c.toml"]


KILLED = """\
import os, signal, sys
from dsmc.cli import main
from dsmc.io import results
real = results._write_tree
def writer(group, tree):
    real(group, dict(list(tree.items())[:3]))
    group.file.flush()
    os.kill(os.getpid(), signal.SIGKILL)
results._write_tree = writer
main(sys.argv[1:])
"""


@pytest.mark.parametrize("previous", [False, True], ids=["new", "replacing"])
def test_sigkill_while_writing_never_leaves_a_half_result(setup, previous):
    case, out, _ = setup
    if previous:
        out.write_bytes(b"previous result")
    proc = subprocess.run([sys.executable, "-c", KILLED, "run", str(case), "-o", str(out),
                           "--quiet", "--threads", "1", "--force"],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == -signal.SIGKILL, proc.stderr
    if previous:
        assert out.read_bytes() == b"previous result"
    else:
        assert not out.exists()
    # only the documented leftover: the temporary, under its own name
    leftovers = sorted(p.name for p in case.parent.iterdir())
    assert [n for n in leftovers if n not in ("c.toml", "c.h5")] == [
        n for n in leftovers if n.startswith(".c.h5.") and n.endswith(".part")]
    assert len(leftovers) == 2 + previous
