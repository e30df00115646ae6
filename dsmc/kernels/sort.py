"""Counting sort of particles by cell, scattering them into cell order.

Particles are stored in cell order so that collisions and sampling stream
through contiguous memory: cell ``c`` owns positions
``cell_start[c] .. cell_start[c+1]``.

The sort is a stable counting sort in two passes over chunks of particles:
a histogram of cell keys per chunk, then a scatter of each particle's data
straight to its sorted place (no permutation array is gathered through, which
saved 12 of the 28 ns per particle that keys, counting sort and three
gathers took on the benchmark case; see ``tools/bench.py``).  The move
kernel computes the keys and the histogram as it moves the particles, so
after a step only the scatter is left.

Chunks are runs of whole blocks (the move kernel's random-stream blocks of
``dsmc.simulation.BLOCK_SIZE`` particles), at most ``SORT_CHUNKS`` of them,
their number depending only on the particle and key counts
(:func:`chunk_layout`).  A stable sort has one result, so the order does not
depend on the chunking or on the thread count.
"""

from __future__ import annotations

import numba as nb

SORT_CHUNKS = 16  # most histogram chunks


@nb.njit(cache=True)
def chunk_layout(n, block_size, n_keys):
    """``(n_chunks, chunk_size)``: chunk ``ch`` holds particles
    ``ch * chunk_size .. min(n, (ch + 1) * chunk_size)``; chunk_size is a
    multiple of ``block_size``.

    As many chunks as there are blocks, up to ``SORT_CHUNKS``, so that two
    threads share even a run of a few blocks.  With blocks of 1024 instead of
    4096 particles and one block per chunk instead of eight, the two-thread
    step at 1e4 particles of the benchmark case (``tools/bench.py``) went from
    19.0-20.2 to 13.6-14.6 ns per particle-step, runs of the two builds
    alternating on one machine; one thread and 1e5-1e6 particles were not
    slower.  Each chunk
    costs a histogram row of ``n_keys`` counters to clear and to add up, so a
    sparse run (few particles per key) gets no more than ``n // n_keys``
    chunks, and at least 2: the histogram work stays below the particle work.
    """
    n_blocks = (n + block_size - 1) // block_size
    n_chunks = max(1, min(SORT_CHUNKS, n_blocks, max(2, n // max(1, n_keys))))
    per_chunk = max(1, (n_blocks + n_chunks - 1) // n_chunks)
    n_chunks = max(1, (n_blocks + per_chunk - 1) // per_chunk)
    return n_chunks, per_chunk * block_size


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


@nb.njit(parallel=True, cache=True)
def keys_2d(pos, n, lx, ly, nx, ny, key):
    """Cell index ``ix + nx * iy`` of each particle of a uniform ``nx`` x ``ny`` grid on
    ``[0, lx] x [0, ly]`` (a coordinate on the far side belongs to the last cell); a removed
    particle (``pos[i, 0] < 0``) gets the extra key ``nx * ny``, as in :func:`keys_1d`."""
    sx = nx / lx
    sy = ny / ly
    for i in nb.prange(n):
        if pos[i, 0] < 0.0:
            key[i] = nx * ny
            continue
        ix = int(pos[i, 0] * sx)
        if ix >= nx:
            ix = nx - 1
        iy = int(pos[i, 1] * sy)
        if iy >= ny:
            iy = ny - 1
        key[i] = ix + nx * iy


@nb.njit(parallel=True, cache=True)
def histogram(key, n, n_keys, block_size, hist):
    """``hist[ch, k]``: particles of chunk ``ch`` with key ``k`` (rows beyond
    the chunks in use are left alone)."""
    n_chunks, size = chunk_layout(n, block_size, n_keys)
    for ch in nb.prange(n_chunks):
        row = hist[ch]
        for k in range(n_keys):
            row[k] = 0
        for i in range(ch * size, min(n, (ch + 1) * size)):
            row[key[i]] += 1


@nb.njit(parallel=True, cache=True)
def scatter_sorted(key, n, n_keys, block_size, hist, start, pos, v, sp, erot, vib,
                   pos_out, v_out, sp_out, erot_out, vib_out):
    """Write particles ``0..n-1`` in stable key order into the ``*_out`` arrays.

    ``hist`` is the per-chunk histogram of :func:`histogram` (overwritten by
    the chunk offsets); ``start`` (length ``n_keys + 1``) receives the first
    sorted position of each key.  ``erot``/``vib`` (internal energies) are
    moved too unless they are empty (monatomic gases).  ``pos`` has one or two
    columns (1-D and 2-D grids).
    """
    n_chunks, size = chunk_layout(n, block_size, n_keys)
    start[0] = 0
    for k in range(n_keys):
        total = 0
        for ch in range(n_chunks):
            total += hist[ch, k]
        start[k + 1] = start[k] + total
    for k in nb.prange(n_keys):
        p = start[k]
        for ch in range(n_chunks):
            c = hist[ch, k]
            hist[ch, k] = p
            p += c
    dim = pos.shape[1]
    internal = erot.size > 0
    for ch in nb.prange(n_chunks):
        fill = hist[ch]
        for i in range(ch * size, min(n, (ch + 1) * size)):
            k = key[i]
            j = fill[k]
            fill[k] = j + 1
            # positions have one or two coordinates; the unrolled copy made the scatter 7-10 %
            # faster than a loop over ``dim`` (ratios 0.897, 0.897 on one thread and 0.927 on
            # two, 1e6 particles, the two builds alternating in one process)
            pos_out[j, 0] = pos[i, 0]
            if dim == 2:
                pos_out[j, 1] = pos[i, 1]
            v_out[j, 0] = v[i, 0]
            v_out[j, 1] = v[i, 1]
            v_out[j, 2] = v[i, 2]
            sp_out[j] = sp[i]
            if internal:
                erot_out[j] = erot[i]
                vib_out[j] = vib[i]
