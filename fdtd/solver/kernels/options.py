"""numba compilation options, kept in one place.

``cache=True`` everywhere: kernels are module-level functions that take all
coefficients as arguments, so they compile once per machine and load from the
on-disk cache afterwards.  ``error_model="numpy"`` removes the Python-style
division checks that block vectorisation.  Thread counts are passed in as
arguments (a kernel that calls ``numba.get_num_threads()`` cannot be cached).
"""

SERIAL = dict(cache=True, nogil=True, error_model="numpy")
PARALLEL = dict(cache=True, nogil=True, error_model="numpy", parallel=True)
#: the Doppler accumulations over blocks of steps: sums of complex products of finite
#: numbers, where reassociation only moves round-off and LLVM then vectorizes the complex
#: arithmetic (measured 1.7x on the 1D block accumulation)
SERIAL_FAST = dict(cache=True, nogil=True, error_model="numpy", fastmath=True)
