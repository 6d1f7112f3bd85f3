"""US customary units (service/units.py): factors, renaming, requests, bodies, paths and CSV.

Reference for every factor: NIST Special Publication 811 (2008 edition), Guide for the Use of
the International System of Units (SI), Appendix B.8 (factors for units listed alphabetically)
and B.9 (by kind of quantity). Each factor is also derived from the exact definitions that
B.8 gives: 1 ft = 0.3048 m, 1 yd = 0.9144 m, 1 in = 0.0254 m, 1 mi = 1609.344 m,
1 lb = 0.45359237 kg, 1 Btu_IT = 1055.05585262 J, 1 F of interval = 5/9 K; 1 h = 3600 s.
Fast: no solver, no Flask app.
"""

import copy
import csv
import io

import pytest

from service import units
from service.schemas import ScenarioIn
from service.units import (
    body_to_us,
    csv_header_to_us,
    csv_to_us,
    field_path_to_us,
    key_to_si,
    key_to_us,
    request_to_si,
    request_to_us,
)
from tests.conftest import CONTRACT_SCENARIO

# Exact definitions, NIST SP 811 (2008), App. B.8.
FT = 0.3048
YD = 0.9144
MI = 1609.344
LB = 0.45359237
BTU_IT = 1055.05585262
F_INTERVAL_K = 5.0 / 9.0
HOUR_S = 3600.0

"""The SI example request of /work/shared/DESIGN.md ("The part of the HTTP contract that
external checks use"), copied here so that these tests do not depend on conftest."""

CONTRACT_SCENARIO_US = {
    "element": {"shape": "slab", "thickness_ft": 2.0 / 0.3048},  # 6.5617 ft
    "mix": {
        "cement_lb_yd3": 380 / 0.5932764,  # 640.51 lb/yd3
        "fly_ash_lb_yd3": 0,
        "slag_lb_yd3": 0,
        "water_lb_yd3": 160 / 0.5932764,  # 269.69 lb/yd3
        "hydration": {
            "total_heat_btu_lb": 460000 / 2326,  # 197.76 Btu/lb
            "tau_h": 13.0,
            "beta": 0.9,
            "alpha_u": 0.75,
            "activation_energy_j_mol": 41000,  # stays SI
        },
        "density_lb_ft3": 2400 / 16.01846,  # 149.83 lb/ft3
        "specific_heat_btu_lbf": 1000 / 4186.8,  # 0.23885 Btu/(lb F)
        "conductivity_btu_hftf": 2.5 / 1.730735,  # 1.4445 Btu/(h ft F)
    },
    "placement": {"temperature_f": 68.0},  # 20 C
    "ambient": {"air_temperature_f": 68.0, "wind_mph": 2.0 / 0.44704},  # 4.4739 mph
    "faces": {
        "top": {"insulation_r_hft2f_btu": 0.5 / 0.1761102},  # R-2.839 h ft2 F/Btu
        "bottom": {"adiabatic": True},
    },
    "duration_h": 168,
}
"""The same request written by a US caller; values by hand from the NIST factors."""


def assert_close_tree(actual, expected, rel=1e-9):
    """Equal structure and keys; numbers equal within ``rel`` relative (bools exactly)."""
    if isinstance(expected, dict):
        assert isinstance(actual, dict)
        assert list(actual) == list(expected)
        for key in expected:
            assert_close_tree(actual[key], expected[key], rel)
    elif isinstance(expected, list):
        assert isinstance(actual, list) and len(actual) == len(expected)
        for a, e in zip(actual, expected, strict=True):
            assert_close_tree(a, e, rel)
    elif isinstance(expected, bool) or expected is None or isinstance(expected, str):
        assert actual == expected
    else:
        assert actual == pytest.approx(expected, rel=rel, abs=1e-12)


# --- Factors: NIST SP 811 (2008), Appendix B ------------------------------------------------


@pytest.mark.parametrize(
    ("constant", "published", "derived", "digits"),
    [
        # B.8 foot (ft) -> meter (m): 3.048 E-01, exact.
        ("FOOT_M", 0.3048, FT, None),
        # B.8 inch (in) -> meter (m): 2.54 E-02, exact.
        ("INCH_M", 0.0254, FT / 12, None),
        # B.8 mile per hour (mi/h) -> meter per second (m/s): 4.4704 E-01, exact.
        ("MPH_M_S", 0.44704, MI / HOUR_S, None),
        # B.8 pound per cubic yard (lb/yd3) -> kg/m3: 5.932 764 E-01.
        ("LB_YD3_KG_M3", 0.5932764, LB / YD**3, 7),
        # B.8 pound per cubic foot (lb/ft3) -> kg/m3: 1.601 846 E+01.
        ("LB_FT3_KG_M3", 16.01846, LB / FT**3, 5),
        # B.8 Btu_IT per pound (Btu_IT/lb) -> J/kg: 2.326 E+03, exact.
        ("BTU_LB_J_KG", 2326.0, BTU_IT / LB, 9),
        # B.8 Btu_IT per pound degree Fahrenheit -> J/(kg K): 4.1868 E+03, exact.
        ("BTU_LBF_J_KGK", 4186.8, BTU_IT / (LB * F_INTERVAL_K), 9),
        # B.8 Btu_IT per hour square foot degree Fahrenheit -> W/(m2 K): 5.678 263 E+00.
        ("BTU_HFT2F_W_M2K", 5.678263, BTU_IT / (HOUR_S * FT**2 * F_INTERVAL_K), 6),
        # B.8 Btu_IT foot per hour square foot degree Fahrenheit -> W/(m K): 1.730 735 E+00.
        ("BTU_HFTF_W_MK", 1.730735, BTU_IT / (HOUR_S * FT * F_INTERVAL_K), 6),
        # B.8 degree Fahrenheit hour square foot per Btu_IT -> m2 K/W: 1.761 102 E-01.
        ("HFT2F_BTU_M2K_W", 0.1761102, HOUR_S * FT**2 * F_INTERVAL_K / BTU_IT, 7),
        # B.8/B.9 Btu_IT per hour square foot -> W/m2: 3.154 591 E+00.
        ("BTU_HFT2_W_M2", 3.154591, BTU_IT / (HOUR_S * FT**2), 6),
    ],
)
def test_factor_is_the_nist_sp811_value(constant, published, derived, digits):
    """Each constant equals its NIST SP 811 (2008) App. B value, and that value is the exact
    definitions of App. B.8 rounded to the published digits (or exactly equal)."""
    value = getattr(units, constant)
    assert value == published
    if digits is None:
        assert value == pytest.approx(derived, rel=1e-15)
    else:
        assert round(derived, digits) == published


def test_exact_factors_hand_checks():
    """NIST SP 811 (2008) B.8: 1 ft = 0.3048 m and 1 mph = 0.44704 m/s exactly;
    1 h ft2 F/Btu_IT = 0.1761102 m2 K/W."""
    assert units.FOOT_M == 0.3048
    assert units.MPH_M_S == 0.44704
    assert units.HFT2F_BTU_M2K_W == 0.1761102
    assert pytest.approx(units.FOOT_M, rel=1e-15) == units.INCH_M * 12


def test_temperature_and_difference():
    """NIST SP 811 (2008) B.9: t/F = 1.8 t/C + 32; an interval of 1 C is 1.8 F.
    Hand: 20 C -> 68 F; 70 C -> 158 F; a 19 C differential -> 34.2 F."""
    assert request_to_si({"temperature_f": 68.0}) == {"temperature_c": pytest.approx(20.0)}
    assert request_to_us({"temperature_c": 70.0}) == {"temperature_f": pytest.approx(158.0)}
    assert request_to_us({"limits": {"max_differential_c": 19.0}}) == {
        "limits": {"max_differential_f": pytest.approx(34.2)}
    }
    assert request_to_si({"limits": {"max_differential_f": 34.2}}) == {
        "limits": {"max_differential_c": pytest.approx(19.0)}
    }
    # The Nurse-Saul datum is a temperature (offset applies): 32 F -> 0 C; -4 F -> -20 C.
    assert request_to_si({"nurse_saul_datum_f": 32.0})["nurse_saul_datum_c"] == pytest.approx(0)
    assert request_to_si({"nurse_saul_datum_f": -4.0})["nurse_saul_datum_c"] == pytest.approx(-20)


# --- Renaming -------------------------------------------------------------------------------

SCHEMA_RENAMES = {
    "thickness_m": "thickness_ft",
    "width_m": "width_ft",
    "height_m": "height_ft",
    "length_m": "length_ft",
    "total_heat_j_kg": "total_heat_btu_lb",
    "tau_h": "tau_h",
    "beta": "beta",
    "alpha_u": "alpha_u",
    "activation_energy_j_mol": "activation_energy_j_mol",
    "c3s_pct": "c3s_pct",
    "blaine_m2_kg": "blaine_m2_kg",
    "cement_kg_m3": "cement_lb_yd3",
    "fly_ash_kg_m3": "fly_ash_lb_yd3",
    "slag_kg_m3": "slag_lb_yd3",
    "water_kg_m3": "water_lb_yd3",
    "aggregate_kg_m3": "aggregate_lb_yd3",
    "cement_type": "cement_type",
    "density_kg_m3": "density_lb_ft3",
    "specific_heat_j_kgk": "specific_heat_btu_lbf",
    "conductivity_w_mk": "conductivity_btu_hftf",
    "hardened_conductivity_w_mk": "hardened_conductivity_btu_hftf",
    "temperature_c": "temperature_f",
    "clock_hour": "clock_hour",
    "air_temperature_c": "air_temperature_f",
    "daily_min_c": "daily_min_f",
    "wind_m_s": "wind_mph",
    "solar_w_m2": "solar_btu_hft2",
    "solar_peak_w_m2": "solar_peak_btu_hft2",
    "adiabatic": "adiabatic",
    "insulation_r_m2k_w": "insulation_r_hft2f_btu",
    "insulation_removal_h": "insulation_removal_h",
    "film_coefficient_w_m2k": "film_coefficient_btu_hft2f",
    "solar_absorptivity": "solar_absorptivity",
    "depth_m": "depth_ft",
    "margin_m": "margin_ft",
    "x_m": "x_ft",
    "max_temperature_c": "max_temperature_f",
    "max_differential_c": "max_differential_f",
    "surface_cell_m": "surface_cell_in",
    "max_cell_m": "max_cell_ft",
    "max_step_h": "max_step_h",
    "near_surface_depth_m": "near_surface_depth_in",
    "nurse_saul_datum_c": "nurse_saul_datum_f",
    "core_nurse_saul_ch": "core_nurse_saul_fh",
    "id": "id",
}


@pytest.mark.parametrize(("si", "us"), SCHEMA_RENAMES.items())
def test_key_renaming_both_ways(si, us):
    """The suffix table, its exceptions (inches, lb/ft3) and the suffixes left alone."""
    assert key_to_us(si) == us
    assert key_to_si(us) == (None if us == si else si)


def _schema_keys(model) -> set[str]:
    """Every field name of a pydantic model and of the models nested in it."""
    keys = set()
    for name, field in model.model_fields.items():
        keys.add(name)
        stack = [field.annotation]
        while stack:
            tp = stack.pop()
            if isinstance(tp, type) and hasattr(tp, "model_fields"):
                keys |= _schema_keys(tp)
            stack.extend(getattr(tp, "__args__", ()))
    return keys


def test_every_schema_field_has_a_twin_that_maps_back():
    """Every field of the request schema has a US name that request_to_si maps back."""
    keys = _schema_keys(ScenarioIn)
    assert {"thickness_m", "insulation_r_m2k_w", "surface_cell_m", "x_m"} <= keys
    for key in keys:
        us = key_to_us(key)
        assert key_to_si(us) == (None if us == key else key), key


def test_unrecognised_us_names_are_not_renamed():
    """Only exact twins are recognised: density is lb/ft3, small lengths are inches."""
    assert key_to_si("density_lb_yd3") is None
    assert key_to_si("near_surface_depth_ft") is None
    assert key_to_si("thickness_in") is None
    assert key_to_si("thickness_yd") is None
    assert key_to_si("thickness_m") is None


# --- Requests -------------------------------------------------------------------------------


def test_contract_example_written_in_us_units_gives_the_si_request():
    """The DESIGN.md example sent in US units (2.0 m = 6.5617 ft, 380 kg/m3 = 640.51 lb/yd3,
    2400 kg/m3 = 149.83 lb/ft3, 20 C = 68 F, R 0.5 m2K/W = R-2.839) comes back in SI."""
    assert CONTRACT_SCENARIO_US["element"]["thickness_ft"] == pytest.approx(6.5617, abs=1e-4)
    assert CONTRACT_SCENARIO_US["mix"]["cement_lb_yd3"] == pytest.approx(640.51, abs=1e-2)
    assert_close_tree(request_to_si(CONTRACT_SCENARIO_US), CONTRACT_SCENARIO, rel=1e-9)


def test_request_round_trip_and_no_mutation():
    """SI -> US -> SI reproduces the contract example; the inputs are not modified."""
    original = copy.deepcopy(CONTRACT_SCENARIO)
    us = request_to_us(CONTRACT_SCENARIO)
    assert_close_tree(us, CONTRACT_SCENARIO_US, rel=1e-9)
    assert_close_tree(request_to_si(us), CONTRACT_SCENARIO, rel=1e-9)
    assert original == CONTRACT_SCENARIO


def test_request_values_lists_none_and_small_lengths():
    """Hourly lists elementwise, None kept; inches for the near-surface depth and the surface
    cell (hand: 2 in = 0.0508 m; 0.5 in = 0.0127 m); sensors list of objects."""
    si = request_to_si(
        {
            "ambient": {"air_temperature_f": [32.0, 50.0, 68.0], "solar_peak_btu_hft2": None},
            "near_surface_depth_in": 2.0,
            "resolution": {"surface_cell_in": 0.5, "max_cell_ft": 1.0, "growth": 1.2},
            "sensors": [{"id": "S1", "depth_ft": 3.0, "x_ft": 0.5}],
            "mix": {"cement": {"blaine_m2_kg": 380, "c3s_pct": 55}},
        }
    )
    assert si["ambient"]["air_temperature_c"] == pytest.approx([0.0, 10.0, 20.0])
    assert si["ambient"]["solar_peak_w_m2"] is None
    assert si["near_surface_depth_m"] == pytest.approx(0.0508)
    assert si["resolution"] == pytest.approx(
        {"surface_cell_m": 0.0127, "max_cell_m": 0.3048, "growth": 1.2}
    )
    assert si["sensors"] == [{"id": "S1", "depth_m": pytest.approx(0.9144), "x_m": 0.1524}]
    assert si["mix"] == {"cement": {"blaine_m2_kg": 380, "c3s_pct": 55}}


def test_request_unknown_keys_pass_through_for_the_schema_to_reject():
    """Unknown names, and a US name whose SI twin is also given, pass through unconverted."""
    payload = {
        "element": {"shape": "slab", "thickness_ft": 6.0, "thickness_m": 2.0},
        "mix": {"density_lb_yd3": 4000, "colour": "grey"},
        "duration_days": 7,
    }
    assert request_to_si(payload) == payload
    # A misspelt name with a US suffix is renamed; the schema rejects "tickness_m", reported
    # back to the caller as "tickness_ft".
    renamed = request_to_si({"element": {"tickness_ft": 6.0}})
    assert renamed == {"element": {"tickness_m": pytest.approx(6.0 * 0.3048)}}
    assert field_path_to_us("element.tickness_m") == "element.tickness_ft"


def test_request_numeric_strings_are_converted():
    """The schema reads "68" as 68.0, so the value is converted like a number."""
    assert request_to_si({"temperature_f": "68"})["temperature_c"] == pytest.approx(20.0)
    assert request_to_si({"temperature_f": "warm"}) == {"temperature_c": "warm"}


# --- Response bodies ------------------------------------------------------------------------


def _body() -> dict:
    """A small hand-made SI forecast body shaped like service.convert.forecast_json."""
    return {
        "summary": {
            "peak_temperature_c": 70.0,
            "peak_time_h": 30.5,
            "max_differential_c": 19.0,
            "max_differential_time_h": 40.0,
            "max_spread_c": 20.0,
            "max_spread_time_h": 41.0,
            "min_surface_temperature_c": 25.0,
            "final_core_equivalent_age_h": 210.25,
            "final_surface_equivalent_age_h": 180.5,
            "limits": {
                "max_temperature_c": {
                    "limit_c": 70.0,
                    "met": True,
                    "margin_c": 0.0,
                    "first_exceeded_h": None,
                },
                "max_differential_c": {
                    "limit_c": 19.0,
                    "met": False,
                    "margin_c": -1.0,
                    "first_exceeded_h": 38.25,
                },
            },
        },
        "series": {
            "time_h": [0.0, 1.0],
            "core_c": [20.0, 25.5],
            "surface_c": [20.0, 21.123],
            "differential_c": [0.0, 4.377],
            "coolest_c": [20.0, 21.0],
            "spread_c": [0.0, 4.5],
            "air_c": [20.0, -10.0],
            "core_equivalent_age_h": [0.0, 1.05],
            "surface_equivalent_age_h": [0.0, 0.95],
            "core_degree_of_hydration": [0.0, 0.0123],
            "core_nurse_saul_ch": [0.0, 22.5],
            "surface_nurse_saul_ch": [0.0, 20.6],
            "faces_c": {"top": [20.0, 21.0], "bottom": [20.0, 30.0]},
            "sensors": {"S1": [20.0, 30.0], "spread_gauge": [20.0, 40.0]},
        },
        "cautions": ["Limits come from the governing specification."],
        "hydration": {
            "origin": "given",
            "total_heat_j_kg": 460000.0,
            "tau_h": 13.0,
            "beta": 0.9,
            "alpha_u": 0.75,
            "activation_energy_j_mol": 41000.0,
        },
        "numerics": {"cells": 120, "steps": 300, "energy_imbalance": 1.2e-6},
    }


def test_body_summary_peak_differential_limits_and_margins():
    """Hand: 70 C -> 158 F (temperature); 19 C -> 34.2 F and 20 C -> 36 F (differences);
    limit_c under max_temperature_c is a temperature (158 F), under max_differential_c a
    difference (34.2 F); margin_c is always a difference (-1 C -> -1.8 F); hours unchanged."""
    us = body_to_us(_body())
    s = us["summary"]
    assert s["peak_temperature_f"] == 158.0
    assert s["peak_time_h"] == 30.5
    assert s["max_differential_f"] == 34.2
    assert s["max_spread_f"] == 36.0
    assert s["min_surface_temperature_f"] == 77.0
    assert s["final_core_equivalent_age_h"] == 210.25
    assert s["limits"] == {
        "max_temperature_f": {
            "limit_f": 158.0,
            "met": True,
            "margin_f": 0.0,
            "first_exceeded_h": None,
        },
        "max_differential_f": {
            "limit_f": 34.2,
            "met": False,
            "margin_f": -1.8,
            "first_exceeded_h": 38.25,
        },
    }


def test_body_series_faces_sensors_and_rounding():
    """Hand: 25.5 C -> 77.9 F; 21.123 C -> 70.0214 F -> 70.021 (3 decimals); differential
    4.377 C -> 7.8786 -> 7.879 F; -10 C -> 14 F; Nurse-Saul 22.5 C h -> 40.5 F h. Sensor ids
    and face names are kept (a sensor named "spread_gauge" is still a temperature); faces_c
    becomes faces_f."""
    us = body_to_us(_body())
    series = us["series"]
    assert list(series) == [
        "time_h",
        "core_f",
        "surface_f",
        "differential_f",
        "coolest_f",
        "spread_f",
        "air_f",
        "core_equivalent_age_h",
        "surface_equivalent_age_h",
        "core_degree_of_hydration",
        "core_nurse_saul_fh",
        "surface_nurse_saul_fh",
        "faces_f",
        "sensors",
    ]
    assert series["time_h"] == [0.0, 1.0]
    assert series["core_f"] == [68.0, 77.9]
    assert series["surface_f"] == [68.0, 70.02]
    assert series["differential_f"] == [0.0, 7.88]
    assert series["spread_f"] == [0.0, 8.1]
    assert series["air_f"] == [68.0, 14.0]
    assert series["core_equivalent_age_h"] == [0.0, 1.05]
    assert series["core_degree_of_hydration"] == [0.0, 0.0123]
    assert series["core_nurse_saul_fh"] == [0.0, 40.5]
    assert series["surface_nurse_saul_fh"] == [0.0, 37.08]
    assert "faces_c" not in series
    assert series["faces_f"] == {"top": [68.0, 69.8], "bottom": [68.0, 86.0]}
    assert series["sensors"] == {"S1": [68.0, 86.0], "spread_gauge": [68.0, 104.0]}


def test_body_other_sections_and_no_mutation():
    """Hydration parameters to 6 significant digits (460000 J/kg / 2326 = 197.764 Btu/lb), the
    activation energy stays J/mol; cautions and numerics unchanged; input untouched."""
    body = _body()
    original = copy.deepcopy(body)
    us = body_to_us(body)
    assert body == original
    assert us["hydration"] == {
        "origin": "given",
        "total_heat_btu_lb": 197.764,
        "tau_h": 13.0,
        "beta": 0.9,
        "alpha_u": 0.75,
        "activation_energy_j_mol": 41000.0,
    }
    assert us["cautions"] == original["cautions"]
    assert us["numerics"] == original["numerics"]


# --- Error paths ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("si", "us"),
    [
        ("element.thickness_m", "element.thickness_ft"),
        ("ambient.air_temperature_c.3", "ambient.air_temperature_f.3"),
        ("ambient.wind_m_s", "ambient.wind_mph"),
        ("faces.top.insulation_r_m2k_w", "faces.top.insulation_r_hft2f_btu"),
        ("faces.sides.film_coefficient_w_m2k", "faces.sides.film_coefficient_btu_hft2f"),
        ("mix.density_kg_m3", "mix.density_lb_ft3"),
        ("ground.density_kg_m3", "ground.density_lb_ft3"),
        ("mix.water_kg_m3", "mix.water_lb_yd3"),
        ("mix.cement.blaine_m2_kg", "mix.cement.blaine_m2_kg"),
        ("mix.hydration.activation_energy_j_mol", "mix.hydration.activation_energy_j_mol"),
        ("near_surface_depth_m", "near_surface_depth_in"),
        ("resolution.surface_cell_m", "resolution.surface_cell_in"),
        ("sensors.0.depth_m", "sensors.0.depth_ft"),
        ("limits.max_differential_c", "limits.max_differential_f"),
        ("duration_h", "duration_h"),
        ("(body)", "(body)"),
    ],
)
def test_field_path_to_us(si, us):
    assert field_path_to_us(si) == us


def test_field_path_reports_the_name_the_caller_wrote():
    """A field the caller wrote with its SI name is reported as written."""
    written = {"element": {"shape": "slab", "thickness_m": 2.0}, "sensors": [{"depth_ft": 1}]}
    assert field_path_to_us("element.thickness_m", written) == "element.thickness_m"
    assert field_path_to_us("sensors.0.depth_m", written) == "sensors.0.depth_ft"


# --- CSV ------------------------------------------------------------------------------------

CSV_SI = (
    "time_h,core_c,surface_c,differential_c,coolest_c,spread_c,air_c,core_equivalent_age_h,"
    "surface_equivalent_age_h,core_degree_of_hydration,sensor_S1_c,sensor_spread_c\n"
    "0.0,20.0,20.0,0.0,20.0,0.0,20.0,0.0,0.0,0.0,20.0,20.0\n"
    "24.0,50.0,35.0,15.0,30.0,20.0,-5.0,30.12,25.5,0.4512,45.0,40.0\n"
)
"""A forecast CSV in the layout of service.convert.forecast_csv (sensor ids S1, spread)."""


def test_csv_header_names():
    assert csv_header_to_us("time_h") == "time_h"
    assert csv_header_to_us("core_c") == "core_f"
    assert csv_header_to_us("differential_c") == "differential_f"
    assert csv_header_to_us("core_degree_of_hydration") == "core_degree_of_hydration"
    assert csv_header_to_us("sensor_S1_c") == "sensor_S1_f"
    assert csv_header_to_us("sensor_depth_m_c") == "sensor_depth_m_f"
    assert csv_header_to_us("core_nurse_saul_ch") == "core_nurse_saul_fh"


def test_csv_to_us_header_and_values():
    """Hand: 50 C -> 122 F, 35 -> 95, -5 -> 23 (temperatures); differential 15 C -> 27 F and
    spread 20 C -> 36 F (differences); sensor "spread" is a temperature (40 C -> 104 F);
    hours and degree of hydration unchanged."""
    rows = list(csv.reader(io.StringIO(csv_to_us(CSV_SI))))
    assert rows[0] == [
        "time_h",
        "core_f",
        "surface_f",
        "differential_f",
        "coolest_f",
        "spread_f",
        "air_f",
        "core_equivalent_age_h",
        "surface_equivalent_age_h",
        "core_degree_of_hydration",
        "sensor_S1_f",
        "sensor_spread_f",
    ]
    values = [[float(v) for v in row] for row in rows[1:]]
    assert values == [
        [0.0, 68.0, 68.0, 0.0, 68.0, 0.0, 68.0, 0.0, 0.0, 0.0, 68.0, 68.0],
        [24.0, 122.0, 95.0, 27.0, 86.0, 36.0, 23.0, 30.12, 25.5, 0.4512, 113.0, 104.0],
    ]
    assert rows[2][0] == "24.0" and rows[2][9] == "0.4512"  # unconverted cells kept verbatim


def test_us_contract_example_passes_the_request_schema():
    """The converted request is a valid SI scenario (schema only, no solver)."""
    scenario = ScenarioIn.model_validate(request_to_si(CONTRACT_SCENARIO_US))
    assert scenario.element.thickness_m == pytest.approx(2.0, rel=1e-12)
    assert scenario.faces.top.insulation_r_m2k_w == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize(
    ("key", "ancestors", "difference"),
    [
        ("peak_temperature_c", ("summary",), False),
        ("max_differential_c", ("summary",), True),
        ("limit_c", ("summary", "limits", "max_differential_c"), True),
        ("limit_c", ("summary", "limits", "max_temperature_c"), False),
        ("margin_c", ("summary", "limits", "max_temperature_c"), True),
        ("adiabatic_rise_c", (), True),
        ("nurse_saul_datum_c", (), False),
        ("rms_error_c", ("calibration",), True),
        ("forms_c", (), False),  # "rms" only as a whole word
    ],
)
def test_temperature_difference_rule(key, ancestors, difference):
    assert units.is_temperature_difference(key, ancestors) is difference
