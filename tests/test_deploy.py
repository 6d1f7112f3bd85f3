"""The scaled-out deployment files (deploy/compose.yaml, deploy/nginx-balancer.conf) agree
with the settings the code reads. No Docker engine runs on the test machines, so the compose
file is checked as data here; the same setup runs for real in tests/test_dask.py (scheduler and
workers) and in the PostgreSQL tests."""

import re
from pathlib import Path

import yaml

from service.parallel import SCHEDULER_VARIABLE

DEPLOY = Path(__file__).resolve().parents[1] / "deploy"


def test_compose_has_two_web_instances_a_database_and_a_dask_cluster():
    compose = yaml.safe_load((DEPLOY / "compose.yaml").read_text())
    services = compose["services"]
    assert {"db", "scheduler", "worker", "web1", "web2", "balancer"} <= set(services)
    for web in ("web1", "web2"):
        env = services[web]["environment"]
        assert env["POURHEAT_DB"].startswith("postgresql://")
        assert env[SCHEDULER_VARIABLE] == "tcp://scheduler:8786"
    assert services["scheduler"]["command"][:2] == ["dask", "scheduler"]
    worker = services["worker"]
    assert worker["command"][:3] == ["dask", "worker", "tcp://scheduler:8786"]
    assert worker["command"][worker["command"].index("--nthreads") + 1] == "1"
    assert worker["deploy"]["replicas"] >= 2
    assert services["web1"]["build"] == services["worker"]["build"]  # one image, one code


def test_the_balancer_sends_to_both_instances():
    conf = (DEPLOY / "nginx-balancer.conf").read_text()
    assert set(re.findall(r"server (web\d):8000", conf)) == {"web1", "web2"}
    compose = yaml.safe_load((DEPLOY / "compose.yaml").read_text())
    mount = compose["services"]["balancer"]["volumes"][0]
    assert mount.startswith("./nginx-balancer.conf:")


def test_the_image_installs_the_dask_extra():
    assert re.search(r'pip install "\.\[[^]]*dask', (DEPLOY / "Dockerfile").read_text())
