"""pourheat HTTP service: Flask app factory, blueprints, pydantic schemas and converters.

Importing this package pins BLAS to one thread (unless the environment already says otherwise),
before anything imports numpy, so that the solver runs with the same numerical settings
wherever it runs: gunicorn workers (deploy/gunicorn.conf.py sets the same), the ``pourheat``
command line, forked process pools (service/parallel.py; children inherit the environment),
the tests (tests/conftest.py) and the benchmarks (bench/__init__.py). The solver's vector
operations are small: BLAS threads only contend with each other and with other workers (the
3D benchmark block ran 1.7x slower with OpenBLAS's default threads on a 2-core machine).
"""

import os

BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
"""Environment variables that set the BLAS thread count (OpenBLAS, OpenMP builds, MKL)."""

for _name in BLAS_THREAD_VARIABLES:
    os.environ.setdefault(_name, "1")
