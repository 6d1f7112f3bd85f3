"""Checks across fields of a validated scenario, each error naming the field to fix."""

import math

from service.schemas import ScenarioIn

MIN_WATER_CM_RATIO, MAX_WATER_CM_RATIO = 0.2, 1.0
"""Accepted range of the water to cementitious materials ratio [-]."""


def cross_field_errors(s: ScenarioIn) -> list[dict[str, str]]:
    """Problems a single field's schema cannot see, as {field, message} (empty when none)."""
    errors: list[dict[str, str]] = []

    def add(field: str, message: str) -> None:
        errors.append({"field": field, "message": message})

    mix = s.mix
    binder = mix.cement_kg_m3 + mix.fly_ash_kg_m3 + mix.slag_kg_m3
    if binder <= 0:
        add("mix.cement_kg_m3", "cement + fly ash + slag must be more than 0 kg/m3")
    else:
        wcm = mix.water_kg_m3 / binder
        if not MIN_WATER_CM_RATIO <= wcm <= MAX_WATER_CM_RATIO:
            add(
                "mix.water_kg_m3",
                f"w/cm = {wcm:.3f} is outside {MIN_WATER_CM_RATIO:.2f} to {MAX_WATER_CM_RATIO:.2f}",
            )
    if mix.hydration is None and mix.cement_kg_m3 <= 0:
        add("mix.hydration", "give hydration parameters when the mix has no portland cement")

    amb = s.ambient
    daily = amb.daily_min_c is not None, amb.daily_max_c is not None
    if any(daily) and not all(daily):
        add(
            "ambient.daily_max_c" if daily[0] else "ambient.daily_min_c",
            "give both daily_min_c and daily_max_c",
        )
    elif all(daily):
        if amb.air_temperature_c is not None:
            add(
                "ambient.air_temperature_c",
                "give either air_temperature_c or daily_min_c and daily_max_c, not both",
            )
        if amb.daily_min_c > amb.daily_max_c:  # type: ignore[operator]
            add("ambient.daily_min_c", "daily_min_c is above daily_max_c")
    elif amb.air_temperature_c is None:
        add("ambient.air_temperature_c", "required (or give daily_min_c and daily_max_c)")
    needed = math.ceil(s.duration_h - 1e-9) + 1
    for name in ("air_temperature_c", "wind_m_s", "solar_w_m2"):
        value = getattr(amb, name)
        if isinstance(value, list) and len(value) < needed:
            add(
                f"ambient.{name}",
                f"{len(value)} hourly values given; duration_h "
                f"{s.duration_h:g} needs {needed} (hour 0 to hour {needed - 1})",
            )

    el = s.element
    dims = [el.thickness_m] if el.shape == "slab" else [el.width_m, el.height_m]
    if el.shape == "block":
        dims.append(el.length_m)
    if s.near_surface_depth_m >= min(dims) / 2:
        add(
            "near_surface_depth_m",
            f"{s.near_surface_depth_m:g} m is not inside the element: it must be less than half "
            f"its smallest dimension ({min(dims):g} m)",
        )
    ids = [sensor.id for sensor in s.sensors]
    for i, sensor in enumerate(s.sensors):
        if ids.count(sensor.id) > 1:
            add(f"sensors.{i}.id", f"sensor id {sensor.id!r} is used more than once")
        height = el.thickness_m if el.shape == "slab" else el.height_m
        if sensor.depth_m > height:
            add(
                f"sensors.{i}.depth_m",
                f"{sensor.depth_m} m is below the bottom of the element ({height} m thick)",
            )
        plan = {"x_m": getattr(el, "width_m", None), "y_m": getattr(el, "length_m", None)}
        for name, size in plan.items():
            offset = getattr(sensor, name)
            if size is None and offset != 0:
                add(
                    f"sensors.{i}.{name}",
                    f"a {el.shape} has no extent along {name[0]}; leave it at 0",
                )
            elif size is not None and abs(offset) > size / 2:
                add(
                    f"sensors.{i}.{name}",
                    f"{offset} m is outside the element (within +-{size / 2:g} m of its centre)",
                )
    for name in ("top", "bottom", "sides", "left", "right", "front", "back"):
        face = getattr(s.faces, name)
        if face is None:
            continue
        if name not in ("top", "bottom") and el.shape == "slab":
            add(f"faces.{name}", "a slab has only top and bottom faces")
        if name in ("front", "back") and el.shape == "section":
            add(f"faces.{name}", "a section has top, bottom, left and right faces (or sides)")
    if s.cracking is not None and s.strength is None:
        add("strength", "the cracking screening needs a strength-maturity relation")
    if s.strength is not None:
        errors.extend(_strength_errors(s))
    if s.ground is not None and s.faces.bottom is not None:
        add("faces.bottom", "with a ground layer the bottom rests on the ground; omit faces.bottom")
    return errors


STRENGTH_COEFFICIENTS = {"exponential": ("tau_h", "beta"), "hyperbolic": ("rate_per_h", "offset_h")}
MIN_LAB_CYLINDERS = 4


def _strength_errors(s: ScenarioIn) -> list[dict[str, str]]:
    strength = s.strength
    assert strength is not None
    if strength.lab is not None:
        if len(strength.lab) < MIN_LAB_CYLINDERS:
            return [
                {
                    "field": "strength.lab",
                    "message": f"at least {MIN_LAB_CYLINDERS} "
                    "cylinders are needed to fit the relation",
                }
            ]
        return []
    needed = ("ultimate_mpa", *STRENGTH_COEFFICIENTS[strength.form])
    return [
        {
            "field": f"strength.{name}",
            "message": f"required for the {strength.form} form (or give lab data)",
        }
        for name in needed
        if getattr(strength, name) is None
    ]
