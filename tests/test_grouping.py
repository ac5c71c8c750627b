"""Hash grouping against numpy's sort-based unique (reference implementation)."""

import numpy as np

from meshpress.bodies.grouping import group


def test_group_matches_numpy_unique():
    rng = np.random.default_rng(0)
    keys = rng.integers(0, 500, 5000)
    codes, first, last, counts = group(keys)
    u, idx, inv, cnt = np.unique(keys, return_index=True, return_inverse=True, return_counts=True)
    # Same partition: keys equal <=> codes equal; same first index and size per group.
    assert len(first) == len(u)
    np.testing.assert_array_equal(keys[first][codes], keys)
    order = np.argsort(keys[first])
    np.testing.assert_array_equal(first[order], idx)
    np.testing.assert_array_equal(counts[order], cnt)
    # last is the last occurrence of each key.
    rev = len(keys) - 1 - np.unique(keys[::-1], return_index=True)[1]
    np.testing.assert_array_equal(last[order], rev)
