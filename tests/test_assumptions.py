"""One default slab bottom for POST and GET (the element rests on a default soil layer), and the
``assumptions`` every forecast lists: the defaults applied on the caller's behalf."""

import copy

import pytest

QUERY = (
    "/v1/forecasts?shape=slab&thickness_m=2&cement_kg_m3=380&water_kg_m3=160&placement_c=20"
    "&air_mean_c=18&air_range_c=10&top_r_m2k_w={r}&duration_h=96&format=json"
)


def posted(r_top: float = 0.5) -> dict:
    """The POST scenario equivalent to QUERY, with no bottom and no ground given."""
    return {
        "element": {"shape": "slab", "thickness_m": 2.0},
        "mix": {"cement_kg_m3": 380, "water_kg_m3": 160, "cement_type": "type_i"},
        "placement": {"temperature_c": 20.0},
        "ambient": {"daily_min_c": 13.0, "daily_max_c": 23.0, "wind_m_s": 2.0},
        "faces": {"top": {"insulation_r_m2k_w": r_top}},
        "duration_h": 96,
    }


def by_field(body: dict) -> dict:
    return {a["field"]: a for a in body["assumptions"]}


def test_post_and_get_assume_the_same_bottom(client):
    post = client.post("/v1/forecasts", json=posted()).get_json()
    get = client.get(QUERY.format(r=0.5)).get_json()
    assert post["summary"] == get["summary"]
    assert post["series"]["surface_c"] == get["series"]["surface_c"]
    ground = by_field(post)["ground"]["value"]
    assert ground["deep_temperature_c"] == 18.0  # the mean of the daily cycle
    assert ground["depth_m"] == 3.0
    assert by_field(get)["ground"] == by_field(post)["ground"]


def test_on_ground_more_top_insulation_lowers_the_differential(client):
    """A mat on soil: the coolest near-surface point is under the top blanket, so more top R
    means a smaller differential (bare in the wind, the bottom was the coolest and more top R
    made it worse)."""
    low = client.post("/v1/forecasts", json=posted(0.2)).get_json()["summary"]
    high = client.post("/v1/forecasts", json=posted(1.0)).get_json()["summary"]
    assert high["max_differential_c"] < low["max_differential_c"]


def test_a_bottom_given_replaces_the_default_ground(client):
    for bottom, expected in (({}, "bare concrete"), ({"adiabatic": True}, None)):
        scenario = posted()
        scenario["faces"]["bottom"] = bottom
        body = client.post("/v1/forecasts", json=scenario).get_json()
        listed = by_field(body)
        assert "ground" not in listed
        assert "faces.bottom" not in listed  # given, even if empty
        if expected is None:
            assert "faces.bottom.film_coefficient_w_m2k" not in listed
        else:
            assert "faces.bottom.film_coefficient_w_m2k" in listed


def test_contract_example_is_unchanged_and_lists_what_it_left_out(client, contract_scenario):
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    listed = by_field(body)
    assert "ground" not in listed  # bottom adiabatic, as written
    assert "mix.hydration" not in listed  # given
    assert "mix.conductivity_w_mk" not in listed  # given: held constant
    assert listed["limits.max_temperature_c"]["value"] == {"max_temperature_c": 70.0}
    assert listed["limits.max_differential_c"]["value"] == {"max_differential_c": 19.0}
    assert listed["near_surface_depth_m"]["value"] == {"near_surface_depth_m": 0.05}
    assert "faces.top.film_coefficient_w_m2k" in listed
    assert listed["resolution"]["note"].endswith("slab")
    for entry in body["assumptions"]:
        assert set(entry) == {"field", "value", "note"}


def test_estimated_mix_lists_hydration_and_property_models(client):
    body = client.post("/v1/forecasts", json=posted()).get_json()
    listed = by_field(body)
    assert "estimated" in listed["mix.hydration"]["note"]
    assert listed["mix.hydration"]["value"]["tau_h"] == body["hydration"]["tau_h"]
    assert "mix.cement_type" not in listed  # given
    assert "Van Breugel" in listed["mix.specific_heat_j_kgk"]["value"]
    assert "1.33 - 0.33 alpha" in listed["mix.conductivity_w_mk"]["note"]
    assert "placement.clock_hour" in listed  # daily cycle, clock hour left out


def test_given_values_are_not_listed(client):
    scenario = posted()
    scenario["limits"] = {"max_temperature_c": 65, "max_differential_c": 20}
    scenario["near_surface_depth_m"] = 0.075
    scenario["ground"] = {"deep_temperature_c": 12.0}
    listed = by_field(client.post("/v1/forecasts", json=scenario).get_json())
    assert not any(f.startswith("limits") for f in listed)
    assert "near_surface_depth_m" not in listed
    assert "ground" not in listed and "ground.deep_temperature_c" not in listed


def test_ground_without_deep_temperature_takes_the_mean_air(client):
    scenario = posted()
    scenario["ground"] = {"depth_m": 4.0}
    listed = by_field(client.post("/v1/forecasts", json=scenario).get_json())
    assert listed["ground.deep_temperature_c"]["value"] == {"deep_temperature_c": 18.0}


def test_assumptions_in_us_units(client):
    body = client.post("/v1/forecasts?units=us", json=posted()).get_json()
    listed = by_field(body)
    assert listed["limits.max_temperature_f"]["value"] == {"max_temperature_f": 158.0}
    assert listed["limits.max_differential_f"]["value"] == {"max_differential_f": 34.2}
    assert listed["ground"]["value"]["deep_temperature_f"] == pytest.approx(64.4)
    assert listed["ground"]["value"]["depth_ft"] == pytest.approx(9.84252)


def test_csv_names_the_assumed_fields_in_a_header(client):
    response = client.post("/v1/forecasts?format=csv", json=copy.deepcopy(posted()))
    header = response.headers["Pourheat-Assumptions"]
    assert "ground" in header.split(", ")
    assert "limits.max_temperature_c" in header.split(", ")
