"""Counting sort of particles by cell and physical reordering.

Particles are stored in cell order so that collisions and sampling stream
through contiguous memory: cell ``c`` owns positions
``cell_start[c] .. cell_start[c+1]``.
"""

from __future__ import annotations

import numba as nb


@nb.njit(parallel=True, cache=True)
def keys_1d(pos, n, length, n_cells, key):
    """Cell index of each particle of a uniform 1-D grid on [0, length]."""
    scale = n_cells / length
    for i in nb.prange(n):
        k = int(pos[i, 0] * scale)
        if k >= n_cells:
            k = n_cells - 1
        elif k < 0:
            k = 0
        key[i] = k


@nb.njit(cache=True)
def counting_sort(key, n, n_keys, start, perm):
    """Stable counting sort: ``perm`` lists particle indices in key order.

    ``start`` (length ``n_keys + 1``) receives the first sorted position of
    each key.
    """
    for k in range(n_keys + 1):
        start[k] = 0
    for i in range(n):
        start[key[i] + 1] += 1
    for k in range(n_keys):
        start[k + 1] += start[k]
    fill = start[:n_keys].copy()
    for i in range(n):
        k = key[i]
        perm[fill[k]] = i
        fill[k] += 1


@nb.njit(parallel=True, cache=True)
def gather(src, dst, perm, n):
    """``dst[i] = src[perm[i]]`` for the first ``n`` entries (rows for 2-D arrays)."""
    for i in nb.prange(n):
        dst[i] = src[perm[i]]

