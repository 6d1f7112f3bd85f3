"""The ``pourheat`` command line: summary, output files, exit codes. No physics is checked here
(the forecast itself is covered by the solver and service tests); --units us is not tested."""

import copy
import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import pytest

from service import cli
from tests.conftest import CONTRACT_SCENARIO

SMALL_SCENARIO = {
    **copy.deepcopy(CONTRACT_SCENARIO),
    "element": {"shape": "slab", "thickness_m": 1.0},
    "duration_h": 48,
    "limits": {"max_temperature_c": 85, "max_differential_c": 25},
}
"""A 1.0 m slab, top insulated, bottom adiabatic, 48 h: the contract mix, cheap to run. It peaks
near 71 C with a differential near 10 C, so the limits given here are met with room to spare."""

PROJECT_ROOT = Path(__file__).resolve().parents[1]


def write_scenario(tmp_path: Path, scenario: dict, name: str = "scenario.json") -> Path:
    path = tmp_path / name
    path.write_text(json.dumps(scenario), encoding="utf-8")
    return path


@pytest.fixture
def scenario() -> dict:
    """A fresh copy of the small scenario; tests may modify it freely."""
    return copy.deepcopy(SMALL_SCENARIO)


@pytest.fixture
def low_limits(scenario: dict) -> dict:
    """The small scenario with a 25 C peak limit, which a hydrating 1 m slab placed at 20 C
    exceeds."""
    scenario["limits"]["max_temperature_c"] = 25
    return scenario


def test_forecast_prints_summary_and_exits_0(tmp_path, scenario, capsys):
    path = write_scenario(tmp_path, scenario)
    assert cli.main(["forecast", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Peak temperature:" in out
    assert "Max differential:" in out
    assert "Limit max temperature 85 C: met" in out
    assert "Limit max differential 25 C: met" in out
    assert "Caution:" in out


def test_forecast_writes_csv_and_json(tmp_path, scenario, capsys):
    path = write_scenario(tmp_path, scenario)
    csv_path, json_path = tmp_path / "out.csv", tmp_path / "out.json"
    code = cli.main(["forecast", str(path), "--csv", str(csv_path), "--json", str(json_path)])
    assert code == 0
    rows = list(csv.reader(csv_path.read_text(encoding="utf-8").splitlines()))
    assert ",".join(rows[0]).startswith("time_h,core_c")
    assert float(rows[-1][0]) == pytest.approx(48.0)
    body = json.loads(json_path.read_text(encoding="utf-8"))
    assert len(rows) - 1 == len(body["series"]["time_h"])
    summary = body["summary"]
    assert f"{summary['peak_temperature_c']:.1f} C" in capsys.readouterr().out


def test_fail_on_limit_exits_3_when_a_limit_is_exceeded(tmp_path, low_limits, capsys):
    path = write_scenario(tmp_path, low_limits)
    assert cli.main(["forecast", str(path), "--fail-on-limit"]) == 3
    captured = capsys.readouterr()
    assert "Limit max temperature 25 C: EXCEEDED" in captured.out
    assert "max temperature" in captured.err


def test_exceeded_limit_without_the_flag_exits_0(tmp_path, low_limits, capsys):
    path = write_scenario(tmp_path, low_limits)
    assert cli.main(["forecast", str(path)]) == 0
    assert "EXCEEDED" in capsys.readouterr().out


def test_fail_on_limit_exits_0_when_limits_are_met(tmp_path, scenario, capsys):
    path = write_scenario(tmp_path, scenario)
    assert cli.main(["forecast", str(path), "--fail-on-limit"]) == 0


def test_invalid_scenario_exits_2_naming_the_field(tmp_path, scenario, capsys):
    scenario["element"]["thickness_m"] = -1.0
    path = write_scenario(tmp_path, scenario)
    csv_path = tmp_path / "out.csv"
    assert cli.main(["forecast", str(path), "--csv", str(csv_path)]) == 2
    captured = capsys.readouterr()
    assert "element.thickness_m:" in captured.err
    assert captured.out == ""
    assert not csv_path.exists()


def test_unreadable_file_exits_2(tmp_path, capsys):
    assert cli.main(["forecast", str(tmp_path / "missing.json")]) == 2
    assert "cannot read" in capsys.readouterr().err


def test_malformed_json_exits_2(tmp_path, capsys):
    path = tmp_path / "broken.json"
    path.write_text('{"element": {"shape": "slab",', encoding="utf-8")
    assert cli.main(["forecast", str(path)]) == 2
    assert "not valid JSON" in capsys.readouterr().err


def test_scenario_from_stdin(scenario, monkeypatch, capsys):
    monkeypatch.setattr("sys.stdin", io.StringIO(json.dumps(scenario)))
    assert cli.main(["forecast", "-"]) == 0
    assert "Peak temperature:" in capsys.readouterr().out


def test_unwritable_output_exits_1(tmp_path, scenario, capsys):
    path = write_scenario(tmp_path, scenario)
    assert cli.main(["forecast", str(path), "--csv", str(tmp_path / "no" / "out.csv")]) == 1
    assert "cannot write output" in capsys.readouterr().err


def test_serve_execs_gunicorn_with_the_deploy_settings(monkeypatch):
    """No server is started: os.execvp is replaced by a recorder."""
    calls = []
    monkeypatch.setattr(cli.os, "execvp", lambda file, argv: calls.append((file, argv)))
    monkeypatch.setenv("PORT", "8123")
    monkeypatch.chdir(PROJECT_ROOT)
    cli.main(["serve"])
    cli.main(["serve", "--port", "9001", "--host", "0.0.0.0"])
    (file, argv), (_, argv_host) = calls
    assert file == sys.executable
    assert argv[1:3] == ["-m", "gunicorn"]
    assert argv[-1] == "service.app:create_app()"
    assert Path(argv[argv.index("--config") + 1]).name == "gunicorn.conf.py"
    assert "--bind" not in argv
    assert argv_host[argv_host.index("--bind") + 1] == "0.0.0.0:9001"
    assert cli.os.environ["PORT"] == "9001"


def test_subprocess_exit_codes(tmp_path, low_limits):
    """The module runs as a program, with the same exit codes, output on stdout and stderr."""
    path = write_scenario(tmp_path, low_limits)
    csv_path = tmp_path / "out.csv"
    run = subprocess.run(
        [sys.executable, "-m", "service.cli", "forecast", str(path), "--fail-on-limit"]
        + ["--csv", str(csv_path)],
        capture_output=True,
        text=True,
        cwd=PROJECT_ROOT,
        timeout=120,
    )
    assert run.returncode == 3, run.stderr
    assert "Peak temperature:" in run.stdout
    assert csv_path.read_text(encoding="utf-8").startswith("time_h,core_c")


def test_plan_prints_each_control_and_exits_0(tmp_path, scenario, capsys):
    path = write_scenario(tmp_path, scenario)
    assert cli.main(["plan", str(path), "--solve", "max_placement_temperature_c"]) == 0
    out = capsys.readouterr().out
    assert "max_placement_temperature_c:" in out and "engineer of record" in out


def test_plan_fail_on_limit_exits_3_when_no_value_meets(tmp_path, low_limits, capsys):
    path = write_scenario(tmp_path, low_limits)
    code = cli.main(["plan", str(path), "--solve", "max_thickness_m", "--fail-on-limit"])
    assert code == 3
    assert "cannot be met" in capsys.readouterr().err


def test_forecast_prints_strength_and_cracking_screening(tmp_path, scenario, capsys):
    scenario["strength"] = {"ultimate_mpa": 45, "tau_h": 30, "beta": 0.8, "targets_mpa": [10]}
    scenario["cracking"] = {}
    path = write_scenario(tmp_path, scenario)
    assert cli.main(["forecast", str(path)]) == 0
    lines = capsys.readouterr().out.splitlines()
    reached = next(line for line in lines if line.startswith("Strength 10 MPa reached: "))
    assert "core " in reached and "surface " in reached
    assert any(line.startswith("Final in-place strength: core ") for line in lines)
    cracking = next(line for line in lines if line.startswith("Cracking index (screening): max "))
    assert "smallest allowable differential" in cracking and cracking.endswith(" C")
    assert sum("screening estimates" in line for line in lines if line.startswith("Caution:")) == 1


def test_summary_of_screening_in_us_units_and_unreached_targets():
    """format_summary on a hand-made US body (no forecast run): psi and F, "not reached"."""
    caution = "Screening only."
    body = {
        "summary": {
            "peak_temperature_f": 160.0,
            "peak_time_h": 30.0,
            "max_differential_f": 30.0,
            "max_differential_time_h": 40.0,
            "limits": {},
            "strength": {
                "targets": [
                    {
                        "target_psi": 1450.377,
                        "reached_h": {"core": 10.72, "surface": None, "sensor S1": 12.0},
                    }
                ],
                "final_core_psi": 6290.287,
                "final_surface_psi": 6151.051,
                "caution": caution,
            },
            "cracking": {
                "max_index": 1.218,
                "max_index_time_h": 168.0,
                "min_allowable_differential_f": 56.16,
                "caution": caution,
            },
        },
        "cautions": [],
    }
    lines = cli.format_summary(body, "F").splitlines()
    assert "Strength 1450 psi reached: core 10.7 h, surface not reached, sensor S1 12.0 h" in lines
    assert "Final in-place strength: core 6290 psi, surface 6151 psi" in lines
    assert (
        "Cracking index (screening): max 1.22 at 168 h; smallest allowable differential 56.2 F"
        in lines
    )
    assert lines.count(f"Caution: {caution}") == 1
