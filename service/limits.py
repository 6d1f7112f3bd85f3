"""Request limits: body size, JSON nesting depth, readings per upload and the compute budget.

Each limit is an app setting with a safe default, read from the environment at app creation
(``create_app``) and checked here by :func:`init_app`:

==========================  ===============================  ==================================
setting (app config)        environment                      default, enforced by
==========================  ===============================  ==================================
``MAX_CONTENT_LENGTH``      ``POURHEAT_MAX_BODY_BYTES``      2 MiB; Flask/Werkzeug: 413
``MAX_JSON_DEPTH``          ``POURHEAT_MAX_JSON_DEPTH``      32; :func:`json_depth` here: 422
``MAX_READINGS_PER_UPLOAD`` ``POURHEAT_MAX_READINGS_PER_``   20000 rows; the pours blueprint:
                            ``UPLOAD``                       413
``MAX_CELL_STEPS``          ``POURHEAT_MAX_CELL_STEPS``      4e7 grid cells x time steps;
                                                             service.forecasting: 422
==========================  ===============================  ==================================

The length of an hourly list (``ambient.air_temperature_c``, ``wind_m_s``, ``solar_w_m2``) is
fixed at :data:`MAX_HOURLY_VALUES` by the pydantic schemas (service/schemas.py), which answer a
longer list with a 422 naming the field; it is not a setting.

The hooks registered here read every POST, PUT and PATCH body whole before any endpoint sees it
(:func:`read_whole_body`): a body over ``MAX_CONTENT_LENGTH`` is refused with 413 whatever its
transfer encoding (``Content-Length`` or ``Transfer-Encoding: chunked``), a body that ends early
or is malformed gets 400, one the client takes too long to send 408 (the time bound itself is the
server's: service/serving.py), so an endpoint only ever parses a complete body. They also refuse,
before any endpoint parses it, a JSON body that is not UTF-8 (400) or whose top level is not an
object (400): every JSON endpoint takes an object; and with a 422 naming each one, a JSON object
that repeats a key (at any depth: RFC 8259 leaves the meaning open and parsers keep one of the
values silently) and a query parameter given more than once (``?thickness_m=1&thickness_m=2``).
Every response carries ``X-Content-Type-Options: nosniff``.
"""

import io
import json
import re
import time
from typing import Any

from flask import Flask, Response, current_app, request

from model.solver import DeadlineExceededError
from service.errors import problem

DEFAULT_FORECAST_TIMEOUT_S = 40.0
"""Wall-clock cap of the computation of one request [s] (POURHEAT_FORECAST_TIMEOUT_S); past it
the request gets 503 with Retry-After. Keep it below gunicorn's worker timeout (60 s)."""
RETRY_AFTER_S = 60
"""Retry-After sent with a 503 for a request that hit the wall-clock cap [s]."""

DEFAULT_MAX_BODY_BYTES = 2 * 1024 * 1024
"""Largest accepted request body [bytes] (``POURHEAT_MAX_BODY_BYTES``)."""
DEFAULT_MAX_JSON_DEPTH = 32
"""Deepest accepted nesting of JSON arrays and objects (``POURHEAT_MAX_JSON_DEPTH``). A valid
scenario, plan or comparison nests about 6 deep; Python's JSON parser raises RecursionError
(a 500) at about a thousand."""
DEFAULT_MAX_READINGS_PER_UPLOAD = 20000
"""Most readings (JSON items or CSV rows) in one upload (``POURHEAT_MAX_READINGS_PER_UPLOAD``)."""
MAX_HOURLY_VALUES = 20000
"""Longest hourly list in a scenario; fixed in service/schemas.py, documented here."""

_TOKEN = re.compile(rb'"[^"\\]*(?:\\.[^"\\]*)*"?|[\[\]{}]', re.DOTALL)
"""A JSON string (to skip, escapes included; unterminated runs to the end) or a bracket."""
_OPENERS = frozenset(b"[{")
_QUOTE = ord('"')
BODY_METHODS = frozenset({"POST", "PUT", "PATCH"})
"""Methods whose JSON body an endpoint may parse."""
_JSON_WHITESPACE = b" \t\r\n"
READ_CHUNK_BYTES = 64 * 1024
"""Bytes asked of the server's input stream at a time while reading a body."""


class BodyRefusedError(Exception):
    """A request body refused as a whole before any endpoint saw it; carries the problem."""

    def __init__(self, response: Response) -> None:
        super().__init__(response.status)
        self.response = response


def _too_large(limit: int) -> BodyRefusedError:
    return BodyRefusedError(
        problem(
            413,
            "Content Too Large",
            f"the body is larger than {limit} bytes (POURHEAT_MAX_BODY_BYTES); nothing was "
            "stored: split the upload",
            [{"field": "(body)", "message": f"more than {limit} bytes"}],
        )
    )


def read_whole_body(environ: dict[str, Any], limit: int) -> bytes:
    """The whole body of a request, read from the server's input stream, at most ``limit``
    bytes whatever the transfer encoding; :class:`BodyRefusedError` (413 too large, 408 too
    slow, 400 cut short or malformed) otherwise. Afterwards ``environ`` holds the body as a
    ``Content-Length`` stream of those bytes, so every later reader sees exactly them.

    Werkzeug alone stops reading a chunked body at the limit and hands the truncated prefix
    to the endpoint (a readings upload then stored half its rows, the last one cut
    mid-number); reading one byte past the limit here tells a body over it apart."""
    declared = environ.get("CONTENT_LENGTH") or None
    expected: int | None = None
    if declared is not None:
        try:
            expected = int(declared)
        except ValueError:
            raise BodyRefusedError(problem(400, "Bad Request", "bad Content-Length")) from None
        if expected > limit:
            raise _too_large(limit)
    elif "wsgi.input_terminated" not in environ:
        return b""  # no length and no chunked framing: there is no body (RFC 9112, 6.3)
    stream = environ["wsgi.input"]
    wanted = limit + 1 if expected is None else expected
    chunks: list[bytes] = []
    size = 0
    try:
        while size < wanted:
            chunk = stream.read(min(READ_CHUNK_BYTES, wanted - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except TimeoutError:
        raise BodyRefusedError(
            problem(408, "Request Timeout", "the body took too long to arrive; nothing was stored")
        ) from None
    except Exception:  # the server's reader: a disconnect, or malformed chunked framing
        raise BodyRefusedError(
            problem(400, "Bad Request", "the body was cut short or malformed; nothing was stored")
        ) from None
    if size > limit:
        raise _too_large(limit)
    if expected is not None and size < expected:
        raise BodyRefusedError(
            problem(
                400,
                "Bad Request",
                f"the body ended after {size} of {expected} bytes; nothing was stored",
            )
        )
    data = b"".join(chunks)
    environ["wsgi.input"] = io.BytesIO(data)
    environ["CONTENT_LENGTH"] = str(size)
    environ.pop("HTTP_TRANSFER_ENCODING", None)
    environ.pop("wsgi.input_terminated", None)
    return data


def json_depth(data: bytes, limit: int) -> int:
    """The deepest nesting of arrays and objects in the JSON text ``data``, counting ``[`` and
    ``{`` outside strings; stops at the first bracket deeper than ``limit`` (returning
    ``limit + 1``). Linear in the size of the body and not recursive, so it is safe to run on
    any body before ``json.loads``; malformed JSON is left to the parser."""
    depth = deepest = 0
    for match in _TOKEN.finditer(data):
        first = match.group()[0]
        if first in _OPENERS:
            depth += 1
            if depth > deepest:
                deepest = depth
                if deepest > limit:
                    break
        elif first != _QUOTE:
            depth -= 1
    return deepest


class _Object(dict):
    """A parsed JSON object that remembers the keys it was given more than once."""

    repeated: list[str]


def _object_pairs(pairs: list[tuple[str, Any]]) -> _Object:
    obj = _Object(pairs)
    counts: dict[str, int] = {}
    for key, _ in pairs:
        counts[key] = counts.get(key, 0) + 1
    obj.repeated = [key for key, n in counts.items() if n > 1]
    return obj


def _repeated_paths(value: Any, path: str = "") -> list[str]:
    """Dotted paths of every repeated key in a value parsed with :func:`_object_pairs`."""
    found: list[str] = []
    if isinstance(value, _Object):
        found += [f"{path}{key}" for key in value.repeated]
        for key, item in value.items():
            found += _repeated_paths(item, f"{path}{key}.")
    elif isinstance(value, list):
        for i, item in enumerate(value):
            found += _repeated_paths(item, f"{path}{i}.")
    return found


def repeated_keys(text: str | bytes) -> list[str]:
    """Dotted paths (``faces.top.insulation_r_m2k_w``, list items by index) of the keys that a
    JSON text repeats within one object; empty when none does or the text is not JSON (the
    parser then says why). Call it only on text whose nesting depth has been checked."""
    try:
        parsed = json.loads(text, object_pairs_hook=_object_pairs)
    except ValueError:
        return []
    return _repeated_paths(parsed)


def _repeated_key_problem(paths: list[str]) -> Response:
    return problem(
        422,
        "Repeated JSON key",
        f"{len(paths)} key(s) are given more than once in one object: see errors",
        [{"field": path, "message": "given more than once; give each key once"} for path in paths],
    )


def _check_query() -> Response | None:
    """Refuse a query string that gives a parameter more than once (which one would count?)."""
    repeated = [name for name, values in request.args.lists() if len(values) > 1]
    if not repeated:
        return None
    return problem(
        422,
        "Repeated query parameter",
        f"{len(repeated)} query parameter(s) are given more than once: see errors",
        [{"field": name, "message": "given more than once; give it once"} for name in repeated],
    )


def _positive_int(value: Any, name: str) -> int:
    """A setting as a positive integer; a clear error at start-up otherwise."""
    try:
        number = int(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a positive integer, got {value!r}") from None
    if isinstance(value, float) and value != number or number < 1:
        raise ValueError(f"{name} must be a positive integer, got {value!r}")
    return number


def _positive_number(value: Any, name: str) -> float:
    """A setting as a positive finite number (``4e7`` is accepted)."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a positive number, got {value!r}") from None
    if not 0 < number < float("inf"):
        raise ValueError(f"{name} must be a positive number, got {value!r}")
    return number


def _read_body() -> None:
    """Read a POST, PUT or PATCH body whole (see :func:`read_whole_body`) into the request."""
    if request.method not in BODY_METHODS:
        return
    read_whole_body(request.environ, int(current_app.config["MAX_CONTENT_LENGTH"]))
    for cached in ("stream", "content_length"):  # Werkzeug's, if computed from the old input
        request.__dict__.pop(cached, None)


def _check_json_body(max_depth: int) -> Response | None:
    """Refuse a JSON body that is not UTF-8, not an object, or nested deeper than allowed."""
    if request.method not in BODY_METHODS or not request.is_json:
        return None
    data = request.get_data(cache=True)
    if not data:
        return None  # the endpoint says what it needed
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return problem(400, "Bad Request", "the JSON body must be UTF-8 (RFC 8259)")
    if data.lstrip(_JSON_WHITESPACE).removeprefix(b"\xef\xbb\xbf")[:1] != b"{":
        return problem(400, "Bad Request", "the body must be a JSON object")
    if json_depth(data, max_depth) > max_depth:
        return problem(
            422,
            "JSON Too Deep",
            f"the JSON body nests arrays and objects more than {max_depth} levels deep "
            "(POURHEAT_MAX_JSON_DEPTH)",
            [{"field": "(body)", "message": f"nested more than {max_depth} levels deep"}],
        )
    repeated = repeated_keys(data)
    if repeated:
        return _repeated_key_problem(repeated)
    return None


def init_app(app: Flask) -> None:
    """Check the limit settings (ValueError at start-up if one is malformed) and register the
    JSON body check as a before_request hook."""
    config = app.config
    config["MAX_CONTENT_LENGTH"] = _positive_int(
        config["MAX_CONTENT_LENGTH"], "MAX_CONTENT_LENGTH (POURHEAT_MAX_BODY_BYTES)"
    )
    config["MAX_JSON_DEPTH"] = _positive_int(
        config["MAX_JSON_DEPTH"], "MAX_JSON_DEPTH (POURHEAT_MAX_JSON_DEPTH)"
    )
    config["MAX_READINGS_PER_UPLOAD"] = _positive_int(
        config["MAX_READINGS_PER_UPLOAD"],
        "MAX_READINGS_PER_UPLOAD (POURHEAT_MAX_READINGS_PER_UPLOAD)",
    )
    config["MAX_CELL_STEPS"] = _positive_number(
        config["MAX_CELL_STEPS"], "MAX_CELL_STEPS (POURHEAT_MAX_CELL_STEPS)"
    )
    config["FORECAST_TIMEOUT_S"] = _positive_number(
        config["FORECAST_TIMEOUT_S"], "FORECAST_TIMEOUT_S (POURHEAT_FORECAST_TIMEOUT_S)"
    )

    @app.errorhandler(DeadlineExceededError)
    def _deadline(error: DeadlineExceededError) -> Response:
        response = problem(
            503,
            "Computation took too long",
            f"{error}; coarsen the scenario's resolution or shorten duration_h, or try again later",
        )
        response.headers["Retry-After"] = str(RETRY_AFTER_S)
        return response

    @app.errorhandler(BodyRefusedError)
    def _body_refused(error: BodyRefusedError) -> Response:
        return error.response

    @app.before_request
    def _body_limits() -> Response | None:
        _read_body()
        return _check_query() or _check_json_body(int(app.config["MAX_JSON_DEPTH"]))

    @app.after_request
    def _no_sniffing(response: Response) -> Response:
        response.headers["X-Content-Type-Options"] = "nosniff"
        return response


def request_deadline() -> float:
    """The ``time.monotonic()`` value by which this request's computation must finish."""
    return time.monotonic() + float(current_app.config["FORECAST_TIMEOUT_S"])
