"""One executor for work that runs many whole forecasts: local processes, or a Dask cluster.

Uncertainty bands of sections and blocks, comparisons, plan searches and the refresh of every
stored pour all go through :func:`run_many`. By default the items run in forked processes on
this machine's cores; when ``POURHEAT_DASK_SCHEDULER=tcp://host:8786`` is set they run as tasks
on that Dask distributed cluster (read at each call, so the service and the command line use
the same setting). Results come back in the order of the items either way.

Wall-clock caps: ``deadline`` is a ``time.monotonic()`` value of the calling process. Monotonic
clocks of other hosts are unrelated, so a task sent to the cluster carries the seconds left
instead and its worker turns them back into a deadline of its own. The caller also waits no
longer than the deadline: a cluster that has lost its workers is answered with a 503, not a hang.
A worker killed mid-way loses nothing: the scheduler runs its tasks again on the other workers.

Progress: ``progress(done, total)`` is called as work advances. Items count one each; a function
may instead count the forecasts it runs by calling :func:`tick` after each (plan searches do,
on this machine; on a cluster they count by items), and then ``total`` is the caller's
estimate of the forecasts to run (``ticks_expected``), raised if it was low.
"""

import multiprocessing
import os
import sys
import threading
import time
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from functools import partial
from typing import Any, TypeVar

from werkzeug.exceptions import ServiceUnavailable

from model.solver import DeadlineExceededError

T = TypeVar("T")
R = TypeVar("R")
Progress = Callable[[int, int], None]

SCHEDULER_VARIABLE = "POURHEAT_DASK_SCHEDULER"
CONNECT_TIMEOUT_S = 10.0
"""How long to wait for the Dask scheduler to answer before giving up with a 503 [s]."""
RETRY_AFTER_S = 30
"""Retry-After sent with a 503 when the cluster cannot be reached [s]."""
POLL_S = 0.2
"""How often a waiting caller collects progress ticks from its worker processes [s]."""

_tick_sink: Callable[[], None] | None = None
"""Where :func:`tick` reports: the parent's counter, or a queue to it from a forked worker."""


class ComputeUnavailableError(ServiceUnavailable):
    """The configured Dask cluster cannot be reached (answered 503 with Retry-After)."""

    def __init__(self, description: str) -> None:
        super().__init__(description, retry_after=RETRY_AFTER_S)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.description,))


def tick() -> None:
    """Report one forecast done to whoever runs this work (no-op when nobody listens)."""
    if _tick_sink is not None:
        _tick_sink()


def scheduler_address() -> str | None:
    """The Dask scheduler named by ``POURHEAT_DASK_SCHEDULER``, or None for local processes."""
    address = os.environ.get(SCHEDULER_VARIABLE, "").strip()
    return address or None


def check_setting() -> None:
    """At start-up: a configured cluster needs the ``dask`` extra; refuse to start without it
    (rather than failing every many-forecast request)."""
    address = scheduler_address()
    if address is None:
        return
    if not address.startswith(("tcp://", "tls://", "inproc://", "ucx://")):
        raise RuntimeError(f"{SCHEDULER_VARIABLE}={address!r}: expected tcp://host:port")
    try:
        import distributed  # noqa: F401
    except ImportError as error:
        raise RuntimeError(
            f"{SCHEDULER_VARIABLE} is set but Dask is not installed: pip install 'pourheat[dask]'"
        ) from error


def executor_name() -> str:
    """``dask tcp://...`` or ``local processes (N cores)``: where :func:`run_many` runs work."""
    address = scheduler_address()
    return f"dask {address}" if address else f"local processes ({os.cpu_count() or 1} cores)"


def run_many(
    function: Callable[..., R],
    items: Sequence[T],
    deadline: float | None = None,
    progress: Progress | None = None,
    ticks_expected: int | None = None,
) -> list[R]:
    """``[function(item, deadline=...) for item in items]`` on the configured executor.

    ``function`` must be picklable (a module-level function or a ``functools.partial`` of one)
    and take the deadline as the keyword ``deadline``.
    """
    address = scheduler_address()
    # Tasks on a cluster cannot tick back to this process: there, items are the unit.
    counter = _Counter(len(items), None if address else ticks_expected, progress)
    workers = min(len(items), os.cpu_count() or 1)
    if address is not None:
        results = _run_on_dask(address, function, items, deadline, counter)
    elif workers <= 1 or _on_a_cluster_worker():
        results = _run_here(function, items, deadline, counter)
    else:
        results = _run_in_processes(function, items, deadline, counter, workers)
    counter.finish()
    return results


def _on_a_cluster_worker() -> bool:
    """Whether this process is a Dask worker (or any daemon process): work nested in a task runs
    here, one item after another: the worker is one core of the cluster, and a daemon process
    may not start processes of its own."""
    if multiprocessing.current_process().daemon:
        return True
    if "distributed" not in sys.modules:
        return False
    from distributed import get_worker

    try:
        get_worker()
    except ValueError:
        return False
    return True


class _Counter:
    """Counts finished items, or the ticks of the forecasts inside them when the caller said
    how many to expect, and forwards the count to a progress callback."""

    def __init__(self, items: int, ticks_expected: int | None, progress: Progress | None) -> None:
        self.by_ticks = ticks_expected is not None
        self.total = max(ticks_expected if ticks_expected is not None else items, 1)
        self.progress, self.done = progress, 0

    def add(self, tick: bool = False) -> None:
        if tick != self.by_ticks:
            return
        self.done += 1
        self.total = max(self.total, self.done)
        if self.progress is not None:
            self.progress(self.done, self.total)

    def finish(self) -> None:
        """All work is done: a search that took fewer forecasts than expected ends at 100 %."""
        if self.progress is not None and self.done < self.total:
            self.done = self.total = max(self.done, 1)
            self.progress(self.done, self.total)


def _run_here(
    function: Callable[..., R], items: Sequence[T], deadline: float | None, counter: _Counter
) -> list[R]:
    global _tick_sink
    previous, _tick_sink = _tick_sink, partial(counter.add, tick=True)
    try:
        results = []
        for item in items:
            results.append(function(item, deadline=deadline))
            counter.add()
        return results
    finally:
        _tick_sink = previous


def _child_start(ticks: Any) -> None:
    """Initializer of forked workers: ticks go back to the parent through ``ticks``."""
    global _tick_sink
    _tick_sink = partial(ticks.put, 1)


def _run_in_processes(
    function: Callable[..., R],
    items: Sequence[T],
    deadline: float | None,
    counter: _Counter,
    workers: int,
) -> list[R]:
    context = multiprocessing.get_context("fork")
    ticks = context.SimpleQueue()
    with ProcessPoolExecutor(
        max_workers=workers, mp_context=context, initializer=_child_start, initargs=(ticks,)
    ) as pool:
        futures = [pool.submit(function, item, deadline=deadline) for item in items]
        pending: set[Future] = set(futures)
        while pending:
            finished, pending = wait(pending, timeout=POLL_S, return_when=FIRST_COMPLETED)
            while not ticks.empty():
                ticks.get()
                counter.add(tick=True)
            for _ in finished:
                counter.add()
        return [future.result() for future in futures]


def _call_with_budget(
    function: Callable[..., R], item: T, seconds_left: float | None, sent_at: float
) -> R:
    """Run one item on a cluster worker, its deadline rebuilt from the seconds left when it
    was sent (``sent_at`` a ``time.time()`` value; clocks of one cluster agree to well under a
    second, against caps of tens of seconds)."""
    deadline = None
    if seconds_left is not None:
        deadline = time.monotonic() + seconds_left - max(0.0, time.time() - sent_at)
    return function(item, deadline=deadline)


_clients: dict[tuple[int, str], Any] = {}
_clients_lock = threading.Lock()


def _client(address: str) -> Any:
    """One Dask client per process and scheduler, made on first use (after gunicorn forks)."""
    from distributed import Client

    key = (os.getpid(), address)
    with _clients_lock:
        client = _clients.get(key)
        if client is None or client.status not in ("running", "connecting"):
            try:
                client = Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
            except (OSError, TimeoutError) as error:
                raise ComputeUnavailableError(
                    f"the Dask scheduler at {address} ({SCHEDULER_VARIABLE}) cannot be reached: "
                    f"{error}"
                ) from error
            _clients[key] = client
        return client


def _run_on_dask(
    address: str,
    function: Callable[..., R],
    items: Sequence[T],
    deadline: float | None,
    counter: _Counter,
) -> list[R]:
    from distributed import as_completed

    client = _client(address)
    seconds_left = None if deadline is None else max(0.0, deadline - time.monotonic())
    futures = client.map(
        partial(_call_with_budget, function),
        list(items),
        seconds_left=seconds_left,
        sent_at=time.time(),
        pure=False,
    )
    timeout = None if deadline is None else max(0.0, deadline - time.monotonic())
    try:
        for _ in as_completed(futures, loop=client.loop, timeout=timeout):
            counter.add()
    except TimeoutError as error:
        client.cancel(futures)
        raise DeadlineExceededError(
            f"the Dask cluster at {address} did not finish {len(items)} forecasts within the "
            "wall-clock cap (are its workers running?)"
        ) from error
    return client.gather(futures)
