"""Shared fixtures: the Flask app, its test client and the DESIGN.md contract scenario."""

import os

# One BLAS thread, as in the gunicorn workers (deploy/gunicorn.conf.py): the solver's vector
# operations are small, and BLAS threads only contend on a 2-core machine. Set before numpy.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import copy  # noqa: E402
import shutil  # noqa: E402
import uuid  # noqa: E402
from collections.abc import Iterator  # noqa: E402
from typing import NoReturn  # noqa: E402

import pytest  # noqa: E402

from service.app import create_app  # noqa: E402
from tests.servers import PostgresServer, postgres_bin_dir  # noqa: E402

CONTRACT_SCENARIO = {
    "element": {"shape": "slab", "thickness_m": 2.0},
    "mix": {
        "cement_kg_m3": 380,
        "fly_ash_kg_m3": 0,
        "slag_kg_m3": 0,
        "water_kg_m3": 160,
        "hydration": {
            "total_heat_j_kg": 460000,
            "tau_h": 13.0,
            "beta": 0.9,
            "alpha_u": 0.75,
            "activation_energy_j_mol": 41000,
        },
        "density_kg_m3": 2400,
        "specific_heat_j_kgk": 1000,
        "conductivity_w_mk": 2.5,
    },
    "placement": {"temperature_c": 20.0},
    "ambient": {"air_temperature_c": 20.0, "wind_m_s": 2.0},
    "faces": {
        "top": {"insulation_r_m2k_w": 0.5},
        "bottom": {"adiabatic": True},
    },
    "duration_h": 168,
}
"""The example request of DESIGN.md, "The part of the HTTP contract that external checks use":
a 2.0 m slab, top insulated (R 0.5 m2K/W), bottom adiabatic, forecast for 168 h."""


@pytest.fixture
def app():
    """A fresh app in testing mode."""
    return create_app({"TESTING": True})


@pytest.fixture
def client(app):
    """A test client of ``app``."""
    return app.test_client()


@pytest.fixture
def contract_scenario():
    """A fresh copy of the contract example request; tests may modify it freely."""
    return copy.deepcopy(CONTRACT_SCENARIO)


def require_program(name: str, why: str) -> str:
    """The path of a system program a test drives for real (LibreOffice, Chromium, initdb ...).

    Locally a missing program skips the test with a printed reason; in CI (``.ci/run`` sets
    ``POURHEAT_REQUIRE_SYSTEM=true`` and installs the programs) it fails instead, so CI never
    skips a test of a real program.
    """
    path = shutil.which(name)
    if path is None:
        _missing(f"{name} not found ({why}); .ci/run installs it")
    return path


def keep_artefact(path, name: str | None = None, width_px: int = 800) -> None:
    """Copy a test's screenshot to ``POURHEAT_SCREENSHOTS_DIR`` when that is set (the README's
    images: ``POURHEAT_SCREENSHOTS_DIR=docs/screenshots make test``), scaled to at most
    ``width_px`` and reduced to 128 colours so that the committed PNG stays small."""
    folder = os.environ.get("POURHEAT_SCREENSHOTS_DIR")
    if not folder:
        return
    from pathlib import Path

    from PIL import Image  # Pillow comes with matplotlib

    target = Path(folder) / (name or Path(path).name)
    target.parent.mkdir(parents=True, exist_ok=True)
    with Image.open(path) as image:
        image = image.convert("RGB")
        if image.width > width_px:
            image = image.resize((width_px, round(image.height * width_px / image.width)))
        image.quantize(colors=128).save(target, optimize=True)


def _missing(message: str) -> NoReturn:
    """Skip locally, fail in CI (see :func:`require_program`)."""
    if os.environ.get("POURHEAT_REQUIRE_SYSTEM", "").lower() == "true":
        pytest.fail(message)
    pytest.skip(message)


@pytest.fixture(scope="session")
def postgres_server() -> Iterator[PostgresServer]:
    """A real PostgreSQL server for the session (initdb + pg_ctl in a temporary folder, on a
    free loopback port), stopped at the end. Skipped locally without the binaries (Debian
    package postgresql), failed in CI."""
    bin_dir = postgres_bin_dir()
    if bin_dir is None:
        _missing("initdb/pg_ctl not found (PostgreSQL store tests); .ci/run installs postgresql")
    server = PostgresServer(bin_dir)
    try:
        server.start()
        yield server
    finally:
        server.stop()


@pytest.fixture(params=["sqlite", "postgresql"])
def database_url(request, tmp_path) -> Iterator[str]:
    """The store's ``DATABASE`` setting for one test, for each backend: a fresh SQLite file,
    or a fresh schema (through ``search_path``) in the session's PostgreSQL server."""
    if request.param == "sqlite":
        yield str(tmp_path / "store.sqlite3")
        return
    import psycopg

    from service.store_postgres import close_pools

    server = request.getfixturevalue("postgres_server")
    schema = f"t_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(server.url, autocommit=True) as admin:
        admin.execute(f"CREATE SCHEMA {schema}")
    try:
        yield f"{server.url}?options=-csearch_path%3D{schema}"
    finally:
        close_pools()
        with psycopg.connect(server.url, autocommit=True) as admin:
            admin.execute(f"DROP SCHEMA {schema} CASCADE")
