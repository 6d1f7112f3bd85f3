"""Request schemas (pydantic v2): the forecast scenario as callers send it, in SI units.

Every model forbids unknown fields and rejects NaN and infinity, so a typo or a bad number comes
back as a 422 naming the field instead of being silently ignored. Checks that involve several
fields live in :mod:`service.checks`.
"""

from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field

Positive = Annotated[float, Field(gt=0, allow_inf_nan=False)]
NonNegative = Annotated[float, Field(ge=0, allow_inf_nan=False)]
Temperature = Annotated[float, Field(ge=-60, le=120, allow_inf_nan=False)]
Fraction = Annotated[float, Field(ge=0, le=1, allow_inf_nan=False)]
HourlyTemperatures = Annotated[list[Temperature], Field(min_length=1, max_length=20000)]
HourlyNonNegative = Annotated[list[NonNegative], Field(min_length=1, max_length=20000)]


class Strict(BaseModel):
    """Base: unknown fields are errors; NaN and inf are rejected."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)


class SlabIn(Strict):
    """A slab (mat) modelled through its thickness; 1 m2 of plan."""

    shape: Literal["slab"]
    thickness_m: Annotated[float, Field(gt=0, le=20, allow_inf_nan=False)]


class SectionIn(Strict):
    """A rectangular cross-section (wall, long footing), long in the third direction."""

    shape: Literal["section"]
    width_m: Annotated[float, Field(gt=0, le=50, allow_inf_nan=False)]
    height_m: Annotated[float, Field(gt=0, le=50, allow_inf_nan=False)]


class BlockIn(Strict):
    """A rectangular block (footing, pier cap, dam lift)."""

    shape: Literal["block"]
    length_m: Annotated[float, Field(gt=0, le=100, allow_inf_nan=False)]
    width_m: Annotated[float, Field(gt=0, le=100, allow_inf_nan=False)]
    height_m: Annotated[float, Field(gt=0, le=50, allow_inf_nan=False)]


ElementIn = Annotated[SlabIn | SectionIn | BlockIn, Field(discriminator="shape")]


class HydrationIn(Strict):
    """Schindler-Folliard hydration parameters, e.g. from calorimetry."""

    total_heat_j_kg: Annotated[float, Field(gt=0, le=700000, allow_inf_nan=False)]
    tau_h: Annotated[float, Field(gt=0, le=500, allow_inf_nan=False)]
    beta: Annotated[float, Field(gt=0, le=5, allow_inf_nan=False)]
    alpha_u: Annotated[float, Field(gt=0, le=1, allow_inf_nan=False)]
    activation_energy_j_mol: Annotated[float, Field(ge=10000, le=100000, allow_inf_nan=False)]


class CementIn(Strict):
    """Mill-certificate composition of the portland cement [% by mass], Blaine [m2/kg]."""

    c3s_pct: Annotated[float, Field(ge=0, le=100)]
    c2s_pct: Annotated[float, Field(ge=0, le=100)]
    c3a_pct: Annotated[float, Field(gt=0, le=100)]
    c4af_pct: Annotated[float, Field(gt=0, le=100)]
    so3_pct: Annotated[float, Field(gt=0, le=100)]
    free_cao_pct: Annotated[float, Field(ge=0, le=100)] = 1.0
    mgo_pct: Annotated[float, Field(ge=0, le=100)] = 2.0
    blaine_m2_kg: Annotated[float, Field(ge=150, le=1000)]


class MixIn(Strict):
    """Mix proportions per m3 of concrete, hydration and thermal properties."""

    cement_kg_m3: Annotated[float, Field(ge=0, le=1500, allow_inf_nan=False)]
    fly_ash_kg_m3: Annotated[float, Field(ge=0, le=1500, allow_inf_nan=False)] = 0.0
    slag_kg_m3: Annotated[float, Field(ge=0, le=1500, allow_inf_nan=False)] = 0.0
    water_kg_m3: Annotated[float, Field(gt=0, le=500, allow_inf_nan=False)]
    aggregate_kg_m3: Annotated[float, Field(ge=0, le=3000, allow_inf_nan=False)] | None = None
    hydration: HydrationIn | None = None
    cement_type: Literal["type_i", "type_ii", "type_iii", "type_iv", "type_v"] = "type_i"
    cement: CementIn | None = None
    fly_ash_cao_pct: Annotated[float, Field(ge=0, le=50)] = 10.0
    density_kg_m3: Annotated[float, Field(ge=1000, le=4000, allow_inf_nan=False)] | None = None
    specific_heat_j_kgk: Annotated[float, Field(ge=400, le=2500, allow_inf_nan=False)] | None = None
    conductivity_w_mk: Annotated[float, Field(ge=0.3, le=6, allow_inf_nan=False)] | None = None
    hardened_conductivity_w_mk: Annotated[float, Field(ge=0.3, le=6, allow_inf_nan=False)] = 2.5


class PlacementIn(Strict):
    """The placement itself."""

    temperature_c: Annotated[float, Field(ge=-10, le=60, allow_inf_nan=False)]
    clock_hour: Annotated[float, Field(ge=0, lt=24)] = 8.0


class AmbientIn(Strict):
    """Weather: constant or hourly (value i at hour i after placement), or a daily min/max."""

    air_temperature_c: Temperature | HourlyTemperatures | None = None
    daily_min_c: Temperature | None = None
    daily_max_c: Temperature | None = None
    wind_m_s: Annotated[float, Field(ge=0, le=60)] | HourlyNonNegative = 2.0
    solar_w_m2: Annotated[float, Field(ge=0, le=1400)] | HourlyNonNegative = 0.0
    solar_peak_w_m2: Annotated[float, Field(ge=0, le=1400)] | None = None


class FaceIn(Strict):
    """Condition of one face; by default bare concrete exposed to the air."""

    adiabatic: bool = False
    insulation_r_m2k_w: Annotated[float, Field(ge=0, le=20)] = 0.0
    insulation_removal_h: Annotated[float, Field(gt=0)] | None = None
    formwork_r_m2k_w: Annotated[float, Field(ge=0, le=20)] = 0.0
    formwork_removal_h: Annotated[float, Field(gt=0)] | None = None
    film_coefficient_w_m2k: Annotated[float, Field(gt=0, le=1000)] | None = None
    solar_absorptivity: Fraction = 0.0
    emissivity: Fraction = 0.9


class FacesIn(Strict):
    """Per-face conditions; ``sides`` applies to every side face not given on its own."""

    top: FaceIn | None = None
    bottom: FaceIn | None = None
    sides: FaceIn | None = None
    left: FaceIn | None = None
    right: FaceIn | None = None
    front: FaceIn | None = None
    back: FaceIn | None = None


class GroundIn(Strict):
    """Soil or rock under the element, meshed with its own properties."""

    depth_m: Annotated[float, Field(gt=0, le=50)] = 3.0
    conductivity_w_mk: Annotated[float, Field(gt=0.05, le=10)] = 1.5
    density_kg_m3: Annotated[float, Field(ge=500, le=4000)] = 1900.0
    specific_heat_j_kgk: Annotated[float, Field(ge=300, le=4000)] = 900.0
    deep_temperature_c: Temperature = 15.0
    initial_temperature_c: Temperature | None = None
    margin_m: Annotated[float, Field(gt=0, le=50)] | None = None


class SensorIn(Strict):
    """A reporting point: depth below the top, plan offsets from the element centre [m]."""

    id: Annotated[str, Field(min_length=1, max_length=64)]
    depth_m: NonNegative
    x_m: Annotated[float, Field(allow_inf_nan=False)] = 0.0
    y_m: Annotated[float, Field(allow_inf_nan=False)] = 0.0


class LimitsIn(Strict):
    """Limits to check (common specification values by default, never a promise)."""

    max_temperature_c: Annotated[float, Field(gt=0, le=120)] = 70.0
    max_differential_c: Annotated[float, Field(gt=0, le=100)] = 19.0


class ResolutionIn(Strict):
    """Numerical settings; omitted values take the shape's defaults."""

    surface_cell_m: Annotated[float, Field(ge=0.002, le=0.2)] | None = None
    growth: Annotated[float, Field(ge=1.0, le=2.0)] | None = None
    max_cell_m: Annotated[float, Field(ge=0.01, le=2.0)] | None = None
    max_step_h: Annotated[float, Field(ge=0.01, le=6.0)] | None = None


class ScenarioIn(Strict):
    """A forecast request."""

    element: ElementIn
    mix: MixIn
    placement: PlacementIn
    ambient: AmbientIn
    faces: FacesIn = Field(default_factory=FacesIn)
    ground: GroundIn | None = None
    sensors: Annotated[list[SensorIn], Field(max_length=200)] = Field(default_factory=list)
    duration_h: Annotated[float, Field(gt=0, le=2000, allow_inf_nan=False)] = 168.0
    output_interval_h: Annotated[float, Field(gt=0, le=48, allow_inf_nan=False)] = 1.0
    near_surface_depth_m: Annotated[float, Field(gt=0, le=0.5)] = 0.05
    nurse_saul_datum_c: Annotated[float, Field(ge=-20, le=10)] = 0.0
    limits: LimitsIn = Field(default_factory=LimitsIn)
    resolution: ResolutionIn | None = None
