"""Liveness endpoint."""

from flask import Blueprint, jsonify

bp = Blueprint("health", __name__)


@bp.get("/healthz")
def healthz():
    """200 while the process serves requests."""
    return jsonify(status="ok")
