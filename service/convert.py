"""Converters between the HTTP schemas and the model: request -> Scenario, Forecast -> JSON/CSV."""

import io
from dataclasses import asdict, replace
from typing import Any

import numpy as np

from model.ambient import Ambient
from model.cements import CementComposition, cement_preset
from model.hydration import Binder, HydrationParameters, estimate_hydration
from model.properties import MixMasses
from model.results import PROJECTION_H, Forecast
from model.scenario import (
    Concrete,
    Element,
    Face,
    Ground,
    Resolution,
    Scenario,
    Sensor,
    default_resolution,
)
from service import rounding
from service.assumptions import assumptions, default_ground, mean_air_c
from service.csvout import SafeCsvWriter
from service.schemas import FaceIn, MixIn, ScenarioIn
from service.screening_json import screening_parts

DEFAULT_DENSITY_KG_M3 = 2400.0
"""Density of normal-weight concrete used to infer the aggregate mass when not given [kg/m3]
(common practice, no source)."""

CAUTIONS = (
    "Limits come from the governing specification and the engineer of record; the default "
    "limits (70 C peak, 19 C differential) are common specification values, not a promise.",
    "This forecast is an estimate from a model; confirm it by monitoring temperatures in the "
    "placement and follow local codes and licensed professional practice.",
)


def hydration_parameters(mix: MixIn) -> tuple[HydrationParameters, str]:
    """Hydration parameters given in the request, or estimated from the mix; with their origin."""
    if mix.hydration is not None:
        return HydrationParameters(**mix.hydration.model_dump()), "given"
    cement = (
        CementComposition(**mix.cement.model_dump())
        if mix.cement is not None
        else cement_preset(mix.cement_type)
    )
    binder = Binder(
        cement_kg_m3=mix.cement_kg_m3,
        fly_ash_kg_m3=mix.fly_ash_kg_m3,
        slag_kg_m3=mix.slag_kg_m3,
        water_kg_m3=mix.water_kg_m3,
        cement=cement,
        fly_ash_cao_fraction=mix.fly_ash_cao_pct / 100.0,
    )
    origin = "estimated (Schindler & Folliard 2005) from " + (
        "the given cement composition" if mix.cement is not None else f"preset {mix.cement_type}"
    )
    return estimate_hydration(binder), origin


def concrete_from(mix: MixIn) -> tuple[Concrete, str]:
    """Model concrete from the request's mix, with the origin of its hydration parameters."""
    hydration, origin = hydration_parameters(mix)
    binder = mix.cement_kg_m3 + mix.fly_ash_kg_m3 + mix.slag_kg_m3
    aggregate = mix.aggregate_kg_m3
    if aggregate is None:
        total = mix.density_kg_m3 or DEFAULT_DENSITY_KG_M3
        aggregate = max(total - binder - mix.water_kg_m3, 0.0)
    concrete = Concrete(
        cementitious_kg_m3=binder,
        hydration=hydration,
        masses=MixMasses(binder, aggregate, mix.water_kg_m3),
        hardened_conductivity_w_mk=mix.hardened_conductivity_w_mk,
        density_kg_m3=mix.density_kg_m3,
        specific_heat_j_kgk=mix.specific_heat_j_kgk,
        conductivity_w_mk=mix.conductivity_w_mk,
    )
    return concrete, origin


def _face(face: FaceIn) -> Face:
    return Face(**face.model_dump())


def _hourly(value: float | list[float] | None) -> float | tuple[float, ...]:
    return tuple(value) if isinstance(value, list) else float(value or 0.0)


def resolution_from(request: ScenarioIn) -> Resolution | None:
    """Numerical settings: the shape's defaults overridden by any given in the request."""
    if request.resolution is None:
        return None
    base = default_resolution(request.element.shape)
    given = {k: v for k, v in request.resolution.model_dump().items() if v is not None}
    return replace(base, **given)


def scenario_from(request: ScenarioIn) -> tuple[Scenario, str]:
    """Model scenario from a validated request; with the origin of the hydration parameters."""
    el = request.element
    if el.shape == "slab":
        element = Element("slab", height_m=el.thickness_m)
    elif el.shape == "section":
        element = Element("section", height_m=el.height_m, width_m=el.width_m)
    else:
        element = Element("block", height_m=el.height_m, width_m=el.width_m, length_m=el.length_m)
    faces_in = request.faces
    faces: dict[str, Face] = {}
    for name in element.face_names():
        given = getattr(faces_in, name)
        if given is None and name not in ("top", "bottom"):
            given = faces_in.sides
        if given is not None:
            faces[name] = _face(given)
    amb = request.ambient
    ambient = Ambient(
        air_c=_hourly(amb.air_temperature_c),
        daily_min_c=amb.daily_min_c,
        daily_max_c=amb.daily_max_c,
        wind_m_s=_hourly(amb.wind_m_s),
        solar_w_m2=_hourly(amb.solar_w_m2),
        solar_peak_w_m2=amb.solar_peak_w_m2,
        placement_clock_h=request.placement.clock_hour,
    )
    concrete, origin = concrete_from(request.mix)
    ground = None
    if request.ground is not None:
        given = request.ground.model_dump()
        if given["deep_temperature_c"] is None:
            given["deep_temperature_c"] = mean_air_c(ambient, request.duration_h)
        ground = Ground(**given)
    elif faces_in.bottom is None:
        ground = default_ground(ambient, request.duration_h)
    scenario = Scenario(
        element=element,
        concrete=concrete,
        ambient=ambient,
        faces=faces,
        placement_c=request.placement.temperature_c,
        duration_h=request.duration_h,
        output_interval_h=request.output_interval_h,
        ground=ground,
        sensors=tuple(Sensor(s.id, s.depth_m, s.x_m, s.y_m) for s in request.sensors),
        near_surface_depth_m=request.near_surface_depth_m,
        nurse_saul_datum_c=request.nurse_saul_datum_c,
        resolution=resolution_from(request),
    )
    return scenario, origin


def hydration_json(hydration: HydrationParameters) -> dict[str, float]:
    """Hydration parameters as reported (6 significant digits)."""
    return {k: rounding.significant(v) for k, v in asdict(hydration).items()}


def _rounded(values: np.ndarray, digits: int) -> list[float]:
    return [round(float(v), digits) for v in values]


LIMIT_QUANTITIES = {"max_temperature_c": "core_c", "max_differential_c": "differential_c"}
"""The series whose maximum each limit bounds."""


def limit_status(result: Forecast, quantity: str, limit: float) -> dict:
    """Whether a limit is met, the margin (limit minus worst value) and when it is first
    exceeded, all from every solver step. ``met`` is true, false, or null when the verdict is
    "unsettled" (not settled within the forecast; see model.results.Forecast.limit_verdict):
    null is never true, so a consumer that tests ``met`` treats it as not met."""
    verdict = result.limit_verdict(quantity, limit)
    status = {
        "limit_c": limit,
        "met": verdict.met,
        "verdict": verdict.verdict,
        "margin_c": rounding.temperature(verdict.margin),
        "first_exceeded_h": rounding.hours(verdict.first_exceeded_h),
    }
    if verdict.reason is not None:
        status["unsettled_reason"] = verdict.reason
    return status


def unsettled_cautions(limits: dict[str, dict], duration_h: float) -> list[str]:
    """A caution for each limit whose verdict is "unsettled", saying to extend duration_h."""
    return [
        f"The {key.removesuffix('_c').replace('_', ' ')} limit is not settled within the "
        f"forecast: {status['unsettled_reason']}. It is not reported as met; extend duration_h "
        f"(e.g. to {duration_h + PROJECTION_H:g} h) and forecast again."
        for key, status in limits.items()
        if status["verdict"] == "unsettled"
    ]


def forecast_json(
    request: ScenarioIn, scenario: Scenario, result: Forecast, hydration_origin: str
) -> dict[str, Any]:
    """The JSON body of a forecast response."""
    s = result.summary
    limits = request.limits
    temperature, hours = rounding.temperature, rounding.hours
    summary = {
        "peak_temperature_c": temperature(s.peak_temperature_c),
        "peak_time_h": hours(s.peak_time_h),
        "max_differential_c": temperature(s.max_differential_c),
        "max_differential_time_h": hours(s.max_differential_time_h),
        "max_spread_c": temperature(s.max_spread_c),
        "max_spread_time_h": hours(s.max_spread_time_h),
        "min_surface_temperature_c": temperature(s.min_surface_temperature_c),
        "final_core_equivalent_age_h": hours(s.final_core_equivalent_age_h),
        "final_surface_equivalent_age_h": hours(s.final_surface_equivalent_age_h),
        "limits": {
            key: limit_status(result, quantity, getattr(limits, key))
            for key, quantity in LIMIT_QUANTITIES.items()
        },
    }
    t, h = rounding.TEMPERATURE_DIGITS, rounding.HOURS_DIGITS
    series = {
        "time_h": _rounded(result.time_h, h),
        "core_c": _rounded(result.core_c, t),
        "surface_c": _rounded(result.surface_c, t),
        "differential_c": _rounded(result.differential_c, t),
        "coolest_c": _rounded(result.coolest_c, t),
        "spread_c": _rounded(result.spread_c, t),
        "air_c": _rounded(result.air_c, t),
        "core_equivalent_age_h": _rounded(result.core_equivalent_age_h, h),
        "surface_equivalent_age_h": _rounded(result.surface_equivalent_age_h, h),
        "core_degree_of_hydration": _rounded(
            result.core_degree_of_hydration, rounding.HYDRATION_DEGREE_DIGITS
        ),
        "core_nurse_saul_ch": _rounded(result.core_nurse_saul_ch, rounding.NURSE_SAUL_DIGITS),
        "surface_nurse_saul_ch": _rounded(result.surface_nurse_saul_ch, rounding.NURSE_SAUL_DIGITS),
        "faces_c": {name: _rounded(v, t) for name, v in result.faces_c.items()},
        "sensors": {name: _rounded(v, t) for name, v in result.sensors_c.items()},
        "faces_equivalent_age_h": {
            name: _rounded(v, h) for name, v in result.faces_equivalent_age_h.items()
        },
        "sensors_equivalent_age_h": {
            name: _rounded(v, h) for name, v in result.sensors_equivalent_age_h.items()
        },
    }
    more_summary, more_series = screening_parts(request, scenario, result)
    summary.update(more_summary)
    series.update(more_series)
    return {
        "summary": summary,
        "series": series,
        "cautions": [*CAUTIONS, *unsettled_cautions(summary["limits"], scenario.duration_h)],
        "hydration": {"origin": hydration_origin, **hydration_json(scenario.concrete.hydration)},
        "assumptions": assumptions(request, scenario, hydration_origin),
        "numerics": {
            "cells": result.cells,
            "steps": result.steps,
            "energy_imbalance": float(f"{result.energy.relative_imbalance:.3g}"),
        },
    }


OPTIONAL_CSV_COLUMNS = (
    "core_strength_mpa",
    "surface_strength_mpa",
    "cracking_index",
    "allowable_differential_c",
)
"""Columns present when the forecast asked for strength or cracking screening."""

CSV_COLUMNS = (
    "time_h",
    "core_c",
    "surface_c",
    "differential_c",
    "coolest_c",
    "spread_c",
    "air_c",
    "core_equivalent_age_h",
    "surface_equivalent_age_h",
    "core_degree_of_hydration",
)


def forecast_csv(body: dict[str, Any]) -> str:
    """The series of a forecast body as CSV, one row per reported time; sensors as extra columns."""
    series = body["series"]
    sensors = series["sensors"]
    out = io.StringIO()
    writer = SafeCsvWriter(out)
    columns = [*CSV_COLUMNS, *(c for c in OPTIONAL_CSV_COLUMNS if c in series)]
    writer.writerow([*columns, *(f"sensor_{name}_c" for name in sensors)])
    for i in range(len(series["time_h"])):
        row = [series[c][i] for c in columns] + [v[i] for v in sensors.values()]
        writer.writerow([rounding.csv_cell(v) for v in row])
    return out.getvalue()
