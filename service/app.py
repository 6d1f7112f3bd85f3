"""Flask application factory."""

import os
from typing import Any

from flask import Flask

from service import errors, store
from service.blueprints import forecasts, health, meta, monitoring, plans, pours
from service.forecasting import DEFAULT_MAX_CELL_STEPS

DEFAULT_MAX_BODY_BYTES = 2 * 1024 * 1024
"""Largest accepted request body [bytes]."""


def create_app(test_config: dict[str, Any] | None = None) -> Flask:
    """Build the pourheat app; ``test_config`` overrides settings in tests."""
    app = Flask(__name__)
    app.config.from_mapping(
        MAX_CONTENT_LENGTH=DEFAULT_MAX_BODY_BYTES,
        MAX_CELL_STEPS=DEFAULT_MAX_CELL_STEPS,
        DATABASE=os.environ.get("POURHEAT_DB", "pourheat.sqlite3"),
        MAX_READINGS_PER_UPLOAD=20000,
    )
    app.config.from_prefixed_env("POURHEAT")
    if test_config:
        app.config.update(test_config)
    app.json.sort_keys = False
    errors.init_app(app)
    store.init_app(app)
    app.register_blueprint(health.bp)
    app.register_blueprint(forecasts.bp)
    app.register_blueprint(meta.bp)
    app.register_blueprint(plans.bp)
    app.register_blueprint(pours.bp)
    app.register_blueprint(monitoring.bp)
    return app
