"""The shipped 2-D cases run from their files (shortened), and their XDMF sidecars and plots open.

Smoke tests of the whole chain, case file -> `dsmc run` -> HDF5 + XDMF -> the plotting tools;
the physics of each piece is checked elsewhere (tests/test_bodies.py, tests/test_open_2d.py,
tests/test_microchannel.py, tests/test_planar_2d.py).
"""

from __future__ import annotations

import subprocess
import sys
import xml.etree.ElementTree as ET

import h5py
import numpy as np
import pytest

from conftest import CASES, ROOT
from dsmc.case import load_case, parse_case
from dsmc.runner import run_case
from tests.test_xdmf_reader import check_fields, read_xdmf

SHIPPED_2D = sorted(p for p in CASES.glob("*.toml") if load_case(p).domain.dim == 2)


def test_the_three_2d_scenarios_are_shipped():
    kinds = set()
    for p in SHIPPED_2D:
        c = load_case(p)
        if c.bodies and any(w.model == "inflow" for w in c.walls):
            kinds.add("flow over a body")
        elif sum(w.model == "pressure" for w in c.walls) == 2:
            kinds.add("channel between reservoirs")
        elif any(w.velocity != (0.0, 0.0, 0.0) for w in c.walls):
            kinds.add("lid-driven cavity")
    assert kinds == {"flow over a body", "channel between reservoirs", "lid-driven cavity"}


@pytest.mark.parametrize("path", SHIPPED_2D, ids=lambda p: p.stem)
def test_shipped_2d_case_runs_and_its_outputs_open(path, tmp_path):
    text = path.read_text()
    case = parse_case(text, str(path)).with_run(transient_steps=4, sample_steps=16, batches=2)
    out = tmp_path / f"{path.stem}.h5"
    status, sim = run_case(case, out, threads=2, quiet=True)
    assert status == 0 and out.exists()
    xmf = out.with_suffix(".xmf")
    root = ET.parse(xmf).getroot()
    with h5py.File(out) as f:
        for item in root.iter("DataItem"):
            if item.get("Format") == "HDF":
                name, dataset = item.text.split(":")
                assert name == out.name
                assert " ".join(map(str, f[dataset].shape)) == item.get("Dimensions")
        assert np.isfinite(f["fields/temperature"][()]).any()
        has_bodies = "bodies" in f
        read = read_xdmf(xmf)  # and what a viewer's XDMF reader makes of it
        assert read["errors"] == ""
        assert set(read["blocks"]) == {case.title, *(f["bodies"] if has_bodies else ())}
        assert check_fields(read["blocks"][case.title], f) >= 10
    tools = [["plot_2d.py", str(out), "--field", "temperature", "-o", str(tmp_path / "f.png")]]
    if has_bodies:
        tools.append(["plot_surface.py", str(out), "--free-molecular", "-o",
                      str(tmp_path / "s.png")])
    for tool, *args in tools:
        run = subprocess.run([sys.executable, str(ROOT / "tools" / tool), *args],
                             capture_output=True, text=True, timeout=300)
        assert run.returncode == 0, run.stderr
        assert (tmp_path / args[-1]).stat().st_size > 10_000
