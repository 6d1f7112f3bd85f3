"""Benchmarks against reference solvers (`python -m bench`).

One BLAS thread: the cases are single-threaded by design and measured one at a time; BLAS
threads only add contention on this 2-core machine (the method-of-lines reference ran up to 6x
slower with OpenBLAS's default threads). Set here, before numpy is imported.
"""

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
