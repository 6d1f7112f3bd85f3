"""gunicorn settings for pourheat: `make serve` and the systemd unit use this file."""

import multiprocessing
import os

bind = f"{os.environ.get('POURHEAT_BIND', '127.0.0.1')}:{os.environ.get('PORT', '8000')}"
workers = int(os.environ.get("POURHEAT_WORKERS", min(4, multiprocessing.cpu_count() * 2)))
timeout = int(os.environ.get("POURHEAT_TIMEOUT_S", "60"))
graceful_timeout = 30
accesslog = "-"
errorlog = "-"

# Workers already use every core; BLAS threads inside a worker only contend with the others
# (measured: the 3D benchmark block ran 1.7x slower with OpenBLAS's default threads).
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
