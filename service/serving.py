"""gunicorn pieces of the default deployment (deploy/gunicorn.conf.py): a gevent worker that
bounds how long a client may take to send a request, and an access log without query strings.

Slow clients. A sync worker serves one connection at a time, so five clients sending a byte a
second held every worker and ``/healthz`` went unanswered. :class:`BoundedGeventWorker` serves
each connection in its own greenlet: a slow client holds only its greenlet, never a worker. It
bounds the time a client has to send a request, so slow connections are dropped, not kept:

- the request line and headers within gunicorn's ``keepalive`` seconds (gunicorn's gevent
  worker already reads every head, the first included, under ``gevent.Timeout(keepalive)``
  and closes the connection silently past it; the same bound applies to an idle kept-alive
  connection);
- the body within the same number of seconds from the end of the head: a read past that raises
  :class:`TimeoutError`, which service/limits.py answers with 408 before any endpoint runs.

``deploy/gunicorn.conf.py`` sets ``keepalive`` from ``POURHEAT_CLIENT_TIMEOUT_S``. Computation is
still CPU-bound and runs in the worker's process, so the wall-clock cap of service/limits.py
(``POURHEAT_FORECAST_TIMEOUT_S``) and gunicorn's worker ``timeout`` apply as with sync workers.

Access log. :class:`AccessLogger` writes the request line and the referrer without their query
strings (``?`` and a count of parameters instead), so a token or anything else a client puts in
a URL never reaches the log, whatever the parameter's name.
"""

import time
from typing import Any

import gevent
from gunicorn.glogging import Logger
from gunicorn.workers.ggevent import GeventWorker


class DeadlineBody:
    """A request body (gunicorn's ``wsgi.input``) whose reads must all finish by ``deadline``
    (a ``time.monotonic()`` value); a read past it raises :class:`TimeoutError`."""

    def __init__(self, body: Any, deadline: float) -> None:
        self.body = body
        self.deadline = deadline

    def _timed(self, method: Any, *args: Any) -> Any:
        remaining = self.deadline - time.monotonic()
        error = TimeoutError("the client took too long to send the request body")
        if remaining <= 0:
            raise error
        with gevent.Timeout(remaining, error):
            return method(*args)

    def read(self, size: int | None = None) -> bytes:
        return self._timed(self.body.read, size)

    def readline(self, size: int | None = None) -> bytes:
        return self._timed(self.body.readline, size)

    def readlines(self, size: int | None = None) -> list[bytes]:
        return self._timed(self.body.readlines, size)

    def __iter__(self) -> "DeadlineBody":
        return self

    def __next__(self) -> bytes:
        line = self.readline()
        if not line:
            raise StopIteration
        return line


class BoundedGeventWorker(GeventWorker):
    """gunicorn's gevent worker with a deadline on reading each request body (see above)."""

    def handle_request(self, listener_name: Any, req: Any, sock: Any, addr: Any) -> Any:
        if req.body is not None:
            req.body = DeadlineBody(req.body, time.monotonic() + self.cfg.keepalive)
        return super().handle_request(listener_name, req, sock, addr)


def _without_query(url: str) -> str:
    """``url`` with its query string replaced by ``?`` and the number of parameters."""
    path, mark, query = url.partition("?")
    if not mark:
        return url
    count = len([part for part in query.split("&") if part])
    return f"{path}?[{count} parameter(s) not logged]"


SECRET_HEADERS = ("authorization", "proxy-authorization", "cookie")
"""Request headers never logged, whatever the access-log format asks for."""


class AccessLogger(Logger):
    """gunicorn's logger whose access log cannot show a query string or a credential: the
    request line (``%(r)s``), ``%(q)s``, the referrer (``%(f)s``) and every header or environ
    atom an operator's format might name (``%({referer}i)s``, ``%({raw_uri}e)s`` ...) lose
    their query strings, and the ``Authorization`` and ``Cookie`` headers are never logged."""

    def atoms(self, resp: Any, req: Any, environ: dict[str, Any], request_time: Any) -> dict:
        atoms = super().atoms(resp, req, environ, request_time)
        method = environ.get("REQUEST_METHOD", "-")
        protocol = environ.get("SERVER_PROTOCOL", "-")
        uri = environ.get("RAW_URI") or environ.get("PATH_INFO", "-")
        atoms["r"] = f"{method} {_without_query(uri)} {protocol}"
        atoms["q"] = ""
        atoms["f"] = _without_query(str(atoms.get("f", "-")))
        for key, value in atoms.items():
            if not key.startswith("{"):
                continue
            name = key[1:].rsplit("}", 1)[0].replace("_", "-").removeprefix("http-")
            if name in SECRET_HEADERS or "query" in name:
                atoms[key] = "-"
            elif isinstance(value, str) and "?" in value:
                atoms[key] = _without_query(value)
        return atoms
