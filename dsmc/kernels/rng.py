"""Random streams for the kernels: xoshiro256** over a plain ``uint64`` state array.

Every kernel that needs random numbers takes a state array of shape
``(n_streams, 4)`` and the index of the stream it may use.  Streams are
assigned to fixed pieces of work (a cell for collisions, a fixed-size block of
particles for wall reflections), never to threads, so a run is bit-identical for
a given seed whatever the thread count, and the whole generator state is an
ordinary array that a checkpoint can store.

Generator: xoshiro256** 1.0, Blackman and Vigna (2018), "Scrambled linear
pseudorandom number generators" (public-domain reference algorithm).  The
initial states come from :class:`numpy.random.SeedSequence`, which spreads a
user seed over independent, well-mixed words.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

_TWO_M53 = 1.0 / 9007199254740992.0  # 2**-53


def new_streams(seed_sequence: np.random.SeedSequence, n_streams: int) -> np.ndarray:
    """Independent stream states, shape ``(n_streams, 4)``, from a SeedSequence."""
    words = seed_sequence.generate_state(4 * max(n_streams, 1), dtype=np.uint64)
    state = words.reshape(-1, 4).copy()
    zero = ~state.any(axis=1)  # xoshiro must not start from the all-zero state
    state[zero, 0] = np.uint64(0x9E3779B97F4A7C15)
    return state[:n_streams] if n_streams > 0 else state[:0]


@nb.njit(inline="always")
def _rotl(x, k):
    return (x << np.uint64(k)) | (x >> np.uint64(64 - k))


@nb.njit(inline="always")
def next_u64(state, s):
    """Advance stream ``s`` and return 64 random bits."""
    s0 = state[s, 0]
    s1 = state[s, 1]
    s2 = state[s, 2]
    s3 = state[s, 3]
    result = _rotl(s1 * np.uint64(5), 7) * np.uint64(9)
    t = s1 << np.uint64(17)
    s2 ^= s0
    s3 ^= s1
    s1 ^= s2
    s0 ^= s3
    s2 ^= t
    s3 = _rotl(s3, 45)
    state[s, 0] = s0
    state[s, 1] = s1
    state[s, 2] = s2
    state[s, 3] = s3
    return result


@nb.njit(inline="always")
def uniform(state, s):
    """Uniform double on [0, 1) with 53 random bits."""
    return float(next_u64(state, s) >> np.uint64(11)) * _TWO_M53


@nb.njit(inline="always")
def uniform_open0(state, s):
    """Uniform double on (0, 1]: safe under ``log``."""
    return 1.0 - uniform(state, s)


@nb.njit(inline="always")
def normal(state, s):
    """Standard normal deviate (Box-Muller, one of the pair kept)."""
    r = math.sqrt(-2.0 * math.log(uniform_open0(state, s)))
    return r * math.cos(2.0 * math.pi * uniform(state, s))


@nb.njit(cache=True)
def fill_uniform(state, s, out):
    """Fill ``out`` with uniforms from stream ``s`` (used by tests and set-up)."""
    for i in range(out.size):
        out[i] = uniform(state, s)


@nb.njit(cache=True)
def fill_cells_1d(state, s, cell_start, dx, sigma, drift, pos, v):
    """Place particles uniformly in each cell of a 1-D grid, with Maxwell-Boltzmann velocities.

    Particles ``cell_start[c] .. cell_start[c+1]`` go to cell ``c``
    (``c dx <= x < (c+1) dx``).  Each velocity component is normal with mean
    ``drift[c, k]`` and standard deviation ``sigma[c] = sqrt(kT/m)``: the exact
    equilibrium distribution f(v) ~ exp(-m |v - u|^2 / (2kT)) (standard
    kinetic theory).
    """
    for c in range(cell_start.size - 1):
        for i in range(cell_start[c], cell_start[c + 1]):
            pos[i, 0] = (c + uniform(state, s)) * dx
            for k in range(3):
                v[i, k] = drift[c, k] + sigma[c] * normal(state, s)


@nb.njit(cache=True)
def fill_cells_2d(state, s, cell_start, nx, dx, dy, sigma, drift, pos, v):
    """:func:`fill_cells_1d` on an ``nx``-wide 2-D grid: particles
    ``cell_start[c] .. cell_start[c+1]`` go uniformly into cell
    ``c = ix + nx * iy`` (``ix dx <= x < (ix+1) dx``, likewise in y)."""
    for c in range(cell_start.size - 1):
        ix = c % nx
        iy = c // nx
        for i in range(cell_start[c], cell_start[c + 1]):
            pos[i, 0] = (ix + uniform(state, s)) * dx
            pos[i, 1] = (iy + uniform(state, s)) * dy
            for k in range(3):
                v[i, k] = drift[c, k] + sigma[c] * normal(state, s)
