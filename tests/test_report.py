"""The printable PDF report (``format=pdf``), read back through poppler: pdftotext for its
content (so the text is selectable), pdfinfo for its pages, pdftoppm renders every page.
Page images go to pytest's tmp_path; with ``POURHEAT_SCREENSHOTS_DIR`` set the first page and
the chart page are also copied there (README images)."""

import copy
import re
import subprocess
from datetime import UTC, datetime, timedelta
from pathlib import Path

from service.convert import CAUTIONS
from service.report import render_report
from service.schemas import ScenarioIn
from tests.conftest import keep_artefact, require_program

NAME = "Mat D <east> & $x$"


def _scenario(contract_scenario: dict) -> dict:
    scenario = copy.deepcopy(contract_scenario)
    scenario["name"] = NAME
    scenario["duration_h"] = 96
    del scenario["mix"]["hydration"]  # estimated from the cement type: origin "estimated"
    scenario["mix"]["cement_type"] = "type_ii"
    scenario["faces"]["top"]["insulation_removal_h"] = 72
    scenario["sensors"] = [{"id": "S1", "depth_m": 1.0}]
    scenario["strength"] = {"ultimate_mpa": 45, "tau_h": 30, "beta": 0.8, "targets_mpa": [10]}
    scenario["cracking"] = {"external_restraint": 0.7}
    return scenario


def _pdf_text(pdf: bytes, folder: Path, stem: str = "report") -> tuple[str, int]:
    """The PDF's text (pdftotext, layout kept) and its page count; every page is rendered to
    PNG by pdftoppm, which must succeed."""
    pdftotext = require_program("pdftotext", "the report's text is read back from the PDF")
    pdftoppm = require_program("pdftoppm", "every page of the report is rendered")
    pdfinfo = require_program("pdfinfo", "the report's page count")
    path = folder / f"{stem}.pdf"
    path.write_bytes(pdf)
    text = subprocess.run(
        [pdftotext, "-layout", str(path), "-"], capture_output=True, check=True, timeout=60
    ).stdout.decode()
    info = subprocess.run([pdfinfo, str(path)], capture_output=True, check=True, timeout=60)
    pages = int(re.search(r"^Pages:\s+(\d+)", info.stdout.decode(), re.M).group(1))
    subprocess.run(
        [pdftoppm, "-r", "60", "-png", str(path), str(folder / stem)],
        capture_output=True, check=True, timeout=120,
    )  # fmt: skip
    rendered = sorted(folder.glob(f"{stem}-*.png"))
    assert len(rendered) == pages
    assert all(p.read_bytes().startswith(b"\x89PNG") for p in rendered)
    return re.sub(r"[ \t]+", " ", text), pages


def test_forecast_report_has_inputs_summary_screening_and_cautions(
    client, contract_scenario, tmp_path
):
    scenario = _scenario(contract_scenario)
    response = client.post("/v1/forecasts?format=pdf", json=scenario)
    assert response.status_code == 200
    assert response.mimetype == "application/pdf"
    assert response.data.startswith(b"%PDF")
    body = client.post("/v1/forecasts", json=scenario).get_json()
    text, pages = _pdf_text(response.data, tmp_path)
    assert 2 <= pages <= 5
    flat = " ".join(text.split())
    summary = body["summary"]
    assert f"Thermal forecast: {NAME}" in flat
    assert "Summary against the limits" in flat
    assert f"Peak temperature: {summary['peak_temperature_c']:.1f} °C" in flat
    assert "limit 70 °C" in flat and "limit 19 °C" in flat
    assert "Element: slab 2 m thick" in flat
    assert "cement 380, fly ash 0, slag 0, water 160 kg/m3 (w/cm 0.42)" in flat
    assert "origin: estimated (Schindler & Folliard 2005) from preset type_ii" in flat
    assert f"tau {body['hydration']['tau_h']:.4g} h" in flat
    assert "Placement: 20 °C" in flat and "Air: 20 °C" in flat and "Wind: 2 m/s" in flat
    assert "Face top: insulation R 0.5 m2K/W, off at 72 h" in flat
    assert "Face bottom: adiabatic" in flat
    assert "Strength and cracking screening" in flat and "Target 10 MPa reached" in flat
    assert "Cracking index: max" in flat
    assert "Strength relation: form exponential, ultimate_mpa 45, tau_h 30, beta 0.8" in flat
    assert "Assumptions and defaults applied" in flat
    for caution in [*CAUTIONS, summary["cracking"]["caution"]]:
        assert " ".join(caution.split()) in flat
    # the chart page, with its title, limit labels and removal mark
    assert "Max temperature limit 70 °C" in flat
    assert "top insulation off at 72 h (day 3, 00:00)" in flat
    for page in sorted(tmp_path.glob("report-*.png"))[:2]:
        keep_artefact(page, f"report-page{page.stem.rsplit('-', 1)[1].lstrip('0')}.png")


def test_report_lists_the_forecasts_assumptions(contract_scenario, client, tmp_path):
    """Whatever shape the entries of ``assumptions`` take (text, or field/value/reason), each
    is printed."""
    scenario_in = ScenarioIn.model_validate(contract_scenario)
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    body["assumptions"] = [
        "wind speed 2 m/s assumed constant",
        {"field": "mix.aggregate_kg_m3", "value": 1660, "reason": "density minus binder, water"},
    ]
    text, _ = _pdf_text(render_report(scenario_in, body), tmp_path)
    flat = " ".join(text.split())
    assert "- wind speed 2 m/s assumed constant" in flat
    assert "- mix.aggregate_kg_m3: 1660 (density minus binder, water)" in flat
    assert "Thermal forecast: Unnamed scenario" in flat


def test_accept_header_and_spreadsheet_query_offer_pdf(client, contract_scenario):
    contract_scenario["duration_h"] = 48
    by_accept = client.post(
        "/v1/forecasts", json=contract_scenario, headers={"Accept": "application/pdf"}
    )
    assert by_accept.status_code == 200 and by_accept.mimetype == "application/pdf"
    query = (
        "/v1/forecasts?shape=slab&thickness_m=1.5&cement_kg_m3=360&water_kg_m3=155"
        "&placement_c=18&air_mean_c=15&air_range_c=10&top_r_m2k_w=0.5&duration_h=48"
    )
    assert client.get(query + "&format=pdf").mimetype == "application/pdf"
    assert client.get(query).mimetype == "text/csv"  # the spreadsheet default is unchanged
    bad = client.post("/v1/forecasts?format=svg&size=poster", json=contract_scenario)
    assert bad.status_code == 422 and bad.get_json()["errors"][0]["field"] == "size"


def test_stored_pour_report_has_calibration_and_local_times(tmp_path, contract_scenario):
    from service.app import create_app

    client = create_app({"TESTING": True, "DATABASE": str(tmp_path / "r.sqlite3")}).test_client()
    scenario = copy.deepcopy(contract_scenario)
    scenario["duration_h"] = 96
    scenario["sensors"] = [{"id": "T1", "depth_m": 1.0}]
    placed = datetime.now(UTC).replace(microsecond=0) - timedelta(hours=20)
    created = client.post(
        "/v1/pours",
        json={"name": "Pier 4", "placed_at": placed.isoformat(), "scenario": scenario},
    )
    pour_id = created.get_json()["id"]
    planned = client.post("/v1/forecasts", json=scenario).get_json()["series"]["sensors"]["T1"]
    rows = [
        {"time": (placed + timedelta(hours=h)).isoformat(), "sensor": "T1",
         "temperature_c": planned[h] + 0.5}
        for h in range(1, 19)
    ]  # fmt: skip
    assert client.post(f"/v1/pours/{pour_id}/readings", json={"readings": rows}).status_code == 200
    response = client.get(f"/v1/pours/{pour_id}/forecast?format=pdf")
    assert response.status_code == 200 and response.mimetype == "application/pdf"
    flat = " ".join(_pdf_text(response.data, tmp_path, "pour")[0].split())
    assert "Thermal forecast: Pier 4" in flat
    assert f"Stored pour {pour_id}" in flat
    assert "Calibration to the readings" in flat and "RMS fit error" in flat
    assert "Local time (UTC+00:00)" in flat
    assert "Sensor T1" in flat
