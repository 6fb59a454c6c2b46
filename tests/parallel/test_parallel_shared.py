"""Shared memory between forked workers.

Reference: what a forked worker wrote, read back exactly by the parent.
"""

from __future__ import annotations

import numpy as np
import pytest


def test_shared_arrays_carry_what_a_forked_worker_writes():
    # reference: the values the worker wrote (exact), seen by the parent without being sent back
    import multiprocessing

    from analyzer import parallel

    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.skip("needs fork")
    a, b = parallel.shared_zeros(5, (np.float64, np.complex128))
    assert np.all(a == 0) and np.all(b == 0)                      # zero-filled (exact)

    def write():
        a[:] = np.arange(5.0)
        b[2] = 1 - 2j

    p = multiprocessing.get_context("fork").Process(target=write)
    p.start()
    p.join()
    assert p.exitcode == 0
    np.testing.assert_array_equal(a, np.arange(5.0))
    assert b[2] == 1 - 2j and b[0] == 0
