"""Stored pours and their readings (/v1/pours): storage, validation row by row, idempotent
uploads, concurrency, and durability of acknowledged uploads when the server is killed."""

import copy
import os
import signal
import socket
import sqlite3
import subprocess
import sys
import threading
import time
from contextlib import closing
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import gunicorn.config
import pytest
import requests

from service import store
from service.app import create_app
from tests.conftest import CONTRACT_SCENARIO
from tests.servers import wait_until_healthy

REPO = Path(__file__).resolve().parents[1]
SENSORS = [{"id": "S1", "depth_m": 0.05}, {"id": "S2", "depth_m": 1.0}]
PLACED_AT = (datetime.now(UTC) - timedelta(days=3)).replace(minute=0, second=0, microsecond=0)
"""Placement three days ago, so that a few thousand minutely readings are all in the past."""


def _scenario() -> dict:
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["sensors"] = copy.deepcopy(SENSORS)
    return scenario


def _z(moment: datetime) -> str:
    return moment.astimezone(UTC).replace(tzinfo=None).isoformat(timespec="seconds") + "Z"


def _reading(minutes: float, sensor: str = "S1", temp: float = 25.0) -> dict:
    return {"time": _z(PLACED_AT + timedelta(minutes=minutes)), "sensor": sensor,
            "temperature_c": temp}  # fmt: skip


@pytest.fixture
def app(database_url):
    """The app with a fresh database, once per store backend (SQLite, PostgreSQL)."""
    return create_app({"TESTING": True, "DATABASE": database_url})


@pytest.fixture
def client(app):
    return app.test_client()


@pytest.fixture
def pour_id(client):
    """A stored pour with sensors S1 and S2, placed three days ago (given in +10:00)."""
    local = PLACED_AT.astimezone(timezone(timedelta(hours=10))).isoformat()
    response = client.post(
        "/v1/pours", json={"name": "Mat A", "placed_at": local, "scenario": _scenario()}
    )
    assert response.status_code == 201, response.get_json()
    return response.get_json()["id"]


# --- pours -----------------------------------------------------------------------------------


def test_create_show_list_archive(client):
    placed = "2025-06-01T08:00:00+10:00"
    response = client.post(
        "/v1/pours", json={"name": " Mat A ", "placed_at": placed, "scenario": _scenario()}
    )
    assert response.status_code == 201
    body = response.get_json()
    assert body == {"id": body["id"], "name": "Mat A", "placed_at": "2025-05-31T22:00:00Z"}
    assert response.headers["Location"].endswith(f"/v1/pours/{body['id']}")

    shown = client.get(f"/v1/pours/{body['id']}").get_json()
    assert shown["placed_at"] == "2025-05-31T22:00:00Z"
    assert shown["placed_at_local"] == "2025-06-01T08:00:00+10:00"
    assert shown["sensors"] == ["S1", "S2"]
    assert shown["scenario"] == _scenario()
    assert shown["archived"] is False
    assert shown["readings_count"] == 0 and shown["last_reading_time"] is None

    listed = client.get("/v1/pours").get_json()["pours"]
    assert [p["id"] for p in listed] == [body["id"]]

    assert client.delete(f"/v1/pours/{body['id']}").status_code == 204
    assert client.get("/v1/pours").get_json()["pours"] == []
    archived = client.get("/v1/pours?archived=true").get_json()["pours"]
    assert [(p["id"], p["archived"]) for p in archived] == [(body["id"], True)]
    assert client.get(f"/v1/pours/{body['id']}").get_json()["archived"] is True
    assert client.delete(f"/v1/pours/{body['id']}").status_code == 204  # idempotent


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"placed_at": "2025-06-01T08:00:00"}, "placed_at"),
        ({"placed_at": "yesterday"}, "placed_at"),
        ({"name": ""}, "name"),
        ({"name": "x" * 121}, "name"),
        ({"colour": "grey"}, "colour"),
        ({"scenario": "a slab"}, "scenario"),
        ({"scenario": {**_scenario(), "duration_h": -1}}, "scenario.duration_h"),
        ({"scenario": {**_scenario(), "sensors": [{"id": "S1", "depth_m": 5}]}},
         "scenario.sensors.0.depth_m"),
    ],
)  # fmt: skip
def test_invalid_pour_is_422_naming_the_field(client, change, field):
    payload = {"name": "Mat A", "placed_at": "2025-06-01T08:00:00Z", "scenario": _scenario()}
    response = client.post("/v1/pours", json={**payload, **change})
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert field in [e["field"] for e in response.get_json()["errors"]]
    assert client.get("/v1/pours?archived=true").get_json()["pours"] == []


def test_unknown_pour_is_404(client):
    for response in (
        client.get("/v1/pours/nope"),
        client.delete("/v1/pours/nope"),
        client.get("/v1/pours/nope/readings"),
        client.post("/v1/pours/nope/readings", json={"readings": [_reading(0)]}),
    ):
        assert response.status_code == 404
        assert response.mimetype == "application/problem+json"


# --- readings --------------------------------------------------------------------------------


def test_json_readings_stored_and_returned_in_order(client, pour_id):
    readings = [_reading(60, "S2", 30.0), _reading(60, "S1", 31.5), _reading(0, "air", 18.0)]
    response = client.post(f"/v1/pours/{pour_id}/readings", json={"readings": readings})
    assert response.status_code == 200
    assert response.get_json() == {
        "accepted": 3, "duplicates": 0, "conflicts": 0, "conflict_rows": [], "replaced": 0,
        "rejected": [], "rejected_count": 0,
    }  # fmt: skip

    got = client.get(f"/v1/pours/{pour_id}/readings").get_json()["readings"]
    assert [(r["sensor"], r["temperature_c"], r["hours"]) for r in got] == [
        ("air", 18.0, 0.0),
        ("S1", 31.5, 1.0),
        ("S2", 30.0, 1.0),
    ]
    assert got[1]["time"] == _z(PLACED_AT + timedelta(hours=1))
    shown = client.get(f"/v1/pours/{pour_id}").get_json()
    assert shown["readings_count"] == 3
    assert shown["last_reading_time"] == _z(PLACED_AT + timedelta(hours=1))


def test_repost_is_idempotent_whatever_the_offset(client, pour_id):
    readings = [_reading(m, "S1", 20 + m / 10) for m in range(0, 100, 10)]
    url = f"/v1/pours/{pour_id}/readings"
    assert client.post(url, json={"readings": readings}).get_json()["accepted"] == 10
    again = client.post(url, json={"readings": readings}).get_json()
    assert again == {
        "accepted": 0, "duplicates": 10, "conflicts": 0, "conflict_rows": [], "replaced": 0,
        "rejected": [], "rejected_count": 0,
    }  # fmt: skip
    # the same instant written in another offset is the same reading
    shifted = (PLACED_AT + timedelta(minutes=10)).astimezone(timezone(timedelta(hours=-5)))
    same = {"time": shifted.isoformat(), "sensor": "S1", "temperature_c": 21.0}
    assert client.post(url, json={"readings": [same]}).get_json()["duplicates"] == 1
    got = client.get(url).get_json()["readings"]
    assert len(got) == 10


def test_conflicting_repost_is_reported_and_replace_corrects_it(client, pour_id):
    """A reading re-posted with another value is a conflict, not a duplicate: counted and
    listed with the stored value, left as stored; ``?replace=true`` overwrites it."""
    url = f"/v1/pours/{pour_id}/readings"
    assert client.post(url, json={"readings": [_reading(0, "S1", 2.0)]}).status_code == 200
    upload = [_reading(0, "S1", 25.75), _reading(0, "S1", 2.0), _reading(5, "S1", 26.0)]
    answer = client.post(url, json={"readings": upload}).get_json()
    assert answer["accepted"] == 1
    assert answer["duplicates"] == 1
    assert answer["conflicts"] == 1
    assert answer["replaced"] == 0
    assert answer["conflict_rows"] == [
        {"row": 0, "time": _z(PLACED_AT), "sensor": "S1", "temperature_c": 25.75,
         "stored_temperature_c": 2.0},
    ]  # fmt: skip
    assert client.get(url).get_json()["readings"][0]["temperature_c"] == 2.0
    # a conflict inside one CSV upload is found too (the second row contradicts the first)
    csv_body = f"time,sensor,temperature_c\n{_z(PLACED_AT + timedelta(minutes=9))},S2,30\n"
    csv_body += f"{_z(PLACED_AT + timedelta(minutes=9))},S2,31\n"
    inside = client.post(url, data=csv_body, content_type="text/csv").get_json()
    assert (inside["accepted"], inside["conflicts"], inside["conflict_rows"][0]["row"]) == (1, 1, 1)

    corrected = client.post(
        f"{url}?replace=true", json={"readings": [_reading(0, "S1", 25.75)]}
    ).get_json()
    assert (corrected["conflicts"], corrected["replaced"]) == (1, 1)
    assert corrected["conflict_rows"][0]["stored_temperature_c"] == 2.0  # the value replaced
    stored = client.get(f"{url}?sensor=S1").get_json()["readings"]
    assert [r["temperature_c"] for r in stored] == [25.75, 26.0]
    bad = client.post(f"{url}?replace=yes", json={"readings": [_reading(0, "S1", 1.0)]})
    assert bad.status_code == 422
    assert bad.get_json()["errors"][0]["field"] == "replace"


def test_bad_rows_rejected_good_rows_stored(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    body = (
        '{"readings": ['
        f'{{"time": "{_z(PLACED_AT)}", "sensor": "S1", "temperature_c": 21.0}},'
        '{"time": "2025-06-01T08:00:00", "sensor": "S1", "temperature_c": 21.0},'
        f'{{"time": "{_z(PLACED_AT)}", "sensor": "S9", "temperature_c": 21.0}},'
        f'{{"time": "{_z(PLACED_AT)}", "sensor": "S2", "temperature_c": 140}},'
        f'{{"time": "{_z(PLACED_AT)}", "sensor": "S2", "temperature_c": NaN}},'
        f'{{"time": "{_z(PLACED_AT - timedelta(hours=2))}", "sensor": "S2", "temperature_c": 20}},'
        f'{{"time": "{_z(datetime.now(UTC) + timedelta(days=2))}", "sensor": "S2",'
        ' "temperature_c": 20},'
        f'{{"time": "{_z(PLACED_AT + timedelta(hours=1))}", "sensor": "S2", "temperature_c": 35}}'
        "]}"
    )
    response = client.post(url, data=body, content_type="application/json")
    assert response.status_code == 200
    report = response.get_json()
    assert report["accepted"] == 2 and report["duplicates"] == 0
    assert [(r["row"], r["field"]) for r in report["rejected"]] == [
        (1, "time"),
        (2, "sensor"),
        (3, "temperature_c"),
        (4, "temperature_c"),
        (5, "time"),
        (6, "time"),
    ]
    assert "offset" in report["rejected"][0]["message"]
    assert "S9" in report["rejected"][1]["message"]
    assert "finite" in report["rejected"][3]["message"]
    got = client.get(url).get_json()["readings"]
    assert [(r["sensor"], r["temperature_c"]) for r in got] == [("S1", 21.0), ("S2", 35.0)]


def test_all_rows_rejected_is_422(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    readings = [_reading(0, "S1", 20), _reading(0, "S7", 20)]
    readings[0]["time"] = "2025-06-01T08:00:00"
    response = client.post(url, json={"readings": readings})
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert [e["field"] for e in response.get_json()["errors"]] == [
        "readings.0.time",
        "readings.1.sensor",
    ]
    assert client.get(url).get_json()["readings"] == []


def test_malformed_uploads(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    assert client.post(url, json={"readings": [], "extra": 1}).status_code == 422
    assert client.post(url, json={"rows": []}).status_code == 422
    assert client.post(url, json=[_reading(0)]).status_code == 400
    assert client.post(url, json={"readings": []}).status_code == 422
    assert client.post(url, data="x", content_type="text/plain").status_code == 415


def test_csv_upload_and_download(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    lines = ["time,sensor,temperature_c"]
    lines += [f"{_z(PLACED_AT + timedelta(hours=h))},S1,{20 + h}" for h in range(5)]
    lines += [f"{_z(PLACED_AT + timedelta(hours=2))},S2,nan", ""]
    response = client.post(url, data="\r\n".join(lines), content_type="text/csv")
    assert response.status_code == 200
    report = response.get_json()
    assert report["accepted"] == 5
    assert [(r["row"], r["field"]) for r in report["rejected"]] == [(5, "temperature_c")]

    window = {"from": _z(PLACED_AT + timedelta(hours=1)), "to": _z(PLACED_AT + timedelta(hours=3))}
    got = client.get(url, query_string={**window, "sensor": "S1"}).get_json()["readings"]
    assert [r["hours"] for r in got] == [1.0, 2.0, 3.0]

    csv_text = client.get(url, query_string={**window, "format": "csv"})
    assert csv_text.mimetype == "text/csv"
    assert csv_text.get_data(as_text=True).splitlines() == [
        "time,sensor,temperature_c,hours",
        *(f"{_z(PLACED_AT + timedelta(hours=h))},S1,{20.0 + h},{float(h)}" for h in (1, 2, 3)),
    ]
    by_accept = client.get(url, headers={"Accept": "text/csv"})
    assert by_accept.mimetype == "text/csv"
    assert len(by_accept.get_data(as_text=True).splitlines()) == 6


def test_csv_header_must_be_exact(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    row = f"{_z(PLACED_AT)},S1,20,extra"
    response = client.post(
        url, data=f"time,sensor,temperature_c,note\n{row}\n", content_type="text/csv"
    )
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["field"] == "header"
    assert "note" in response.get_json()["errors"][0]["message"]


def test_window_bounds_need_an_offset(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    response = client.get(url, query_string={"from": "2025-06-01T08:00:00"})
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["field"] == "from"


def test_too_many_rows_is_413(database_url):
    app = create_app({"TESTING": True, "DATABASE": database_url, "MAX_READINGS_PER_UPLOAD": 3})
    client = app.test_client()
    payload = {"name": "Mat", "placed_at": _z(PLACED_AT), "scenario": _scenario()}
    pid = client.post("/v1/pours", json=payload).get_json()["id"]
    url = f"/v1/pours/{pid}/readings"
    response = client.post(url, json={"readings": [_reading(m) for m in range(4)]})
    assert response.status_code == 413
    assert response.mimetype == "application/problem+json"
    csv_body = "time,sensor,temperature_c\n" + "".join(
        f"{_z(PLACED_AT + timedelta(minutes=m))},S1,20\n" for m in range(4)
    )
    assert client.post(url, data=csv_body, content_type="text/csv").status_code == 413
    assert client.get(url).get_json()["readings"] == []


def test_archived_pour_takes_no_readings_but_stays_readable(client, pour_id):
    url = f"/v1/pours/{pour_id}/readings"
    assert client.post(url, json={"readings": [_reading(0)]}).status_code == 200
    assert client.delete(f"/v1/pours/{pour_id}").status_code == 204
    response = client.post(url, json={"readings": [_reading(1)]})
    assert response.status_code == 409
    assert len(client.get(url).get_json()["readings"]) == 1


# --- concurrency and durability --------------------------------------------------------------


def test_concurrent_uploads_lose_nothing(app, pour_id):
    threads, rows_each, batch = 8, 250, 25
    failures: list[str] = []

    def upload(t: int) -> None:
        client = app.test_client()
        rows = [_reading(t * rows_each + i, "S1" if i % 2 else "S2") for i in range(rows_each)]
        for start in range(0, rows_each, batch):
            response = client.post(
                f"/v1/pours/{pour_id}/readings", json={"readings": rows[start : start + batch]}
            )
            if response.status_code != 200 or response.get_json()["accepted"] != batch:
                failures.append(f"thread {t}: {response.status_code} {response.get_data()!r}")

    workers = [threading.Thread(target=upload, args=(t,)) for t in range(threads)]
    for w in workers:
        w.start()
    for w in workers:
        w.join(timeout=60)
    assert not any(w.is_alive() for w in workers)
    assert failures == []
    shown = app.test_client().get(f"/v1/pours/{pour_id}").get_json()
    assert shown["readings_count"] == threads * rows_each


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_acknowledged_readings_survive_sigkill(tmp_path, database_url):
    """Kill gunicorn (master and workers) with SIGKILL mid-upload: every reading acknowledged
    with a 200 is in the database afterwards (each backend), and a SQLite file passes its
    integrity check."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    log = (tmp_path / "gunicorn.log").open("w")
    # gunicorn >= 25 opens a control socket under ~/.gunicorn by default: not in a test
    settings = gunicorn.config.Config().settings
    quiet = ["--no-control-socket"] if "control_socket_disable" in settings else []
    server = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "-w", "2", "-b", f"127.0.0.1:{port}", *quiet,
         "service.app:create_app()"],
        cwd=REPO, env={**os.environ, "POURHEAT_DB": database_url}, stdout=log, stderr=log,
        start_new_session=True,
    )  # fmt: skip
    acknowledged: list[tuple[str, str]] = []
    stop = threading.Event()
    try:
        wait_until_healthy(server, base, tmp_path / "gunicorn.log", timeout_s=20)
        payload = {"name": "Kill test", "placed_at": _z(PLACED_AT), "scenario": _scenario()}
        created = requests.post(f"{base}/v1/pours", json=payload, timeout=10)
        assert created.status_code == 201, created.text
        pid = created.json()["id"]

        def post_batches(sensor: str) -> None:
            with requests.Session() as session:
                for b in range(200):  # at most 200 batches of 50, and at most 30 s
                    if stop.is_set():
                        return
                    rows = [_reading(b * 50 + i, sensor, 20.0) for i in range(50)]
                    try:
                        r = session.post(
                            f"{base}/v1/pours/{pid}/readings", json={"readings": rows}, timeout=5
                        )
                    except requests.RequestException:
                        return
                    if r.status_code == 200:
                        acknowledged.extend((row["time"], sensor) for row in rows)

        posters = [threading.Thread(target=post_batches, args=(s,)) for s in ("S1", "S2")]
        for p in posters:
            p.start()
        deadline = time.monotonic() + 30
        while len(acknowledged) < 20 * 50 and time.monotonic() < deadline:
            time.sleep(0.01)
        assert any(p.is_alive() for p in posters), "uploads finished before the kill"
        os.killpg(server.pid, signal.SIGKILL)
        server.wait(timeout=10)
        for p in posters:
            p.join(timeout=10)
    finally:
        stop.set()
        if server.poll() is None:
            os.killpg(server.pid, signal.SIGKILL)
            server.wait(timeout=10)
        log.close()

    assert len(acknowledged) >= 20 * 50
    print(f"{len(acknowledged)} readings acknowledged before the kill")
    if not store.is_postgres(database_url):
        with closing(sqlite3.connect(database_url)) as check:
            assert check.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db = store.connect(database_url)
    try:
        stored = {
            (datetime.fromisoformat(r["time"]).replace(microsecond=0), r["sensor"])
            for r in db.all("SELECT time, sensor FROM readings WHERE pour_id = ?", (pid,))
        }
    finally:
        db.close()
    missing = [(t, s) for t, s in acknowledged if (datetime.fromisoformat(t), s) not in stored]
    assert missing == []
