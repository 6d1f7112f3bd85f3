"""Access control: optional bearer tokens and cross-origin (CORS) headers.

Tokens. With no token configured (the default) the service is open, as on a site network.
With tokens configured (``POURHEAT_TOKENS``, comma-separated, and/or ``POURHEAT_TOKENS_FILE``,
one token a line, ``#`` starting a comment; both read once when the app is created) every
request that changes stored data needs ``Authorization: Bearer <token>``:

- ``POST /v1/pours``, ``POST /v1/pours/<id>/readings``, ``DELETE /v1/pours/<id>`` and any other
  POST, PUT, PATCH or DELETE added later (deny by default);
- not the compute-only POSTs (``/v1/forecasts``, ``/v1/plans``, ``/v1/comparisons``), which
  store nothing and count as reads.

With ``POURHEAT_AUTH_READS=true`` reads need a token too.

Settings fail closed: ``POURHEAT_TOKENS`` set but holding no token (``''``, ``' , '``), or
``POURHEAT_AUTH_READS=true`` with no token configured at all, stop the app at start-up with a
message naming the setting, instead of starting an open service. ``/healthz``, ``/`` and
``/openapi.json`` stay open, as do CORS preflights (OPTIONS). A missing token is answered
401 with ``WWW-Authenticate: Bearer realm="pourheat"``, a wrong one 401 with
``error="invalid_token"`` added (RFC 6750). Tokens are compared by their SHA-256 digests with
:func:`hmac.compare_digest`, against every configured token without stopping at a match, so
the time taken says nothing about which token or how much of it matched. Tokens are never
logged, and are kept only in ``AUTH_TOKENS``.

CORS. ``POURHEAT_CORS_ORIGINS`` (comma-separated origins such as ``https://dash.example.com``;
empty: no CORS headers at all) lists the web origins whose pages may call the API from a
browser: a request from a listed ``Origin`` gets ``Access-Control-Allow-Origin`` echoing it,
every response gets ``Vary: Origin``, and a preflight from a listed origin is answered 204 with
the allowed methods and headers (``Authorization``, ``Content-Type``, ``Accept``). No
credentials mode is needed: a bearer token is a header the page sets itself.
"""

import hashlib
import hmac
import os
import re
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from flask import Flask, Response, request

from service.errors import problem

REALM = "pourheat"
OPEN_ENDPOINTS = frozenset({"health.healthz", "meta.index", "meta.openapi", "static"})
"""Never need a token."""
COMPUTE_ENDPOINTS = frozenset(
    {"forecasts.create_forecast", "plans.create_plan", "plans.create_comparison"}
)
"""POSTs that store nothing: reads for access control."""
READ_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
BOARD_PREFIX = "board."
"""Endpoints of the site board (service/blueprints/board.py), which checks a bearer header or
its signed cookie itself when reads need a token."""
_B64TOKEN = re.compile(r"[A-Za-z0-9\-._~+/]+=*")
"""RFC 6750 b64token: the characters a bearer token may have."""
MIN_TOKEN_CHARS = 16
"""Shorter tokens are accepted with a warning at start-up (common practice, no source)."""
CORS_METHODS = "GET, POST, DELETE, OPTIONS"
CORS_HEADERS = "Authorization, Content-Type, Accept"
CORS_EXPOSED = "Location, Pourheat-Caution, WWW-Authenticate"
CORS_MAX_AGE_S = 600
TRUE_WORDS = frozenset({"1", "true", "yes", "on"})
FALSE_WORDS = frozenset({"", "0", "false", "no", "off"})


def _split(value: Any) -> list[str]:
    """A comma-separated string or an iterable of strings, as stripped non-empty items."""
    if value is None:
        return []
    items = value.split(",") if isinstance(value, str) else [str(v) for v in value]
    return [item.strip() for item in items if item.strip()]


def read_tokens_file(path: str | os.PathLike[str]) -> list[str]:
    """The tokens in a file: one a line, blank lines skipped, ``#`` starts a comment. A file
    that is missing or holds no token is an error at start-up: the operator asked for tokens."""
    try:
        text = Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as error:
        raise ValueError(
            f"POURHEAT_TOKENS_FILE {str(path)!r} cannot be read: {type(error).__name__}"
        ) from None
    tokens = [line.split("#", 1)[0].strip() for line in text.splitlines()]
    tokens = [t for t in tokens if t]
    if not tokens:
        raise ValueError(f"POURHEAT_TOKENS_FILE {str(path)!r} holds no token")
    return tokens


def load_tokens(tokens: Any, tokens_file: str | os.PathLike[str] | None) -> frozenset[str]:
    """The configured tokens: those given (comma-separated or a collection; None when not set)
    plus the file's. Tokens given but holding none (``''``, ``' , '``) are an error: the
    operator asked for tokens. A token with characters a bearer token cannot have is an error
    (it would never match); the message says which position, never the token."""
    found = _split(tokens)
    if tokens is not None and not found:
        raise ValueError(
            "POURHEAT_TOKENS (AUTH_TOKENS) is set but holds no token: give comma-separated "
            "tokens, or unset it for an open service"
        )
    if tokens_file:
        found += read_tokens_file(tokens_file)
    for i, token in enumerate(found):
        if not _B64TOKEN.fullmatch(token):
            raise ValueError(
                f"configured token #{i + 1} has characters a bearer token cannot have "
                "(allowed: letters, digits and - . _ ~ + / with trailing =)"
            )
    return frozenset(found)


def parse_bool(value: Any, name: str) -> bool:
    """A boolean setting given as a bool or a word (true/false, yes/no, on/off, 1/0)."""
    if isinstance(value, bool):
        return value
    word = str(value).strip().lower()
    if word in TRUE_WORDS:
        return True
    if word in FALSE_WORDS:
        return False
    raise ValueError(f"{name} must be true or false, got {value!r}")


def _digest(token: str) -> bytes:
    return hashlib.sha256(token.encode("utf-8", "replace")).digest()


def token_matches(given: str, digests: Iterable[bytes]) -> bool:
    """Whether ``given`` is one of the tokens whose SHA-256 digests are ``digests``: equal-length
    digests compared in constant time, every one of them, with no early exit."""
    candidate = _digest(given)
    matched = False
    for digest in digests:
        matched |= hmac.compare_digest(candidate, digest)
    return matched


def is_configured_token(given: str, tokens: Iterable[str]) -> bool:
    """Whether ``given`` is one of ``tokens`` (compared by digest in constant time)."""
    return bool(given) and token_matches(given, [_digest(t) for t in sorted(tokens)])


def _unauthorized(detail: str, error: str | None = None) -> Response:
    challenge = f'Bearer realm="{REALM}"'
    if error:
        challenge += f', error="{error}"'
    response = problem(401, "Unauthorized", detail)
    response.headers["WWW-Authenticate"] = challenge
    return response


def needs_token(method: str, endpoint: str | None, reads_too: bool) -> bool:
    """Whether a request to ``endpoint`` with ``method`` needs a token (tokens configured)."""
    if endpoint is None or endpoint in OPEN_ENDPOINTS or method == "OPTIONS":
        return False
    if endpoint.startswith(BOARD_PREFIX):
        return False  # the board checks a bearer header or its own cookie
    is_write = method not in READ_METHODS and endpoint not in COMPUTE_ENDPOINTS
    return is_write or reads_too


def _check_token(digests: tuple[bytes, ...], reads_too: bool) -> Response | None:
    if not digests or request.routing_exception is not None:
        return None  # open service, or a 404/405 that Flask answers itself
    if not needs_token(request.method, request.endpoint, reads_too):
        return None
    header = request.headers.get("Authorization", "")
    scheme, _, given = header.strip().partition(" ")
    if scheme.lower() != "bearer":
        return _unauthorized("this request needs Authorization: Bearer <token>")
    if not token_matches(given.strip(), digests):
        return _unauthorized("the bearer token is not valid", "invalid_token")
    return None


def _preflight(origins: frozenset[str]) -> Response | None:
    """Answer a CORS preflight from an allowed origin."""
    origin = request.headers.get("Origin")
    if (
        request.method != "OPTIONS"
        or origin not in origins
        or "Access-Control-Request-Method" not in request.headers
    ):
        return None
    response = Response(status=204)
    del response.headers["Content-Type"]
    response.headers["Access-Control-Allow-Methods"] = CORS_METHODS
    response.headers["Access-Control-Allow-Headers"] = CORS_HEADERS
    response.headers["Access-Control-Max-Age"] = str(CORS_MAX_AGE_S)
    return response


def _cors_headers(response: Response, origins: frozenset[str]) -> Response:
    response.vary.add("Origin")
    origin = request.headers.get("Origin")
    if origin in origins:
        response.headers["Access-Control-Allow-Origin"] = origin
        response.headers["Access-Control-Expose-Headers"] = CORS_EXPOSED
    return response


def init_app(app: Flask) -> None:
    """Read the token and CORS settings (``AUTH_TOKENS`` plus ``AUTH_TOKENS_FILE``,
    ``AUTH_READS``, ``CORS_ORIGINS``; ValueError at start-up if malformed) and register the
    hooks: preflight and token check before each request, CORS headers after."""
    config = app.config
    tokens = load_tokens(config.get("AUTH_TOKENS"), config.get("AUTH_TOKENS_FILE"))
    config["AUTH_TOKENS"] = tokens
    config["AUTH_READS"] = parse_bool(
        config.get("AUTH_READS", False), "AUTH_READS (POURHEAT_AUTH_READS)"
    )
    if config["AUTH_READS"] and not tokens:
        raise ValueError(
            "POURHEAT_AUTH_READS=true needs a token: set POURHEAT_TOKENS or POURHEAT_TOKENS_FILE"
        )
    config["CORS_ORIGINS"] = frozenset(o.rstrip("/") for o in _split(config.get("CORS_ORIGINS")))
    short = sum(len(t) < MIN_TOKEN_CHARS for t in tokens)
    if short:
        app.logger.warning(
            "%d configured token(s) shorter than %d characters", short, MIN_TOKEN_CHARS
        )
    digests = tuple(_digest(t) for t in sorted(tokens))

    @app.before_request
    def _access() -> Response | None:
        origins = app.config["CORS_ORIGINS"]
        if origins:
            answer = _preflight(origins)
            if answer is not None:
                return answer
        return _check_token(digests, bool(app.config["AUTH_READS"]))

    @app.after_request
    def _cors(response: Response) -> Response:
        origins = app.config["CORS_ORIGINS"]
        return _cors_headers(response, origins) if origins else response
