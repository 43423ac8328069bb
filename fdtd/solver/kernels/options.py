"""numba compilation options, kept in one place.

``cache=True`` everywhere: kernels are module-level functions that take all
coefficients as arguments, so they compile once per machine and load from the
on-disk cache afterwards.  ``error_model="numpy"`` removes the Python-style
division checks that block vectorisation.  Thread counts are passed in as
arguments (a kernel that calls ``numba.get_num_threads()`` cannot be cached).
"""

SERIAL = dict(cache=True, nogil=True, error_model="numpy")
PARALLEL = dict(cache=True, nogil=True, error_model="numpy", parallel=True)
