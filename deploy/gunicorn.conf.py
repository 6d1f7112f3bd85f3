"""gunicorn settings for pourheat: `make serve` and the systemd unit use this file."""

import multiprocessing
import os

bind = f"{os.environ.get('POURHEAT_BIND', '127.0.0.1')}:{os.environ.get('PORT', '8000')}"
workers = int(os.environ.get("POURHEAT_WORKERS", min(4, multiprocessing.cpu_count() * 2)))
timeout = int(os.environ.get("POURHEAT_TIMEOUT_S", "60"))
graceful_timeout = 30
accesslog = "-"
errorlog = "-"

# Slow clients (README, "Security and limits"): each connection is a greenlet of a gevent
# worker, so a client trickling its request holds no worker; it has POURHEAT_CLIENT_TIMEOUT_S
# to send the request line and headers, and as long again for the body (408 past it), and an
# idle kept-alive connection is closed after as long (service/serving.py).
#
# With a Dask cluster (POURHEAT_DASK_SCHEDULER) the workers are plain sync workers instead: the
# Dask client's own threads and event loop do not run under gevent's monkey-patching (measured:
# every many-forecast request timed out). That deployment runs behind a load balancer
# (deploy/compose.yaml: nginx, which buffers each request whole before passing it on), and the
# balancer is what keeps slow clients away from the workers there.
worker_class = (
    "sync"
    if os.environ.get("POURHEAT_DASK_SCHEDULER", "").strip()
    else "service.serving.BoundedGeventWorker"
)
_client_timeout = os.environ.get("POURHEAT_CLIENT_TIMEOUT_S", "30")
if not _client_timeout.isdigit() or not 1 <= int(_client_timeout) <= 600:
    raise ValueError(
        f"POURHEAT_CLIENT_TIMEOUT_S must be whole seconds from 1 to 600, got {_client_timeout!r}"
    )
keepalive = int(_client_timeout)
# Query strings (where a careless client may put a token) never reach the access log.
logger_class = "service.serving.AccessLogger"

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
