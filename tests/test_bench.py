"""Smoke test of tools/bench.py: it runs at tiny sizes and writes the figures as JSON.

No timing is asserted: performance figures are ratios within one run of the
tool, read by people, not checked here.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

BENCH = ROOT / "tools" / "bench.py"


def test_bench_runs_and_writes_json(tmp_path):
    out = tmp_path / "bench.json"
    cmd = [sys.executable, str(BENCH), "--particles", "2000", "--steps", "2", "--threads", "1",
           "--triad-mb", "1", "--all", "--scaling-sizes", "400,1600", "--scaling-budget", "1",
           "--memory-sizes", "400,1600", "--startup-repeats", "1", "--json", str(out)]
    run = subprocess.run(cmd, capture_output=True, text=True, timeout=600, cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    assert "targets:" in run.stdout

    res = json.loads(out.read_text())
    for key in ("machine", "case", "targets", "main", "triad_Bps", "triad_ws_Bps",
                "bytes_per_particle_step", "scaling", "memory", "startup", "cavity", "summary"):
        assert key in res, key
    s = res["summary"]
    for key in ("single_thread_particle_steps_per_s", "floor_particle_steps_per_s",
                "bandwidth_fraction", "bytes_per_particle_step", "collisions_per_particle_per_step",
                "scaling_spread_1", "bytes_per_particle", "bytes_per_particle_tracemalloc",
                "warm_start_s", "cavity_particle_steps_per_s_per_core"):
        assert key in s, key
        assert isinstance(s[key], (int, float)), key

    main = res["main"]
    assert main["particles"] > 0
    t1 = main["threads"]["1"]
    assert set(t1["phase_seconds"]) == {"move", "sort", "collide_sample", "walls"}
    assert t1["step_seconds"] > 0
    assert res["bytes_per_particle_step"]["total"] > 0
    assert [r["particles"] for r in res["scaling"]] == sorted(r["particles"] for r in res["scaling"])
    assert len(res["memory"]["runs"]) == 2
    assert res["startup"]["warm_start_s"] > 0
    assert res["cavity"]["particles"] > 0 and res["cavity"]["grid"][0] == res["cavity"]["grid"][1]
