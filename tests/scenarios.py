"""Scenario builders shared by the model tests (invented, demo-style inputs)."""

from model.ambient import Ambient
from model.hydration import HydrationParameters
from model.properties import MixMasses
from model.scenario import Concrete, Element, Face, Ground, Resolution, Scenario, Sensor

DENSITY, SPECIFIC_HEAT, CONDUCTIVITY = 2400.0, 1000.0, 2.5
DIFFUSIVITY = CONDUCTIVITY / (DENSITY * SPECIFIC_HEAT)
CONTRACT_HYDRATION = HydrationParameters(460000.0, 13.0, 0.9, 0.75, 41000.0)
NO_HEAT = HydrationParameters(0.0, 13.0, 0.9, 0.75, 41000.0)


def concrete(
    hydration: HydrationParameters = CONTRACT_HYDRATION, constant: bool = True
) -> Concrete:
    """The DESIGN.md example concrete (380 kg/m3 binder); fixed properties unless ``constant``
    is False (then hydration-dependent conductivity and Van Breugel specific heat)."""
    masses = MixMasses(380.0, 1860.0, 160.0)
    if not constant:
        return Concrete(380.0, hydration, masses, hardened_conductivity_w_mk=CONDUCTIVITY)
    return Concrete(
        380.0,
        hydration,
        masses,
        density_kg_m3=DENSITY,
        specific_heat_j_kgk=SPECIFIC_HEAT,
        conductivity_w_mk=CONDUCTIVITY,
    )


def slab(thickness_m: float, faces: dict[str, Face], **kwargs) -> Scenario:
    """A slab scenario with the example concrete in still 20 C air unless overridden."""
    kwargs.setdefault("concrete", concrete())
    kwargs.setdefault("ambient", Ambient(air_c=20.0, wind_m_s=2.0))
    return Scenario(element=Element("slab", thickness_m), faces=faces, **kwargs)


def depth_sensors(depths_m: list[float], x_m: float = 0.0, y_m: float = 0.0) -> tuple[Sensor, ...]:
    """Sensors at the given depths below the top."""
    return tuple(Sensor(f"d{i}", d, x_m, y_m) for i, d in enumerate(depths_m))


def uniform(cell_m: float, step_h: float) -> Resolution:
    """A uniform grid with fixed time steps (for order-of-convergence studies)."""
    return Resolution(
        surface_cell_m=cell_m,
        growth=1.0,
        max_cell_m=cell_m,
        max_step_h=step_h,
        first_step_h=step_h,
        alpha_change=1e9,
        temperature_change_c=1e9,
        error_tolerance_c=1e9,
    )


def footing_on_ground(duration_h: float = 336.0, resolution: Resolution | None = None) -> Scenario:
    """The case of tests/reference/mol_section.py: a 4 m wide, 3 m tall footing section on a
    3 m ground layer, insulated top, formed sides, daily air cycle 8-22 C with 3 m/s wind, with
    sensors 50 mm under the top on the centre line and 50 mm inside the side at mid-height."""
    return Scenario(
        element=Element("section", 3.0, width_m=4.0),
        concrete=concrete(),
        ambient=Ambient(daily_min_c=8.0, daily_max_c=22.0, wind_m_s=3.0),
        faces={
            "top": Face(insulation_r_m2k_w=0.5),
            "left": Face(formwork_r_m2k_w=0.15),
            "right": Face(formwork_r_m2k_w=0.15),
        },
        ground=Ground(depth_m=3.0, deep_temperature_c=12.0),
        placement_c=18.0,
        duration_h=duration_h,
        sensors=(Sensor("top", 0.05, 0.0), Sensor("side", 1.5, 1.95)),
        resolution=resolution,
    )
