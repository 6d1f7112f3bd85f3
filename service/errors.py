"""Error responses as RFC 9457 problem details (application/problem+json)."""

from typing import Any

from flask import Flask, Response, json
from pydantic import ValidationError
from werkzeug.exceptions import HTTPException

PROBLEM_JSON = "application/problem+json"
SHAPE_TAGS = ("slab", "section", "block")


class InvalidScenario(ValueError):
    """A scenario that validates field by field but cannot be computed; names the field."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field
        self.message = message


def problem(status: int, title: str, detail: str, errors: list[dict[str, str]] | None = None) -> Response:
    """A problem-details response."""
    body: dict[str, Any] = {"type": "about:blank", "title": title, "status": status, "detail": detail}
    if errors is not None:
        body["errors"] = errors
    return Response(json.dumps(body), status=status, mimetype=PROBLEM_JSON)


def validation_errors(error: ValidationError) -> list[dict[str, str]]:
    """Pydantic errors as a list of {field, message}, the field a dotted path."""
    out = []
    for e in error.errors(include_url=False):
        loc = [str(p) for p in e["loc"]]
        if len(loc) > 1 and loc[0] == "element" and loc[1] in SHAPE_TAGS:
            del loc[1]  # the discriminated union's tag is not a field the caller wrote
        path = ".".join(loc)
        out.append({"field": path or "(body)", "message": e["msg"]})
    return out


def init_app(app: Flask) -> None:
    """Register the handlers that turn every error into problem details."""

    @app.errorhandler(ValidationError)
    def _invalid(error: ValidationError) -> Response:
        errors = validation_errors(error)
        return problem(422, "Invalid scenario",
                       f"{len(errors)} field(s) are invalid: see errors", errors)

    @app.errorhandler(InvalidScenario)
    def _uncomputable(error: InvalidScenario) -> Response:
        return problem(422, "Invalid scenario", error.message,
                       [{"field": error.field, "message": error.message}])

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException) -> Response:
        return problem(error.code or 500, error.name, error.description or "")

    @app.errorhandler(Exception)
    def _unexpected(error: Exception) -> Response:  # pragma: no cover - last resort
        app.logger.exception("unhandled error")
        return problem(500, "Internal Server Error", "unexpected error; it has been logged")
