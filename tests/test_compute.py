"""genfield.compute.heavy_work: the settings hold inside and are restored outside."""

from __future__ import annotations

import numpy as np
import torch
from threadpoolctl import threadpool_info

from genfield.compute import heavy_work


def _blas_threads() -> set[int]:
    return {i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"}


def _denormals_survive() -> bool:
    # 1e-40 is a float32 subnormal (IEEE 754: the smallest normal float32 is about 1.18e-38);
    # with flush-to-zero a product that should give one gives 0.
    return float(torch.tensor([1e-20]) * torch.tensor([1e-20])) != 0.0


def test_inside_torch_threads_denormals_and_blas_are_set_and_outside_restored():
    np.dot(np.ones((4, 4)), np.ones((4, 4)))  # numpy's BLAS is loaded
    before_threads, before_blas = torch.get_num_threads(), _blas_threads()
    assert _denormals_survive()
    with heavy_work(1):
        assert torch.get_num_threads() == 1
        assert not _denormals_survive()
        assert _blas_threads() <= {1}
        with heavy_work(2):  # nested: only the thread count changes
            assert torch.get_num_threads() == 2 and not _denormals_survive()
        assert torch.get_num_threads() == 1 and not _denormals_survive()
    assert torch.get_num_threads() == before_threads
    assert _denormals_survive() and _blas_threads() == before_blas


def test_settings_are_restored_when_the_work_raises():
    before = torch.get_num_threads()
    try:
        with heavy_work(1):
            raise KeyError("stop")
    except KeyError:
        pass
    assert torch.get_num_threads() == before and _denormals_survive()
