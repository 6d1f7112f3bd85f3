"""The defaults a forecast applied on the caller's behalf, listed in every forecast body.

Each entry is ``{"field", "value", "note"}``: ``field`` is the dotted request path that was
left out, ``value`` what was used in its place (a number, a string, or an object whose keys
carry units, so that ``units=us`` converts them), ``note`` why and where it comes from.
"""

import math
from dataclasses import asdict
from typing import Any

from model.ambient import Ambient
from model.scenario import Ground, Scenario
from service import rounding
from service.schemas import FaceIn, ScenarioIn

DEFAULT_GROUND = Ground()
"""The soil layer a placement rests on when neither ``ground`` nor ``faces.bottom`` is given:
3 m of soil, conductivity 1.5 W/(m K), 1900 kg/m3, 900 J/(kg K), typical of moist sandy or
silty soil (common practice, no source); its deep temperature is set per scenario."""


def mean_air_c(ambient: Ambient, duration_h: float) -> float:
    """Mean air temperature over a forecast [C]: the middle of a daily cycle, the mean of the
    hourly values within ``duration_h`` [h], or the constant value; rounded to 0.01 C. Stands in
    for the deep-ground temperature when none is given (common practice, no source: the ground
    a few metres down is near the mean air temperature of the season)."""
    if ambient.daily_min_c is not None and ambient.daily_max_c is not None:
        mean = (ambient.daily_min_c + ambient.daily_max_c) / 2.0
    elif isinstance(ambient.air_c, tuple):
        hours = ambient.air_c[: math.ceil(duration_h - 1e-9) + 1]
        mean = sum(hours) / len(hours)
    else:
        mean = float(ambient.air_c)
    return round(mean, 2)


def default_ground(ambient: Ambient, duration_h: float) -> Ground:
    """The default soil layer under a placement that is not told otherwise."""
    return Ground(
        depth_m=DEFAULT_GROUND.depth_m,
        conductivity_w_mk=DEFAULT_GROUND.conductivity_w_mk,
        density_kg_m3=DEFAULT_GROUND.density_kg_m3,
        specific_heat_j_kgk=DEFAULT_GROUND.specific_heat_j_kgk,
        deep_temperature_c=mean_air_c(ambient, duration_h),
    )


def _entry(field: str, value: Any, note: str) -> dict[str, Any]:
    return {"field": field, "value": value, "note": note}


def _face_entries(request: ScenarioIn, scenario: Scenario) -> list[dict[str, Any]]:
    out = []
    faces_in = request.faces
    for name in scenario.element.face_names():
        given: FaceIn | None = getattr(faces_in, name, None)
        if given is None and name not in ("top", "bottom"):
            given = faces_in.sides
        if name == "bottom" and scenario.ground is not None:
            continue  # the bottom rests on the ground layer
        if given is None:
            out.append(
                _entry(
                    f"faces.{name}",
                    "bare concrete",
                    "not given: exposed to the air with no insulation or formwork",
                )
            )
        if scenario.face(name).adiabatic:
            continue
        if given is None or given.film_coefficient_w_m2k is None:
            out.append(
                _entry(
                    f"faces.{name}.film_coefficient_w_m2k",
                    "from wind and radiation",
                    "convection from the wind speed (Watmuff et al. 1977) plus linearised "
                    f"long-wave radiation, emissivity {scenario.face(name).emissivity:g}",
                )
            )
    return out


def _ground_entries(request: ScenarioIn, scenario: Scenario) -> list[dict[str, Any]]:
    ground = scenario.ground
    if ground is None:
        return []
    if request.ground is None:
        return [
            _entry(
                "ground",
                {
                    k: v
                    for k, v in asdict(ground).items()
                    if v is not None and k != "initial_temperature_c"
                },
                "neither ground nor faces.bottom given: the element rests on a default soil "
                "layer (typical moist soil, common practice), its deep and initial temperature "
                "the mean air temperature of the forecast; give faces.bottom for an element "
                "that does not rest on ground",
            )
        ]
    if "deep_temperature_c" not in request.ground.model_fields_set:
        return [
            _entry(
                "ground.deep_temperature_c",
                {"deep_temperature_c": ground.deep_temperature_c},
                "not given: the mean air temperature of the forecast",
            )
        ]
    return []


def _mix_entries(request: ScenarioIn, scenario: Scenario, origin: str) -> list[dict[str, Any]]:
    mix = request.mix
    given = mix.model_fields_set
    concrete = scenario.concrete
    out = []
    if mix.hydration is None:
        hyd = {k: rounding.significant(v) for k, v in asdict(concrete.hydration).items()}
        out.append(_entry("mix.hydration", hyd, f"not given: {origin}"))
        if mix.cement is None and "cement_type" not in given:
            out.append(
                _entry("mix.cement_type", mix.cement_type, "not given: ASTM C150 Type I preset")
            )
        if mix.fly_ash_kg_m3 > 0 and "fly_ash_cao_pct" not in given:
            out.append(_entry("mix.fly_ash_cao_pct", mix.fly_ash_cao_pct, "not given"))
    if mix.aggregate_kg_m3 is None:
        out.append(
            _entry(
                "mix.aggregate_kg_m3",
                {"aggregate_kg_m3": round(concrete.masses.aggregate_kg_m3, 1)},
                "not given: 2400 kg/m3 (or the given density) minus binder and water",
            )
        )
    if mix.density_kg_m3 is None:
        out.append(
            _entry(
                "mix.density_kg_m3",
                {"density_kg_m3": round(concrete.density, 1)},
                "not given: the sum of the mix masses",
            )
        )
    if mix.specific_heat_j_kgk is None:
        out.append(
            _entry(
                "mix.specific_heat_j_kgk",
                "Van Breugel (1998)",
                "not given: changes with hydration and temperature (give a value to hold it "
                "constant)",
            )
        )
    if mix.conductivity_w_mk is None:
        out.append(
            _entry(
                "mix.conductivity_w_mk",
                {"hardened_conductivity_w_mk": concrete.hardened_conductivity_w_mk},
                "not given: k_uc (1.33 - 0.33 alpha), changing with hydration (give a value to "
                "hold it constant)",
            )
        )
    return out


def _other_entries(request: ScenarioIn, scenario: Scenario) -> list[dict[str, Any]]:
    out = []
    given = request.model_fields_set
    amb = request.ambient
    if "wind_m_s" not in amb.model_fields_set:
        out.append(_entry("ambient.wind_m_s", {"wind_m_s": amb.wind_m_s}, "not given"))
    if "solar_w_m2" not in amb.model_fields_set and amb.solar_peak_w_m2 is None:
        out.append(_entry("ambient.solar_w_m2", {"solar_w_m2": 0.0}, "not given: no sun"))
    daily = amb.daily_min_c is not None or amb.solar_peak_w_m2 is not None
    if daily and "clock_hour" not in request.placement.model_fields_set:
        out.append(
            _entry(
                "placement.clock_hour",
                request.placement.clock_hour,
                "not given: placement at 08:00 for the daily cycles",
            )
        )
    limits_given = request.limits.model_fields_set if "limits" in given else set()
    for name, value in request.limits.model_dump().items():
        if name not in limits_given:
            out.append(
                _entry(
                    f"limits.{name}",
                    {name: value},
                    "not given: a common specification value, not a promise; the governing "
                    "specification and the engineer of record set the limits",
                )
            )
    if "near_surface_depth_m" not in given:
        out.append(
            _entry(
                "near_surface_depth_m",
                {"near_surface_depth_m": request.near_surface_depth_m},
                "not given: 50 mm inside each exposed face (common practice)",
            )
        )
    for name, note in (
        ("duration_h", "not given"),
        ("output_interval_h", "not given"),
        ("nurse_saul_datum_c", "not given"),
    ):
        if name not in given:
            out.append(_entry(name, {name: getattr(request, name)}, note))
    if request.resolution is None:
        res = scenario.settings
        out.append(
            _entry(
                "resolution",
                {
                    "surface_cell_m": res.surface_cell_m,
                    "growth": res.growth,
                    "max_cell_m": res.max_cell_m,
                    "max_step_h": res.max_step_h,
                    "error_tolerance_c": res.error_tolerance_c,
                },
                f"not given: the default for a {scenario.element.shape}",
            )
        )
    return out


def assumptions(request: ScenarioIn, scenario: Scenario, origin: str) -> list[dict[str, Any]]:
    """Every default the forecast of ``request`` applied, as {field, value, note}."""
    return [
        *_ground_entries(request, scenario),
        *_face_entries(request, scenario),
        *_mix_entries(request, scenario, origin),
        *_other_entries(request, scenario),
    ]
