"""gunicorn settings for pourheat: `make serve` and the systemd unit use this file."""

import multiprocessing
import os

bind = f"{os.environ.get('POURHEAT_BIND', '127.0.0.1')}:{os.environ.get('PORT', '8000')}"
workers = int(os.environ.get("POURHEAT_WORKERS", min(4, multiprocessing.cpu_count() * 2)))
timeout = int(os.environ.get("POURHEAT_TIMEOUT_S", "60"))
graceful_timeout = 30
accesslog = "-"
errorlog = "-"

# Recycle each worker after a number of requests (plus a random jitter, so that workers do not
# all restart at once): a heavy request can leave a worker's heap large (about 1 GB was seen
# before responses were bounded), and a fresh worker returns that memory to the system.
max_requests = int(os.environ.get("POURHEAT_MAX_REQUESTS", "500"))
max_requests_jitter = int(
    os.environ.get("POURHEAT_MAX_REQUESTS_JITTER", str(max(1, max_requests // 10)))
)

# Workers already use every core; BLAS threads inside a worker only contend with the others
# (measured: the 3D benchmark block ran 1.7x slower with OpenBLAS's default threads).
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
