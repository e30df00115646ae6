"""Counting sort: identical to a stable sort, whatever the chunking."""

from __future__ import annotations

import numpy as np
import pytest

from dsmc.kernels.sort import counting_sort


@pytest.mark.parametrize("n,n_keys", [(1, 1), (10, 3), (100_003, 17), (600_001, 25_000)])
def test_counting_sort_is_the_stable_sort(n, n_keys):
    rng = np.random.default_rng(n)
    key = rng.integers(0, n_keys, n).astype(np.int32)
    start = np.zeros(n_keys + 1, dtype=np.int64)
    perm = np.empty(n, dtype=np.int64)
    counting_sort(key, n, n_keys, start, perm)
    assert np.array_equal(perm, np.argsort(key, kind="stable"))
    assert np.array_equal(start, np.concatenate([[0], np.cumsum(np.bincount(key, minlength=n_keys))]))
