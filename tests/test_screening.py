"""In-place strength and cracking screening along forecasts (model/screening.py, API)."""

import math

import numpy as np
import pytest

from model.ambient import Ambient
from model.scenario import Face
from model.screening import CrackingSettings, cracking_screening, in_place_strength
from model.solver import forecast
from model.strength import StrengthMaturity
from tests.scenarios import NO_HEAT, concrete, slab

RELATION = StrengthMaturity("exponential", 45.0, tau_h=30.0, beta=0.8)


def test_strength_at_constant_reference_temperature_by_hand():
    """Concrete kept at 21.1 C has equivalent age = age (ASTM C1074), so at 30 h the
    exponential relation gives Su / e = 45 / 2.71828 = 16.55 MPa (hand calculation), and 10 MPa
    is reached at te = tau (-ln(10/45))^(-1/beta) = 30 x 1.5041^(-1.25) = 18.0 h."""
    still = slab(
        1.0,
        {"top": Face(adiabatic=True), "bottom": Face(adiabatic=True)},
        concrete=concrete(NO_HEAT),
        ambient=Ambient(air_c=21.1),
        placement_c=21.1,
        duration_h=48.0,
    )
    result = forecast(still)
    strength = in_place_strength(result, RELATION, 41000.0, (10.0,))
    at_30 = int(np.searchsorted(result.time_h, 30.0))
    assert strength.core_mpa[at_30] == pytest.approx(45.0 / math.e, rel=1e-3)
    expected = 30.0 * (-math.log(10.0 / 45.0)) ** (-1.0 / 0.8)
    assert strength.reached_h[10.0]["core"] == pytest.approx(expected, abs=0.05)


def test_warmer_core_gains_strength_first_and_index_follows_the_differential():
    mat = slab(
        2.0,
        {
            "top": Face(insulation_r_m2k_w=0.5, insulation_removal_h=72.0),
            "bottom": Face(adiabatic=True),
        },
        duration_h=120.0,
    )
    result = forecast(mat)
    strength = in_place_strength(result, RELATION, 41000.0, (10.0,))
    assert strength.reached_h[10.0]["core"] <= strength.reached_h[10.0]["surface"]
    low = cracking_screening(result, strength, CrackingSettings(internal_restraint=0.3))
    high = cracking_screening(result, strength, CrackingSettings(internal_restraint=0.6))
    assert high.max_index > low.max_index
    # With no external stress, index = R K E alpha dT / ft, and E / ft = 4700 / 0.56 for the
    # ACI 318 relations, so index / dT = R K alpha 4700 / 0.56 (hand calculation).
    none = cracking_screening(result, strength, CrackingSettings(external_restraint=0.0))
    late = result.time_h > 24.0
    ratio = none.index[late] / result.differential_c[late]
    assert ratio == pytest.approx(0.42 * 0.65 * 10e-6 * 4700 / 0.56, rel=1e-6)


def test_api_strength_and_cracking(client, contract_scenario):
    contract_scenario["duration_h"] = 96
    contract_scenario["sensors"] = [{"id": "S1", "depth_m": 1.0}]
    contract_scenario["strength"] = {
        "ultimate_mpa": 45,
        "tau_h": 30,
        "beta": 0.8,
        "targets_mpa": [10],
    }
    contract_scenario["cracking"] = {"external_restraint": 0.7}
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    target = body["summary"]["strength"]["targets"][0]
    assert set(target["reached_h"]) == {"core", "surface", "sensor S1"}
    assert "engineer of record" in body["summary"]["cracking"]["caution"]
    assert len(body["series"]["cracking_index"]) == len(body["series"]["time_h"])
    from service.units import request_to_us

    us = client.post("/v1/forecasts?units=us", json=request_to_us(contract_scenario)).get_json()
    # 1 psi = 6.894757e-3 MPa (NIST SP 811, B.9)
    assert us["summary"]["strength"]["final_core_psi"] == pytest.approx(
        body["summary"]["strength"]["final_core_mpa"] / 6.894757e-3, rel=1e-3
    )
    csv_head = (
        client.post("/v1/forecasts?format=csv", json=contract_scenario)
        .get_data(as_text=True)
        .splitlines()[0]
    )
    assert "core_strength_mpa" in csv_head and "cracking_index" in csv_head


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"cracking": {}}, "strength"),
        ({"strength": {"form": "hyperbolic", "ultimate_mpa": 40}}, "strength.rate_per_h"),
        (
            {"strength": {"lab": [{"age_h": 24, "temperature_c": 20, "strength_mpa": 10}]}},
            "strength.lab",
        ),
    ],
)
def test_screening_input_errors_name_the_field(client, contract_scenario, change, field):
    contract_scenario.update(change)
    response = client.post("/v1/forecasts", json=contract_scenario)
    assert response.status_code == 422
    assert field in [e["field"] for e in response.get_json()["errors"]]
