"""Planning searches, pre-cooling, comparisons and uncertainty bands."""

import copy
import math

import pytest

from model.ambient import Ambient
from model.hydration import HydrationParameters
from model.planning import (
    SEARCHES,
    Limits,
    _from_hint,
    _Hint,
    _Margins,
    _Outcome,
    margins_c,
    solve_control,
    with_control,
)
from model.precooling import (
    Batch,
    fresh_concrete_temperature_c,
    ice_for_target_kg_m3,
    water_temperature_for_target_c,
)
from model.scenario import Face
from model.solver import forecast
from tests.scenarios import concrete, footing_on_ground, slab

LIMITS = Limits(70.0, 19.0)
MAT = slab(
    1.5,
    {"top": Face(insulation_r_m2k_w=1.0), "bottom": Face(adiabatic=True)},
    ambient=Ambient(air_c=15.0),
    duration_h=240.0,
)
LOW_HEAT = concrete(HydrationParameters(380000.0, 18.0, 0.8, 0.7, 40000.0))
INSULATED_MAT = slab(
    2.0,
    {"top": Face(insulation_r_m2k_w=0.5), "bottom": Face(adiabatic=True)},
    concrete=LOW_HEAT,
    ambient=Ambient(air_c=12.0),
    placement_c=15.0,
    duration_h=240.0,
)
REMOVAL_MAT = slab(
    1.0,
    {
        "top": Face(insulation_r_m2k_w=0.8, insulation_removal_h=100.0),
        "bottom": Face(adiabatic=True),
    },
    concrete=LOW_HEAT,
    ambient=Ambient(air_c=15.0),
    placement_c=15.0,
    duration_h=400.0,
)


def _meets(scenario, control, value, limits=LIMITS, differential_only=False):
    temperature, differential = margins_c(
        forecast(with_control(scenario, control, value)).summary, limits
    )
    return differential >= 0 if differential_only else min(temperature, differential) >= 0


@pytest.mark.parametrize(
    ("control", "scenario"),
    [
        ("max_placement_temperature_c", MAT),
        ("max_thickness_m", MAT),
        ("min_top_insulation_r_m2k_w", INSULATED_MAT),
        ("earliest_insulation_removal_h", REMOVAL_MAT),
    ],
)
def test_returned_control_meets_and_one_step_beyond_misses(control, scenario):
    result = solve_control(scenario, control, LIMITS)
    assert result.status in ("found", "peak_limit_binds"), result.note
    search = SEARCHES[control]
    beyond = result.value + (-1 if search.larger_is_safer else 1) * search.tolerance
    only_differential = control == "min_top_insulation_r_m2k_w"
    assert _meets(scenario, control, result.value, differential_only=only_differential)
    assert not _meets(scenario, control, beyond, differential_only=only_differential)


def test_met_and_missed_over_the_whole_range_are_reported():
    easy = with_control(MAT, "max_thickness_m", 0.4)
    assert (
        solve_control(easy, "max_placement_temperature_c", Limits(120.0, 100.0)).status
        == "met_over_range"
    )
    missed = solve_control(MAT, "max_placement_temperature_c", Limits(30.0, 19.0))
    assert missed.status == "missed_over_range" and missed.value is None


def test_answers_are_monotone_and_sensible():
    """Thicker pours need cooler placement; more insulation lowers the differential."""
    thin = solve_control(
        with_control(MAT, "max_thickness_m", 1.0), "max_placement_temperature_c", LIMITS
    )
    thick = solve_control(
        with_control(MAT, "max_thickness_m", 2.0), "max_placement_temperature_c", LIMITS
    )
    assert thick.value < thin.value
    low_r = forecast(with_control(INSULATED_MAT, "min_top_insulation_r_m2k_w", 0.3)).summary
    high_r = forecast(with_control(INSULATED_MAT, "min_top_insulation_r_m2k_w", 1.5)).summary
    assert high_r.max_differential_c < low_r.max_differential_c


def test_fresh_concrete_temperature_worked_example():
    """ACI 305R / 207.4R heat balance (formula from memory), worked by hand:
    Wa 1800 kg at 30 C, Wc 350 kg at 60 C, Ww 150 kg at 20 C, Wwa 40 kg:
    [0.22 (30 x 1800 + 60 x 350) + 20 x 150 + 30 x 40] / [0.22 (2150) + 150 + 40]
    = (16500 + 3000 + 1200) / 663 = 31.22 C."""
    batch = Batch(1800.0, 30.0, 350.0, 60.0, 150.0, 20.0, 40.0)
    assert fresh_concrete_temperature_c(batch) == pytest.approx(31.22, abs=0.01)
    # ice to reach 24 C: (20700 - 24 x 663) / (20 + 80) = 47.88 kg/m3
    ice = ice_for_target_kg_m3(batch, 24.0)
    assert ice == pytest.approx(47.88, abs=0.01)
    with_ice = Batch(1800.0, 30.0, 350.0, 60.0, 150.0, 20.0, 40.0, ice)
    assert fresh_concrete_temperature_c(with_ice) == pytest.approx(24.0, abs=1e-9)
    # chilled water for 28 C: (28 x 663 - 17700) / 150 = 5.76 C
    assert water_temperature_for_target_c(batch, 28.0) == pytest.approx(5.76, abs=0.01)


def test_plan_endpoint_with_precooling(client, contract_scenario):
    contract_scenario["element"]["thickness_m"] = 1.5
    contract_scenario["faces"]["top"] = {"insulation_r_m2k_w": 1.0}
    contract_scenario["ambient"]["air_temperature_c"] = 15.0
    contract_scenario["duration_h"] = 240
    batch = {
        "aggregate_kg_m3": 1850,
        "aggregate_c": 28,
        "cement_kg_m3": 380,
        "cement_c": 55,
        "water_kg_m3": 160,
        "water_c": 22,
        "aggregate_moisture_kg_m3": 30,
    }
    response = client.post(
        "/v1/plans",
        json={
            "scenario": contract_scenario,
            "solve_for": ["max_placement_temperature_c"],
            "precooling": batch,
        },
    )
    assert response.status_code == 200
    body = response.get_json()
    found = body["controls"]["max_placement_temperature_c"]
    assert found["status"] == "found"
    assert found["summary"]["peak_temperature_c"] <= 70.0
    pre = body["precooling"]
    assert pre["target_c"] == found["value"]
    assert pre["fresh_concrete_c"] > pre["target_c"]
    cooled = Batch(**{**batch, "ice_kg_m3": pre["ice_kg_m3"]})
    assert fresh_concrete_temperature_c(cooled) == pytest.approx(found["value"], abs=0.1)
    assert "engineer of record" in " ".join(body["cautions"])


def test_plan_errors_name_the_field(client, contract_scenario):
    bad = client.post("/v1/plans", json={"scenario": contract_scenario, "solve_for": ["x"]})
    assert bad.status_code == 422
    assert bad.get_json()["errors"][0]["field"].startswith("solve_for")


def test_comparison_rows_equal_separate_forecasts(client, contract_scenario):
    contract_scenario["duration_h"] = 72
    variants = {
        "cool": {"placement": {"temperature_c": 12.0}},
        "thin": {"element": {"thickness_m": 1.0}},
    }
    body = client.post(
        "/v1/comparisons", json={"base": contract_scenario, "variants": variants}
    ).get_json()
    assert [row["variant"] for row in body["rows"]] == ["base", "cool", "thin"]
    for row in body["rows"]:
        scenario = copy.deepcopy(contract_scenario)
        if row["variant"] == "cool":
            scenario["placement"]["temperature_c"] = 12.0
        if row["variant"] == "thin":
            scenario["element"]["thickness_m"] = 1.0
        alone = client.post("/v1/forecasts", json=scenario).get_json()["summary"]
        assert row["peak_temperature_c"] == alone["peak_temperature_c"]
        assert row["max_differential_c"] == alone["max_differential_c"]
    csv_text = client.post(
        "/v1/comparisons?format=csv", json={"base": contract_scenario, "variants": variants}
    ).get_data(as_text=True)
    assert csv_text.splitlines()[0].startswith("variant,peak_temperature_c")
    assert len(csv_text.splitlines()) == 4


def test_uncertainty_band_is_seeded_and_ordered(client, contract_scenario):
    contract_scenario["duration_h"] = 96
    contract_scenario["uncertainty"] = {"samples": 12, "seed": 7}
    first = client.post("/v1/forecasts", json=contract_scenario).get_json()["summary"]
    again = client.post("/v1/forecasts", json=contract_scenario).get_json()["summary"]
    band = first["uncertainty"]
    assert band == again["uncertainty"]
    assert band["samples"] == 12
    for key in ("peak_temperature_c", "max_differential_c"):
        assert band[key]["p10"] <= band[key]["p50"] <= band[key]["p90"]
    assert band["peak_temperature_c"]["p10"] < first["peak_temperature_c"]
    assert first["peak_temperature_c"] < band["peak_temperature_c"]["p90"]


SECTION = footing_on_ground(120.0)
"""A 2D footing section: its plans search on a grid twice as coarse first."""


def test_coarse_first_search_finds_the_full_search_answer_with_fewer_forecasts():
    """The coarse grid only proposes: the value must meet on the section's own grid and a
    quarter tolerance beyond must miss, as the search over the whole range guarantees, and
    the two answers lie within that quarter tolerance of each other."""
    limits = Limits(60.0, 100.0)  # the peak binds
    control = "max_placement_temperature_c"
    quick = solve_control(SECTION, control, limits)
    full = solve_control(SECTION, control, limits, coarse_first=False)
    assert quick.status == full.status == "found"
    step = SEARCHES[control].tolerance / 4
    assert quick.value == pytest.approx(full.value, abs=step + 1e-6)
    assert quick.coarse_forecasts_run > 0 and full.coarse_forecasts_run == 0
    fine_runs = quick.forecasts_run - quick.coarse_forecasts_run
    assert fine_runs <= 4
    assert fine_runs < full.forecasts_run
    assert _meets(SECTION, control, quick.value, limits)
    assert not _meets(SECTION, control, quick.value + step, limits)


@pytest.mark.parametrize(
    ("limits", "status"),
    [(Limits(120.0, 100.0), "met_over_range"), (Limits(30.0, 10.0), "missed_over_range")],
)
def test_coarse_first_search_confirms_a_range_end_with_one_forecast(limits, status):
    quick = solve_control(SECTION, "max_placement_temperature_c", limits)
    assert quick.status == status
    assert quick.forecasts_run - quick.coarse_forecasts_run == 1
    assert 1 <= quick.coarse_forecasts_run <= 2


def test_a_misleading_coarse_answer_falls_back_to_the_full_search():
    """A coarse answer the scenario's own grid contradicts is not trusted: the search over the
    whole range decides (shown by handing the fine stage wrong hints)."""
    control = "max_placement_temperature_c"
    search = SEARCHES[control]
    margin = _Margins(MAT, control, LIMITS, forecast)
    wrong_end = _Hint(_Outcome("met_over_range", search.high, ""), math.nan, 0)
    assert _from_hint(margin, search, wrong_end, MAT.duration_h) is None
    wrong_slope = _Hint(_Outcome("found", 20.0, ""), +1.0, 0)  # margin rising toward risk
    assert _from_hint(margin, search, wrong_slope, MAT.duration_h) is None
    far = _Hint(_Outcome("found", 30.0, ""), -0.01, 0)  # slope far too flat: lands off range
    assert _from_hint(margin, search, far, MAT.duration_h) is None
