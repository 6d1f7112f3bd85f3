"""Refresh every active stored pour: calibrated re-forecast and status of each, many pours at
once on the configured executor (service/parallel.py: local processes or a Dask cluster).

``pourheat refresh`` runs it from cron. The database is read and written only here, in the
calling process; the workers get each pour with its readings and return its status.
"""

from functools import partial
from typing import Any

from model.solver import DeadlineExceededError
from service.errors import InvalidScenarioError
from service.monitoring import pour_forecast, pour_status
from service.parallel import Progress, run_many
from service.store import get_pour, list_pours, readings_for, save_status


def _status_of(
    item: tuple[dict[str, Any], list[dict[str, Any]]],
    max_cell_steps: float,
    deadline: float | None = None,
) -> dict[str, Any]:
    """The status of one pour from its readings, or ``{"id", "name", "error"}`` if it cannot be
    computed (one bad pour does not stop the others)."""
    pour, readings = item
    try:
        return pour_status(
            pour, readings, pour_forecast(pour, readings, max_cell_steps, False, deadline)
        )
    except (InvalidScenarioError, DeadlineExceededError) as error:
        return {"id": pour["id"], "name": pour["name"], "error": str(error)}


def refresh_pours(
    db: Any,
    max_cell_steps: float,
    deadline: float | None = None,
    progress: Progress | None = None,
) -> list[dict[str, Any]]:
    """Re-forecast every active (not archived) pour and keep each status computed; returns the
    statuses (and errors) in the order of :func:`service.store.list_pours`."""
    pours = [get_pour(db, listed["id"]) for listed in list_pours(db)]
    items = [(pour, readings_for(db, pour["id"])) for pour in pours if pour is not None]
    statuses = run_many(
        partial(_status_of, max_cell_steps=max_cell_steps), items, deadline, progress
    )
    for status in statuses:
        if "error" not in status:
            save_status(db, status["id"], status)
    return statuses
