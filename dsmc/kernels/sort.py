"""Counting sort of particles by cell and physical reordering.

Particles are stored in cell order so that collisions and sampling stream
through contiguous memory: cell ``c`` owns positions
``cell_start[c] .. cell_start[c+1]``.
"""

from __future__ import annotations

import numba as nb
import numpy as np


@nb.njit(parallel=True, cache=True)
def keys_1d(pos, n, length, n_cells, key):
    """Cell index of each particle of a uniform 1-D grid on [0, length].

    A removed particle (``pos < 0``, set when it leaves through an open side)
    gets the extra key ``n_cells``, so a sort over ``n_cells + 1`` keys puts
    the removed particles last.
    """
    scale = n_cells / length
    for i in nb.prange(n):
        x = pos[i, 0]
        if x < 0.0:
            key[i] = n_cells
            continue
        k = int(x * scale)
        if k >= n_cells:
            k = n_cells - 1
        key[i] = k


SORT_CHUNKS = 16  # most histogram chunks of the parallel counting sort
MIN_CHUNK = 32768  # fewest particles per chunk


@nb.njit(parallel=True, cache=True)
def counting_sort(key, n, n_keys, start, perm):
    """Stable counting sort: ``perm`` lists particle indices in key order.

    ``start`` (length ``n_keys + 1``) receives the first sorted position of
    each key.  The particles are cut into at most ``SORT_CHUNKS`` chunks (their
    number depends only on ``n``); each chunk is histogrammed and scattered in
    parallel, and the chunk offsets per key keep the order of the serial
    stable sort, so the permutation does not depend on the thread count.  The
    histograms take ``4 * n_chunks * n_keys`` bytes.
    """
    n_chunks = min(SORT_CHUNKS, max(1, n // MIN_CHUNK))
    size = (n + n_chunks - 1) // n_chunks
    hist = np.zeros((n_chunks, n_keys), dtype=np.int32)
    for ch in nb.prange(n_chunks):
        for i in range(ch * size, min(n, (ch + 1) * size)):
            hist[ch, key[i]] += 1
    # totals per key, then the running start
    start[0] = 0
    for k in range(n_keys):
        total = 0
        for ch in range(n_chunks):
            total += hist[ch, k]
        start[k + 1] = start[k] + total
    # each chunk's first position within each key
    for k in nb.prange(n_keys):
        pos = start[k]
        for ch in range(n_chunks):
            c = hist[ch, k]
            hist[ch, k] = pos - start[k]
            pos += c
    for ch in nb.prange(n_chunks):
        fill = hist[ch]
        for i in range(ch * size, min(n, (ch + 1) * size)):
            k = key[i]
            perm[start[k] + fill[k]] = i
            fill[k] += 1


@nb.njit(parallel=True, cache=True)
def gather(src, dst, perm, n):
    """``dst[i] = src[perm[i]]`` for the first ``n`` entries of a 1-D array."""
    for i in nb.prange(n):
        dst[i] = src[perm[i]]


@nb.njit(parallel=True, cache=True)
def gather_rows(src, dst, perm, n):
    """``dst[i, :] = src[perm[i], :]`` for the first ``n`` rows, element by element
    (a row-slice assignment per particle costs several times more)."""
    m = src.shape[1]
    for i in nb.prange(n):
        j = perm[i]
        for k in range(m):
            dst[i, k] = src[j, k]
