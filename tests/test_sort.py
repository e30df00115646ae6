"""Counting sort: identical to a stable sort, whatever the chunking; the move kernel's
keys and histogram are those the sort would compute itself."""

from __future__ import annotations

import numpy as np
import pytest

from dsmc.case import parse_case
from dsmc.kernels.sort import SORT_CHUNKS, chunk_layout, histogram, keys_1d, scatter_sorted
from dsmc.simulation import BLOCK_SIZE, Simulation
from tests.test_reproducibility import CASE


@pytest.mark.parametrize("dim", [1, 2])
@pytest.mark.parametrize("internal", [False, True])
@pytest.mark.parametrize("n,n_keys", [(0, 3), (1, 1), (10, 3), (100_003, 17), (600_001, 25_000)])
def test_scatter_is_the_stable_sort(n, n_keys, internal, dim):
    rng = np.random.default_rng(n)
    key = rng.integers(0, n_keys, n).astype(np.int32)
    pos = rng.random((n, dim))
    v = rng.normal(size=(n, 3))
    sp = rng.integers(0, 3, n).astype(np.uint8)
    ni = n if internal else 0  # internal energies are empty arrays for monatomic gases
    erot = rng.random(ni)
    vib = rng.integers(0, 5, ni).astype(np.int32)
    hist = np.zeros((SORT_CHUNKS, n_keys), dtype=np.int32)
    start = np.zeros(n_keys + 1, dtype=np.int64)
    out = [np.empty_like(a) for a in (pos, v, sp, erot, vib)]
    histogram(key, n, n_keys, BLOCK_SIZE, hist)
    scatter_sorted(key, n, n_keys, BLOCK_SIZE, hist, start, pos, v, sp, erot, vib, *out)
    order = np.argsort(key, kind="stable")
    for a, b in zip((pos, v, sp, erot, vib), out):
        assert np.array_equal(b, a[order] if a.size else a)
    assert np.array_equal(start, np.concatenate([[0], np.cumsum(np.bincount(key, minlength=n_keys))]))


@pytest.mark.parametrize("n_keys", [1, 251, 10**6])
@pytest.mark.parametrize("n", [0, 1, BLOCK_SIZE, BLOCK_SIZE + 1, 32768 * 3 + 5, 10**6])
def test_chunks_are_whole_blocks_covering_all_particles(n, n_keys):
    n_chunks, size = chunk_layout(n, BLOCK_SIZE, n_keys)
    assert 1 <= n_chunks <= SORT_CHUNKS
    assert size % BLOCK_SIZE == 0
    assert (n_chunks - 1) * size < max(n, 1) <= n_chunks * size


def test_chunk_count():
    """Two blocks are two chunks (both threads move a small run); a sparse run (fewer
    particles than keys) gets two chunks, not SORT_CHUNKS histogram rows."""
    assert chunk_layout(2 * BLOCK_SIZE, BLOCK_SIZE, 10)[0] == 2
    assert chunk_layout(10**6, BLOCK_SIZE, 25_001)[0] == SORT_CHUNKS
    assert chunk_layout(10**6, BLOCK_SIZE, 10**6 + 1)[0] == 2
    assert chunk_layout(10**6, BLOCK_SIZE, 10**5)[0] == 10


def test_move_kernel_keys_and_histogram_match_the_sort():
    sim = Simulation(parse_case(CASE.format(seed=3)))
    sim.advance(3)
    p = sim.particles
    sim._move()
    key = p.key[: p.n].copy()
    hist = sim._hist.copy()
    keys_1d(p.pos, p.n, sim.grid.length, sim.grid.cells, p.key)
    assert np.array_equal(key, p.key[: p.n])
    histogram(p.key, p.n, sim.grid.cells + 1, BLOCK_SIZE, sim._hist)
    n_chunks, _ = chunk_layout(p.n, BLOCK_SIZE, sim.grid.cells + 1)
    assert np.array_equal(hist[:n_chunks], sim._hist[:n_chunks])


@pytest.mark.parametrize("dim, internal", [(1, False), (2, False), (2, True)])
def test_growing_the_store_keeps_the_live_particles(dim, internal):
    """Particles.reserve with live particles (open sides grow the population): every live
    array keeps its rows, whatever its number of columns."""
    from dsmc.particles import Particles

    rng = np.random.default_rng(5)
    p = Particles(100, dim=dim, internal=internal)
    p.n = 80
    live = [rng.random((80, dim)), rng.normal(size=(80, 3)),
            rng.integers(0, 3, 80).astype(np.uint8)]
    p.pos[:80], p.v[:80], p.sp[:80] = live
    if internal:
        p.erot[:80] = rng.random(80)
        live.append(p.erot[:80].copy())
    p.reserve(1000)
    assert p.capacity >= 1000 and p.n == 80
    for a, b in zip((p.pos, p.v, p.sp, p.erot), live):
        assert np.array_equal(a[:80], b)
