"""The process settings heavy torch work runs under, set on entry and restored on exit.

Three settings decide how fast genfield runs on a few cores (each measured on 2 cores):

- torch's intra-op threads (``RenderOptions.threads``, the training config's ``threads``);
- denormal floats flushed to zero: tiny activations late in training, and in some baked
  fields, made the matrix products 2-3x slower;
- numpy's BLAS (OpenBLAS) on one thread: after each call its threads spin for a while, and
  torch's threads then wait for a core; with both pools on 2 cores a 65^3 bake took 274 ms,
  with numpy's limited to one 133 ms. numpy's products here are small and gain nothing from
  threads. The limit is applied with threadpoolctl, through one controller made at the first
  entry (finding the loaded libraries costs about 3 ms; changing their limits 0.02 ms).

``heavy_work(threads)`` is entered by every entry point that runs the network (rendering,
baking, queries, training, fitting, meshing). Nested entries only change torch's thread count,
so an inner call costs nothing. torch has no getter for the denormal setting: the outermost
exit sets it back to torch's default (off).
"""

from __future__ import annotations

import functools
import threading
from collections.abc import Iterator
from contextlib import contextmanager

_depth = threading.local()


@functools.cache
def _controller():
    """threadpoolctl's view of the thread pools loaded now (numpy is, by the time it is asked)."""
    import numpy  # noqa: F401  (its BLAS must be loaded to be found)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


@contextmanager
def heavy_work(threads: int | None = None) -> Iterator[None]:
    """torch on ``threads`` threads (None: as it is), denormals flushed, numpy's BLAS on one."""
    import torch

    previous = torch.get_num_threads()
    if threads is not None:
        torch.set_num_threads(max(1, int(threads)))
    depth = getattr(_depth, "value", 0)
    _depth.value = depth + 1
    try:
        if depth:
            yield
            return
        torch.set_flush_denormal(True)
        try:
            with _controller().limit(limits=1, user_api="blas"):
                yield
        finally:
            torch.set_flush_denormal(False)
    finally:
        _depth.value = depth
        torch.set_num_threads(previous)
