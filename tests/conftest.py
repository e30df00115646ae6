"""Shared helpers for the tests."""

from __future__ import annotations

from pathlib import Path

import numba
import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"


def bulk_mean(sim, name, select, cells=slice(None)):
    """Domain average of ``select(field)`` over ``cells`` and its batch-means standard error."""
    per = np.array([np.mean(select(f[name])[cells]) for f in sim.batch_fields()])
    total = np.mean(select(sim.fields()[name][0])[cells])
    return float(total), float(per.std(ddof=1) / np.sqrt(per.size))


def relative(a, b):
    return (a - b) / abs(b)


@pytest.fixture
def cases_dir():
    return CASES


@pytest.fixture(autouse=True)
def _restore_threads():
    """`dsmc run --threads 1` sets numba's thread count for the process: put it back."""
    n = numba.get_num_threads()
    yield
    numba.set_num_threads(n)


def one_error_line(err: str) -> str:
    """The single stderr line of a user error (asserts there is exactly one, no traceback)."""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("dsmc: error: "), err
    assert "Traceback" not in err
    return lines[0]
