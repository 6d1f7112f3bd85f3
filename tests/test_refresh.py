"""``pourheat refresh``: every active stored pour re-forecast and its status kept, for cron.

The statuses must be those that GET /v1/pours/<id>/status computes for the same readings; an
archived pour is left alone; a limit forecast to be exceeded is exit 3.
"""

import pytest

from service import cli, store
from service.app import create_app
from tests.test_monitoring import _create, _truth_csv

COMPARED = (
    "measured_max_c",
    "measured_differential_c",
    "forecast_peak_c",
    "forecast_peak_time_h",
    "forecast_max_differential_c",
    "limits_met",
)
"""Status fields that depend on the readings only (not on the hour the status is asked)."""


@pytest.fixture
def database(tmp_path):
    return str(tmp_path / "refresh.sqlite3")


def stored_pours(database: str, count: int = 2) -> list[str]:
    """``count`` pours with 24 h of readings and one archived pour; returns the active ids."""
    client = create_app({"TESTING": True, "DATABASE": database}).test_client()
    ids = []
    csv_text, _ = _truth_csv(client, hours=24)
    for _ in range(count):
        pour = _create(client)
        posted = client.post(f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv")
        assert posted.status_code == 200
        ids.append(pour)
    assert client.delete(f"/v1/pours/{_create(client)}").status_code in (200, 204)
    return ids


def statuses_by_http(database: str, ids: list[str]) -> dict[str, dict]:
    client = create_app({"TESTING": True, "DATABASE": database}).test_client()
    return {pour: client.get(f"/v1/pours/{pour}/status").get_json() for pour in ids}


def test_refresh_keeps_the_status_of_every_active_pour(database, capsys, monkeypatch):
    monkeypatch.delenv("POURHEAT_DASK_SCHEDULER", raising=False)
    ids = stored_pours(database)
    code = cli.main(["refresh", "--db", database, "--quiet"])
    out, err = capsys.readouterr()
    db = store.connect(database)
    kept = {pour: store.latest_status(db, pour) for pour in ids}
    archived = [p["id"] for p in store.list_pours(db, include_archived=True) if p["archived"]]
    assert store.latest_status(db, archived[0]) is None
    db.close()
    expected = statuses_by_http(database, ids)
    for pour in ids:
        assert {k: kept[pour][k] for k in COMPARED} == {k: expected[pour][k] for k in COMPARED}
    assert len(out.strip().splitlines()) == len(ids)
    assert "2 pours:" in err
    assert code == (cli.EXIT_OK if all(s["limits_met"] for s in expected.values()) else 3)


def test_refresh_of_an_unopenable_database_is_exit_1(tmp_path, capsys):
    missing = str(tmp_path / "no" / "such" / "folder" / "db.sqlite3")
    assert cli.main(["refresh", "--db", missing, "--quiet"]) == cli.EXIT_OUTPUT_ERROR
    assert "cannot open the database" in capsys.readouterr().err
