"""Flask application factory.

Settings come from the environment when the app is created (see README, "Security and
limits"), then from any ``POURHEAT_<KEY>`` variable (Flask's ``from_prefixed_env``, values
parsed as JSON where they can be), then from ``test_config``. The access-control hooks
(service/auth.py) run before the request limits (service/limits.py), so a request refused for
want of a token is refused before its body is read.
"""

import os
from typing import Any

from flask import Flask

from service import auth, errors, job_runner, limits, parallel, store
from service.blueprints import board, forecasts, health, jobs, meta, monitoring, plans, pours
from service.forecasting import DEFAULT_MAX_CELL_STEPS
from service.jobs import (
    DEFAULT_JOB_LEASE_S,
    DEFAULT_JOB_MAX_CELL_STEPS,
    DEFAULT_JOB_RESULT_TTL_S,
    DEFAULT_JOB_TIMEOUT_S,
    DEFAULT_JOB_WORKERS,
)
from service.limits import (
    DEFAULT_FORECAST_TIMEOUT_S,
    DEFAULT_MAX_BODY_BYTES,
    DEFAULT_MAX_JSON_DEPTH,
    DEFAULT_MAX_READINGS_PER_UPLOAD,
)

__all__ = ["DEFAULT_MAX_BODY_BYTES", "create_app"]

_RAW_ENV_KEYS = ("TOKENS", "TOKENS_FILE", "DB", "MAX_BODY_BYTES")
"""Keys ``from_prefixed_env`` copies from variables already mapped to their settings above
(the tokens are kept only as ``AUTH_TOKENS``)."""


def _settings_from_environment() -> dict[str, Any]:
    """The settings whose variable names differ from their config keys, with defaults."""
    env = os.environ
    return {
        "MAX_CONTENT_LENGTH": env.get("POURHEAT_MAX_BODY_BYTES", DEFAULT_MAX_BODY_BYTES),
        "MAX_JSON_DEPTH": DEFAULT_MAX_JSON_DEPTH,
        "MAX_CELL_STEPS": DEFAULT_MAX_CELL_STEPS,
        "FORECAST_TIMEOUT_S": DEFAULT_FORECAST_TIMEOUT_S,
        "DATABASE": env.get("POURHEAT_DB", "pourheat.sqlite3"),
        "MAX_READINGS_PER_UPLOAD": DEFAULT_MAX_READINGS_PER_UPLOAD,
        "AUTH_TOKENS": env.get("POURHEAT_TOKENS"),  # None: unset; "" or " , ": refused
        "AUTH_TOKENS_FILE": env.get("POURHEAT_TOKENS_FILE") or None,
        "AUTH_READS": False,
        "CORS_ORIGINS": env.get("POURHEAT_CORS_ORIGINS", ""),
        "JOB_WORKERS": DEFAULT_JOB_WORKERS,
        "JOB_MAX_CELL_STEPS": DEFAULT_JOB_MAX_CELL_STEPS,
        "JOB_TIMEOUT_S": DEFAULT_JOB_TIMEOUT_S,
        "JOB_RESULT_TTL_S": DEFAULT_JOB_RESULT_TTL_S,
        "JOB_LEASE_S": DEFAULT_JOB_LEASE_S,
    }


def create_app(test_config: dict[str, Any] | None = None) -> Flask:
    """Build the pourheat app; ``test_config`` overrides settings in tests."""
    app = Flask(__name__)
    app.config.from_mapping(_settings_from_environment())
    app.config.from_prefixed_env("POURHEAT")
    for key in _RAW_ENV_KEYS:
        app.config.pop(key, None)
    if test_config:
        app.config.update(test_config)
    app.json.sort_keys = False
    parallel.check_setting()
    errors.init_app(app)
    store.init_app(app)
    auth.init_app(app)
    limits.init_app(app)
    app.register_blueprint(health.bp)
    app.register_blueprint(forecasts.bp)
    app.register_blueprint(meta.bp)
    app.register_blueprint(plans.bp)
    app.register_blueprint(pours.bp)
    app.register_blueprint(monitoring.bp)
    app.register_blueprint(board.bp)
    app.register_blueprint(jobs.bp)
    job_runner.init_app(app)
    return app
