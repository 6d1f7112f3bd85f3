"""Error responses as RFC 9457 problem details (application/problem+json)."""

from typing import Any

from flask import Flask, Response, g, json
from pydantic import ValidationError
from werkzeug.exceptions import HTTPException

PROBLEM_JSON = "application/problem+json"
SHAPE_TAGS = ("slab", "section", "block")
MAX_LISTED_ERRORS = 100
"""Most entries of an error list in one response (problem details ``errors``, an upload's
``rejected`` rows): the first ones are listed and the total is given as a count."""
MAX_ECHO_CHARS = 40
"""Longest piece of the caller's input quoted back in a message [characters]."""


def capped(entries: list[Any]) -> tuple[list[Any], int]:
    """The first MAX_LISTED_ERRORS entries of a list, and how many there were in all."""
    return entries[:MAX_LISTED_ERRORS], len(entries)


def echo(value: Any) -> str:
    """``repr(value)``, cut to MAX_ECHO_CHARS characters, to quote input back in a message."""
    text = repr(value)
    return text if len(text) <= MAX_ECHO_CHARS else text[: MAX_ECHO_CHARS - 3] + "..."


class InvalidScenarioError(ValueError):
    """A scenario whose fields are each valid but which cannot be computed as a whole."""

    def __init__(self, errors: list[dict[str, str]]) -> None:
        super().__init__("; ".join(f"{e['field']}: {e['message']}" for e in errors))
        self.errors = errors

    def __reduce__(self) -> tuple[Any, ...]:
        """Pickled with its error list (it crosses process and cluster boundaries)."""
        return (type(self), (self.errors,))


def problem(
    status: int, title: str, detail: str, errors: list[dict[str, str]] | None = None
) -> Response:
    """A problem-details response; ``errors`` is cut to its first MAX_LISTED_ERRORS entries,
    with ``errors_count`` the number there were in all."""
    body: dict[str, Any] = {
        "type": "about:blank",
        "title": title,
        "status": status,
        "detail": detail,
    }
    if errors is not None:
        body["errors"], body["errors_count"] = capped(errors)
    return Response(json.dumps(body), status=status, mimetype=PROBLEM_JSON)


def _is_union_tag(part: str | int, position: int, loc: tuple) -> bool:
    """Whether a location part names a union member rather than a field the caller wrote."""
    if isinstance(part, int):
        return False
    if position == 1 and loc[0] == "element" and part in SHAPE_TAGS:
        return True
    return any(c in part for c in "-[")


def validation_errors(error: ValidationError) -> list[dict[str, str]]:
    """Pydantic errors as a list of {field, message}, the field a dotted path; the alternatives
    of a union (a number or an hourly list, say) are merged into one entry per field."""
    merged: dict[str, list[str]] = {}
    for e in error.errors(include_url=False):
        loc = e["loc"]
        path = ".".join(str(p) for i, p in enumerate(loc) if not _is_union_tag(p, i, loc))
        message = e["msg"].removeprefix("Value error, ")
        messages = merged.setdefault(path or "(body)", [])
        if message not in messages:
            messages.append(message)
    return [{"field": f, "message": " or ".join(m)} for f, m in merged.items()]


def _in_callers_units(errors: list[dict[str, str]]) -> list[dict[str, str]]:
    """Field paths as the caller wrote them: US names when the request used units=us."""
    if g.get("units") != "us":
        return errors
    from service.units import field_path_to_us

    return [{**e, "field": field_path_to_us(e["field"])} for e in errors]


def init_app(app: Flask) -> None:
    """Register the handlers that turn every error into problem details."""

    @app.errorhandler(ValidationError)
    def _invalid(error: ValidationError) -> Response:
        errors = _in_callers_units(validation_errors(error))
        return problem(
            422, "Invalid scenario", f"{len(errors)} field(s) are invalid: see errors", errors
        )

    @app.errorhandler(InvalidScenarioError)
    def _uncomputable(error: InvalidScenarioError) -> Response:
        errors = _in_callers_units(error.errors)
        return problem(
            422, "Invalid scenario", f"{len(errors)} problem(s) in the scenario: see errors", errors
        )

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException) -> Response:
        response = problem(error.code or 500, error.name, error.description or "")
        for name, value in error.get_headers():  # Allow, Retry-After, WWW-Authenticate ...
            if name.lower() != "content-type":
                response.headers[name] = value
        return response

    @app.errorhandler(Exception)
    def _unexpected(error: Exception) -> Response:  # pragma: no cover - last resort
        app.logger.exception("unhandled error")
        return problem(500, "Internal Server Error", "unexpected error; it has been logged")
