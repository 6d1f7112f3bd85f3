"""Property tests of the model on random valid scenarios (hypothesis): every forecast is finite,
stays inside the bounds of the maximum principle and balances its heat.

Bounds (maximum principle for the heat equation with a non-negative source, e.g. Carslaw &
Jaeger, Conduction of Heat in Solids, 2nd ed., section 1.14, with the source bounded by the
adiabatic rise): with fixed density and specific heat, no temperature can fall below the coldest
of the placement, air and ground temperatures, nor rise above the warmest of them plus the
ultimate adiabatic rise ``Hu Cc alpha_u / (rho c)`` (Schindler & Folliard 2005). The sky is
taken at air temperature (model/boundaries.py) and there is no sun here, so the air bounds the
faces. 0.5 C is allowed for the time and space discretisation (common practice, no source).

Energy: heat generated = heat stored + heat lost (first law) within 1 %.

Scenarios are coarse (Resolution below) so that each runs in well under a second; the bounds
hold at any resolution.
"""

import math

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model.ambient import Ambient
from model.hydration import HydrationParameters, adiabatic_rise_c
from model.properties import MixMasses
from model.scenario import Concrete, Element, Face, Ground, Resolution, Scenario, Sensor
from model.solver import forecast

COARSE = Resolution(surface_cell_m=0.03, growth=1.4, max_cell_m=0.4, max_step_h=2)
"""Coarse settings: a few dozen to a few hundred cells, steps up to 2 h."""
DISCRETISATION_C = 0.5
"""Allowance on the bounds for the discretisation [C] (common practice, no source)."""
MAX_IMBALANCE = 0.01
"""Largest relative energy imbalance accepted [-]."""
PROPERTY_SETTINGS = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)


def _float(lo: float, hi: float) -> st.SearchStrategy[float]:
    return st.floats(lo, hi, allow_nan=False, allow_infinity=False)


@st.composite
def elements(draw) -> Element:
    """A slab 0.2-10 m thick, a section or a block of modest size."""
    shape = draw(st.sampled_from(["slab", "section", "block"]))
    if shape == "slab":
        return Element("slab", draw(_float(0.2, 10.0)))
    if shape == "section":
        return Element("section", draw(_float(0.3, 3.0)), width_m=draw(_float(0.3, 3.0)))
    return Element(
        "block",
        draw(_float(0.5, 2.5)),
        width_m=draw(_float(0.5, 3.0)),
        length_m=draw(_float(0.5, 4.0)),
    )


@st.composite
def concretes(draw) -> Concrete:
    """Binder 100-600 kg/m3, plausible hydration parameters, fixed properties."""
    binder = draw(_float(100.0, 600.0))
    hydration = HydrationParameters(
        total_heat_j_kg=draw(_float(300_000.0, 550_000.0)),
        tau_h=draw(_float(8.0, 40.0)),
        beta=draw(_float(0.5, 1.5)),
        alpha_u=draw(_float(0.6, 0.95)),
        activation_energy_j_mol=draw(_float(25_000.0, 50_000.0)),
    )
    water = 0.45 * binder
    return Concrete(
        binder,
        hydration,
        MixMasses(binder, 2400.0 - binder - water, water),
        density_kg_m3=draw(_float(2200.0, 2500.0)),
        specific_heat_j_kgk=draw(_float(850.0, 1150.0)),
        conductivity_w_mk=draw(_float(1.5, 3.5)),
    )


@st.composite
def ambients(draw) -> Ambient:
    """Constant air or a daily cycle within -20..40 C, wind 0-10 m/s, no sun."""
    wind = draw(_float(0.0, 10.0))
    if draw(st.booleans()):
        return Ambient(air_c=draw(_float(-20.0, 40.0)), wind_m_s=wind)
    low, high = sorted((draw(_float(-20.0, 40.0)), draw(_float(-20.0, 40.0))))
    return Ambient(daily_min_c=low, daily_max_c=high, wind_m_s=wind)


def side_faces() -> st.SearchStrategy[Face]:
    return st.one_of(
        st.just(Face()),
        st.just(Face(adiabatic=True)),
        st.builds(Face, formwork_r_m2k_w=_float(0.0, 1.0)),
        st.builds(Face, insulation_r_m2k_w=_float(0.0, 2.0)),
    )


@st.composite
def scenarios(draw) -> Scenario:
    element = draw(elements())
    faces = {"top": Face(insulation_r_m2k_w=draw(_float(0.0, 5.0)))}
    for name in element.face_names()[1:]:
        faces[name] = draw(side_faces())
    ground = None
    if draw(st.booleans()):
        deep = draw(_float(-5.0, 25.0))
        initial = draw(st.one_of(st.none(), _float(-5.0, 25.0)))
        ground = Ground(
            depth_m=draw(_float(0.5, 2.0)),
            conductivity_w_mk=draw(_float(0.5, 3.0)),
            deep_temperature_c=deep,
            initial_temperature_c=initial,
        )
    height = element.height_m
    return Scenario(
        element=element,
        concrete=draw(concretes()),
        ambient=draw(ambients()),
        faces=faces,
        placement_c=draw(_float(5.0, 35.0)),
        duration_h=draw(_float(24.0, 96.0)),
        output_interval_h=draw(st.sampled_from([1.0, 2.0, 3.0])),
        ground=ground,
        sensors=(Sensor("mid", height / 2), Sensor("top", min(0.05, height / 4))),
        resolution=COARSE,
    )


def _bounds(scenario: Scenario) -> tuple[float, float]:
    """(lowest, highest) temperature the maximum principle allows [C]."""
    amb = scenario.ambient
    if amb.daily_min_c is not None and amb.daily_max_c is not None:
        air = [amb.daily_min_c, amb.daily_max_c]
    else:
        air = [float(np.min(amb.air_c)), float(np.max(amb.air_c))]
    temps = [scenario.placement_c, *air]
    if scenario.ground is not None:
        g = scenario.ground
        temps.append(g.deep_temperature_c)
        if g.initial_temperature_c is not None:
            temps.append(g.initial_temperature_c)
    c = scenario.concrete
    rise = adiabatic_rise_c(
        c.cementitious_kg_m3,
        c.hydration.total_heat_j_kg,
        c.hydration.alpha_u,
        c.density_kg_m3,
        c.specific_heat_j_kgk,
    )
    return min(temps) - DISCRETISATION_C, max(temps) + rise + DISCRETISATION_C


def _reported(result) -> dict[str, np.ndarray]:
    series = {
        "core_c": result.core_c,
        "surface_c": result.surface_c,
        "coolest_c": result.coolest_c,
        "peak_temperature_c": np.array([result.summary.peak_temperature_c]),
        "min_surface_temperature_c": np.array([result.summary.min_surface_temperature_c]),
    }
    series.update({f"faces_c.{k}": v for k, v in result.faces_c.items()})
    series.update({f"sensors_c.{k}": v for k, v in result.sensors_c.items()})
    return series


@PROPERTY_SETTINGS
@given(scenario=scenarios())
def test_forecast_is_finite_bounded_and_balanced(scenario):
    result = forecast(scenario)
    low, high = _bounds(scenario)
    for name, values in _reported(result).items():
        values = np.asarray(values, dtype=float)
        assert np.all(np.isfinite(values)), f"{name} has NaN or inf"
        assert values.min() >= low, f"{name} min {values.min():.3f} C below bound {low:.3f} C"
        assert values.max() <= high, f"{name} max {values.max():.3f} C above bound {high:.3f} C"
    for name in ("differential_c", "spread_c", "core_equivalent_age_h"):
        assert np.all(np.isfinite(getattr(result, name))), f"{name} has NaN or inf"
    assert np.all(result.spread_c >= -1e-9), "hottest point below coolest point"
    energy = result.energy
    assert all(math.isfinite(v) for v in (energy.generated_j, energy.stored_j, energy.lost_j))
    assert energy.generated_j > 0
    assert abs(energy.relative_imbalance) <= MAX_IMBALANCE, (
        f"energy imbalance {energy.relative_imbalance:.4%}: generated {energy.generated_j:.4g} J,"
        f" stored {energy.stored_j:.4g} J, lost {energy.lost_j:.4g} J"
    )
