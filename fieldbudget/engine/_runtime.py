"""Two costs of a large budget that are not its arithmetic, and how the engine keeps them out.

- Python's cyclic garbage collector.  Building and evaluating a budget of
  thousands of inputs allocates hundreds of thousands of small containers
  (syntax-tree nodes, ``uncertainties`` terms, tuples).  Such bursts set off
  collections that walk every tracked object of the process, so the time per
  input doubled from 1000 to 3000 inputs.  None of these objects form
  reference cycles, so :func:`collector_paused` switches the collector off
  for the stretch of work and back on after it; any cycle made meanwhile is
  collected then.
- BLAS threads.  OpenBLAS splits a 1000 x 1000 Cholesky factorisation over
  every core.  On a machine whose cores are busy with other work its threads
  wait for each other, and 15 ms became more than a second.
  :func:`one_blas_thread` runs the budget's positive semi-definiteness check
  on one thread, through threadpoolctl (imported on first use, so a budget
  without correlations never loads it).  That check only passes or fails;
  the products that give recorded numbers keep numpy's own threading, since
  splitting them differently can change their last bit.

Both switches are process-wide.  They are counted under a lock, so nested or
concurrent uses restore the original state only when the last one ends.
Written by hand: a few lines over :mod:`gc` and threadpoolctl, which do the work.
"""

from __future__ import annotations

import gc
import threading
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["collector_paused", "one_blas_thread"]

_lock = threading.Lock()
_gc_depth = 0
_gc_was_enabled = False
_blas_depth = 0
_blas_limiter = None
_controller = None


@contextmanager
def collector_paused() -> Iterator[None]:
    """The cyclic garbage collector off for the ``with`` block (as it was before, after the last one ends)."""
    global _gc_depth, _gc_was_enabled
    with _lock:
        if _gc_depth == 0:
            _gc_was_enabled = gc.isenabled()
            gc.disable()
        _gc_depth += 1
    try:
        yield
    finally:
        with _lock:
            _gc_depth -= 1
            if _gc_depth == 0 and _gc_was_enabled:
                gc.enable()


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """The BLAS libraries loaded at first use limited to one thread for the ``with`` block."""
    global _blas_depth, _blas_limiter, _controller
    with _lock:
        if _blas_depth == 0:
            if _controller is None:  # finding the libraries takes about 1 ms: once per process
                import scipy.linalg.lapack  # noqa: F401 - scipy's own BLAS, loaded so that it is limited too
                from threadpoolctl import ThreadpoolController

                _controller = ThreadpoolController()
            _blas_limiter = _controller.limit(limits=1, user_api="blas")
        _blas_depth += 1
    try:
        yield
    finally:
        with _lock:
            _blas_depth -= 1
            if _blas_depth == 0 and _blas_limiter is not None:
                _blas_limiter.restore_original_limits()
                _blas_limiter = None
