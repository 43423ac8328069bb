"""Numerical kernels: numba-compiled functions on plain arrays, no objects, no I/O.

* :mod:`.yee1d`, :mod:`.yee_te`, :mod:`.yee_tm` advance one time step;
* :mod:`.energy` computes the stored-energy terms of the ledger;
* :mod:`.reference` holds readable NumPy twins of the steppers, used by the
  tests to check the compiled kernels.
"""
