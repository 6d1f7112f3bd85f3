"""Request schemas (pydantic v2): the forecast scenario as callers send it, in SI units.

Every model forbids unknown fields and rejects NaN and infinity, so a typo or a bad number comes
back as a 422 naming the field instead of being silently ignored. Checks that involve several
fields live in :mod:`service.checks`. Descriptions and examples here are the OpenAPI contract's.
"""

import re
from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, field_validator


def F(description: str, example: Any = None, **constraints: Any) -> Any:  # noqa: N802
    """A pydantic Field with a description (units in it) and one example."""
    examples = None if example is None else [example]
    return Field(description=description, examples=examples, **constraints)


CONTROL_CHARACTERS = re.compile("[\x00-\x1f\x7f-\x9f]")
"""C0 and C1 control characters, DEL among them (tab, CR and LF too)."""
NO_CONTROL_CHARACTERS = "^[^\\u0000-\\u001f\\u007f-\\u009f]*$"
"""The same rule as a JSON Schema pattern, for the contract."""


def no_control_characters(value: str) -> str:
    """``value`` if it holds no control character (see :data:`CONTROL_CHARACTERS`): ids and
    names go into CSV exports, logs and charts, where a CR, LF or tab breaks rows."""
    if CONTROL_CHARACTERS.search(value):
        raise ValueError("control characters (tab, CR, LF, DEL, C0 and C1) are not allowed")
    return value


Label = Annotated[
    str,
    AfterValidator(no_control_characters),
    Field(json_schema_extra={"pattern": NO_CONTROL_CHARACTERS}),
]
"""A sensor id, pour name or variant name: text without control characters."""
RESERVED_VARIANT_NAMES = frozenset({"base"})
"""Names a comparison variant cannot take: ``base`` is the base scenario's row."""

Temperature = Annotated[float, Field(ge=-60, le=120, allow_inf_nan=False)]
NonNegative = Annotated[float, Field(ge=0, allow_inf_nan=False)]
HourlyTemperatures = Annotated[list[Temperature], Field(min_length=1, max_length=20000)]
HourlyNonNegative = Annotated[list[NonNegative], Field(min_length=1, max_length=20000)]


MIN_DIMENSION_M = 0.1
"""Smallest element dimension accepted [m]: thinner members are not mass concrete and their
temperature follows the air within hours (common practice, no source)."""
MIN_GROUND_DEPTH_M = 0.5
"""Shallowest meshed ground layer accepted [m] (common practice, no source): a thinner one
would put the fixed deep-ground temperature right under the element."""


class Strict(BaseModel):
    """Base: unknown fields are errors; NaN and inf are rejected; types are strict: a boolean
    or a string is not a number (lax parsing would read ``true`` as 1.0 and ``"2"`` as 2.0), so
    ``"thickness_m": true`` is a 422 naming the field. Integers are accepted as numbers."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)


class SlabIn(Strict):
    """A slab (mat) modelled through its thickness, per m2 of plan."""

    shape: Literal["slab"] = F("1D slab through the thickness", "slab")
    thickness_m: float = F("Slab thickness [m]", 2.0, ge=MIN_DIMENSION_M, le=20)


class SectionIn(Strict):
    """A rectangular cross-section (wall, long footing), long in the third direction."""

    shape: Literal["section"] = F("2D rectangular section", "section")
    width_m: float = F("Horizontal width of the section [m]", 0.8, ge=MIN_DIMENSION_M, le=50)
    height_m: float = F("Vertical height of the section [m]", 4.0, ge=MIN_DIMENSION_M, le=50)


class BlockIn(Strict):
    """A rectangular block (footing, pier cap, dam lift)."""

    shape: Literal["block"] = F("3D rectangular block", "block")
    length_m: float = F("Plan length (y axis) [m]", 12.0, ge=MIN_DIMENSION_M, le=100)
    width_m: float = F("Plan width (x axis) [m]", 8.0, ge=MIN_DIMENSION_M, le=100)
    height_m: float = F("Vertical height [m]", 3.0, ge=MIN_DIMENSION_M, le=50)


ElementIn = Annotated[SlabIn | SectionIn | BlockIn, Field(discriminator="shape")]


class HydrationIn(Strict):
    """Schindler-Folliard (2005) hydration parameters, e.g. from calorimetry."""

    total_heat_j_kg: float = F(
        "Total heat of hydration Hu per kg of cementitious material [J/kg]", 460000, gt=0, le=7e5
    )
    tau_h: float = F("Hydration time parameter tau [h]", 13.0, gt=0, le=500)
    beta: float = F("Hydration shape parameter beta [-]", 0.9, gt=0, le=5)
    alpha_u: float = F("Ultimate degree of hydration [-]", 0.75, gt=0, le=1)
    activation_energy_j_mol: float = F(
        "Apparent activation energy Ea [J/mol]", 41000, ge=10000, le=100000
    )


class CementIn(Strict):
    """Mill-certificate composition of the portland cement."""

    c3s_pct: float = F("Bogue C3S [% by mass]", 55.0, ge=0, le=100)
    c2s_pct: float = F("Bogue C2S [% by mass]", 18.0, ge=0, le=100)
    c3a_pct: float = F("Bogue C3A [% by mass]", 8.0, gt=0, le=100)
    c4af_pct: float = F("Bogue C4AF [% by mass]", 9.0, gt=0, le=100)
    so3_pct: float = F("SO3 [% by mass]", 3.0, gt=0, le=100)
    free_cao_pct: float = F("Free CaO [% by mass]", 1.0, ge=0, le=100, default=1.0)
    mgo_pct: float = F("MgO [% by mass]", 2.0, ge=0, le=100, default=2.0)
    blaine_m2_kg: float = F("Blaine fineness [m2/kg]", 380.0, ge=150, le=1000)


class MixIn(Strict):
    """Mix proportions per m3 of concrete, hydration and thermal properties."""

    cement_kg_m3: float = F("Portland cement content [kg/m3]", 380, ge=0, le=1500)
    fly_ash_kg_m3: float = F("Fly ash content [kg/m3]", 0, ge=0, le=1500, default=0.0)
    slag_kg_m3: float = F("Slag cement content [kg/m3]", 0, ge=0, le=1500, default=0.0)
    water_kg_m3: float = F("Mixing water [kg/m3]", 160, gt=0, le=500)
    aggregate_kg_m3: float | None = F(
        "Aggregate content [kg/m3]; default: density minus binder and water",
        1850,
        ge=0,
        le=3000,
        default=None,
    )
    hydration: HydrationIn | None = F(
        "Hydration parameters; if absent they are estimated from the mix (Schindler & "
        "Folliard 2005)",
        default=None,
    )
    cement_type: Literal["type_i", "type_ii", "type_iii", "type_iv", "type_v"] = F(
        "ASTM C150 type whose typical composition is used when `cement` is not given",
        "type_i",
        default="type_i",
    )
    cement: CementIn | None = F("Cement composition from the mill certificate", default=None)
    fly_ash_cao_pct: float = F("CaO content of the fly ash [%]", 10.0, ge=0, le=50, default=10.0)
    density_kg_m3: float | None = F(
        "Fixed density [kg/m3]; default: the sum of the mix masses",
        2400,
        ge=1000,
        le=4000,
        default=None,
    )
    specific_heat_j_kgk: float | None = F(
        "Fixed specific heat [J/(kg K)]; default: Van Breugel's model",
        1000,
        ge=400,
        le=2500,
        default=None,
    )
    conductivity_w_mk: float | None = F(
        "Fixed conductivity [W/(m K)]; default: k_uc (1.33 - 0.33 alpha)",
        2.5,
        ge=0.3,
        le=6,
        default=None,
    )
    hardened_conductivity_w_mk: float = F(
        "Conductivity of the hardened concrete k_uc [W/(m K)]", 2.5, ge=0.3, le=6, default=2.5
    )


class PlacementIn(Strict):
    """The placement itself."""

    temperature_c: float = F("Fresh concrete temperature at placement [C]", 20.0, ge=-10, le=60)
    clock_hour: float = F(
        "Hour of day at placement, for daily weather cycles [h]", 8.0, ge=0, lt=24, default=8.0
    )


class AmbientIn(Strict):
    """Weather: constant or hourly values (value i at hour i after placement), or a daily
    minimum and maximum turned into a smooth daily cycle (warmest at 15:00)."""

    air_temperature_c: Temperature | HourlyTemperatures | None = F(
        "Air temperature [C]: a number, or hourly values from placement", 20.0, default=None
    )
    daily_min_c: float | None = F(
        "Daily minimum air temperature [C]", 8.0, ge=-60, le=120, default=None
    )
    daily_max_c: float | None = F(
        "Daily maximum air temperature [C]", 22.0, ge=-60, le=120, default=None
    )
    wind_m_s: Annotated[float, Field(ge=0, le=60)] | HourlyNonNegative = F(
        "Wind speed [m/s]: a number, or hourly values", 2.0, default=2.0
    )
    solar_w_m2: Annotated[float, Field(ge=0, le=1400)] | HourlyNonNegative = F(
        "Global solar irradiance on exposed faces [W/m2]: a number, or hourly values",
        0.0,
        default=0.0,
    )
    solar_peak_w_m2: float | None = F(
        "Noon irradiance of a clear-day half-sine profile, 06:00 to 18:00 [W/m2]",
        700.0,
        ge=0,
        le=1400,
        default=None,
    )


class FaceIn(Strict):
    """Condition of one face; by default bare concrete exposed to the air."""

    adiabatic: bool = F(
        "No heat crosses the face (symmetry or perfect insulation)", False, default=False
    )
    insulation_r_m2k_w: float = F(
        "Insulation blanket resistance R [m2 K/W]", 0.5, ge=0, le=20, default=0.0
    )
    insulation_removal_h: float | None = F(
        "Hour after placement when the insulation comes off [h]", 96.0, gt=0, default=None
    )
    formwork_r_m2k_w: float = F("Formwork resistance R [m2 K/W]", 0.15, ge=0, le=20, default=0.0)
    formwork_removal_h: float | None = F(
        "Hour after placement when the forms come off [h]", 48.0, gt=0, default=None
    )
    film_coefficient_w_m2k: float | None = F(
        "Total surface coefficient replacing wind and radiation [W/(m2 K)]",
        12.0,
        gt=0,
        le=1000,
        default=None,
    )
    solar_absorptivity: float = F(
        "Fraction of solar irradiance absorbed [-]", 0.6, ge=0, le=1, default=0.0
    )
    emissivity: float = F(
        "Long-wave emissivity of the outer face [-]", 0.9, ge=0, le=1, default=0.9
    )


class FacesIn(Strict):
    """Per-face conditions; `sides` applies to every side face not given on its own."""

    top: FaceIn | None = F("Top face", default=None)
    bottom: FaceIn | None = F(
        "Bottom face (omit when a ground layer is given). When neither `bottom` nor `ground` is "
        "given the element rests on a default soil layer; `{}` is a bottom bare to the air, "
        '`{"adiabatic": true}` a symmetry plane or perfect insulation',
        default=None,
    )
    sides: FaceIn | None = F("All side faces of a section or block", default=None)
    left: FaceIn | None = F("Side face at -x (section, block)", default=None)
    right: FaceIn | None = F("Side face at +x (section, block)", default=None)
    front: FaceIn | None = F("Side face at -y (block)", default=None)
    back: FaceIn | None = F("Side face at +y (block)", default=None)


class GroundIn(Strict):
    """Soil or rock under the element, meshed with its own properties."""

    depth_m: float = F(
        "Depth of the meshed layer [m]", 3.0, ge=MIN_GROUND_DEPTH_M, le=50, default=3.0
    )
    conductivity_w_mk: float = F("Conductivity [W/(m K)]", 1.5, gt=0.05, le=10, default=1.5)
    density_kg_m3: float = F("Density [kg/m3]", 1900, ge=500, le=4000, default=1900.0)
    specific_heat_j_kgk: float = F("Specific heat [J/(kg K)]", 900, ge=300, le=4000, default=900.0)
    deep_temperature_c: float | None = F(
        "Fixed temperature at the bottom of the layer [C]; default: the mean air temperature "
        "of the forecast",
        15.0,
        ge=-60,
        le=120,
        default=None,
    )
    initial_temperature_c: float | None = F(
        "Temperature of the layer at placement [C]; default: the deep value",
        12.0,
        ge=-60,
        le=120,
        default=None,
    )
    margin_m: float | None = F(
        "Ground meshed beyond the footprint on each side (2D, 3D) [m]; default: depth_m",
        3.0,
        gt=0,
        le=50,
        default=None,
    )


class SensorIn(Strict):
    """A reporting point inside the concrete."""

    id: Label = F("Sensor label (no control characters)", "S1", min_length=1, max_length=64)
    depth_m: float = F("Depth below the top face [m]", 1.0, ge=0)
    x_m: float = F("Plan offset from the element centre across the width [m]", 0.0, default=0.0)
    y_m: float = F("Plan offset from the element centre along the length [m]", 0.0, default=0.0)


class LimitsIn(Strict):
    """Limits to check: common specification values by default, never a promise; the
    governing specification and the engineer of record set the real ones."""

    max_temperature_c: float = F(
        "Maximum concrete temperature [C]", 70.0, gt=0, le=120, default=70.0
    )
    max_differential_c: float = F(
        "Maximum core-to-surface differential [C]", 19.0, gt=0, le=100, default=19.0
    )


class ResolutionIn(Strict):
    """Numerical settings; omitted values take the shape's defaults."""

    surface_cell_m: float | None = F(
        "Cell size at exposed faces [m]", 0.01, ge=0.002, le=0.2, default=None
    )
    growth: float | None = F(
        "Cell size growth per cell away from faces [-]", 1.2, ge=1.0, le=2.0, default=None
    )
    max_cell_m: float | None = F("Largest cell [m]", 0.1, ge=0.01, le=2.0, default=None)
    max_step_h: float | None = F("Largest time step [h]", 6.0, ge=0.01, le=24.0, default=None)
    error_tolerance_c: float | None = F(
        "Target estimated local time-stepping error per step [C]; smaller is more accurate "
        "and slower",
        0.0005,
        ge=1e-6,
        le=1.0,
        default=None,
    )


class LabCylinderIn(Strict):
    """One lab strength test: age, curing temperature and strength."""

    age_h: float = F("Age at test [h]", 72.0, gt=0, le=20000)
    temperature_c: float = F("Curing temperature [C]", 23.0, ge=-10, le=90)
    strength_mpa: float = F("Compressive strength [MPa]", 24.5, ge=0, le=200)


class StrengthIn(Strict):
    """Strength-maturity relation (ASTM C1074): coefficients, or lab data to fit them to."""

    form: Literal["exponential", "hyperbolic"] = F(
        "exponential: Su exp(-(tau/te)^beta); hyperbolic: Su k(t-t0)/(1+k(t-t0))",
        "exponential",
        default="exponential",
    )
    ultimate_mpa: float | None = F("Limiting strength Su [MPa]", 45.0, gt=0, le=200, default=None)
    tau_h: float | None = F(
        "Exponential form: time constant [h]", 30.0, gt=0, le=5000, default=None
    )
    beta: float | None = F("Exponential form: shape parameter [-]", 0.8, gt=0, le=5, default=None)
    rate_per_h: float | None = F(
        "Hyperbolic form: rate constant k [1/h]", 0.02, gt=0, le=10, default=None
    )
    offset_h: float | None = F(
        "Hyperbolic form: age when strength gain starts t0 [h]", 6.0, ge=0, le=500, default=None
    )
    activation_energy_j_mol: float | None = F(
        "Activation energy of the equivalent age [J/mol]; default: the hydration's",
        41000,
        ge=10000,
        le=100000,
        default=None,
    )
    lab: list[LabCylinderIn] | None = F(
        "Lab cylinders to fit the relation to by least squares (instead of coefficients)",
        max_length=500,
        default=None,
    )
    targets_mpa: list[float] = F(
        "Strengths whose time of attainment is wanted [MPa]",
        [10.0],
        max_length=10,
        default_factory=list,
    )


class CrackingIn(Strict):
    """Settings of the thermal cracking screening (needs `strength`)."""

    thermal_expansion_per_k: float = F(
        "Coefficient of thermal expansion [1/K]", 10e-6, gt=0, le=3e-5, default=10e-6
    )
    internal_restraint: float = F(
        "Restraint of the near-surface layer by the core [-]", 0.42, ge=0, le=1, default=0.42
    )
    external_restraint: float = F(
        "Restraint of the section by its base [-]", 0.5, ge=0, le=1, default=0.5
    )
    relaxation_factor: float = F("Creep (relaxation) factor [-]", 0.65, gt=0, le=1, default=0.65)
    max_index: float = F(
        "Cracking index for the allowable differential [-]", 1.0, gt=0, le=2, default=1.0
    )


class ScenarioIn(Strict):
    """A forecast request."""

    name: str | None = F(
        "Name of the pour or scenario, shown on charts and reports",
        "Mat A, north half",
        min_length=1,
        max_length=120,
        pattern=r"^[^\x00-\x1f\x7f]*$",
        default=None,
    )
    element: ElementIn = F("Geometry of the placement")
    mix: MixIn = F("Mix proportions, hydration and thermal properties")
    placement: PlacementIn = F("Placement temperature and time of day")
    ambient: AmbientIn = F("Weather")
    faces: FacesIn = F(
        "Face conditions; faces not given are bare concrete in the air", default_factory=FacesIn
    )
    ground: GroundIn | None = F(
        "Soil or rock layer under the element; default (when faces.bottom is not given either): "
        "3 m of soil, 1.5 W/(m K), 1900 kg/m3, 900 J/(kg K), at the mean air temperature",
        default=None,
    )
    sensors: list[SensorIn] = F("Points to report", max_length=200, default_factory=list)
    duration_h: float = F("Forecast length [h]", 168.0, gt=0, le=2000, default=168.0)
    output_interval_h: float = F(
        "Spacing of the reported series [h]", 1.0, ge=0.01, le=48, default=1.0
    )
    near_surface_depth_m: float = F(
        "Depth of the near-surface layer inside exposed faces [m]", 0.05, gt=0, le=0.5, default=0.05
    )
    nurse_saul_datum_c: float = F(
        "Datum temperature of the Nurse-Saul factor [C]", 0.0, ge=-20, le=10, default=0.0
    )
    limits: LimitsIn = F("Limits to check", default_factory=LimitsIn)
    resolution: ResolutionIn | None = F(
        "Numerical settings (defaults suit typical pours)", default=None
    )
    strength: StrengthIn | None = F("In-place strength from maturity", default=None)
    cracking: CrackingIn | None = F("Thermal cracking screening (needs strength)", default=None)


class UncertaintyIn(Strict):
    """Spreads of the uncertain inputs for a P10/P50/P90 band (Latin hypercube of whole
    forecasts)."""

    samples: int = F("Number of whole forecasts", 32, ge=8, le=200, default=32)
    seed: int = F("Random seed (same seed, same band)", 1, ge=0, default=1)
    placement_sd_c: float = F(
        "Standard deviation of the placement temperature [C]", 1.0, ge=0, le=10, default=1.0
    )
    air_sd_c: float = F(
        "Standard deviation of the air temperature [C]", 2.0, ge=0, le=15, default=2.0
    )
    total_heat_rel_sd: float = F(
        "Relative standard deviation of Hu [-]", 0.05, ge=0, le=0.5, default=0.05
    )
    tau_rel_sd: float = F(
        "Relative standard deviation of tau [-]", 0.10, ge=0, le=0.5, default=0.10
    )


class UncertainScenarioIn(ScenarioIn):
    """A forecast request, optionally with an uncertainty band."""

    uncertainty: UncertaintyIn | None = F("Ask for a P10/P50/P90 band", default=None)


Control = Literal[
    "max_placement_temperature_c",
    "min_top_insulation_r_m2k_w",
    "earliest_insulation_removal_h",
    "max_thickness_m",
]


class BatchIn(Strict):
    """Constituents of 1 m3 and their temperatures, for the fresh concrete temperature."""

    aggregate_kg_m3: float = F("Dry aggregate [kg/m3]", 1850, gt=0, le=3000)
    aggregate_c: float = F("Aggregate temperature [C]", 30.0, ge=-20, le=70)
    cement_kg_m3: float = F("Cementitious materials [kg/m3]", 380, gt=0, le=1500)
    cement_c: float = F("Cementitious materials temperature [C]", 50.0, ge=-20, le=100)
    water_kg_m3: float = F("Free mixing water including any ice [kg/m3]", 160, gt=0, le=500)
    water_c: float = F("Batch water temperature [C]", 20.0, ge=0, le=90)
    aggregate_moisture_kg_m3: float = F(
        "Free water on the aggregate [kg/m3]", 30, ge=0, le=300, default=0.0
    )


class PlanIn(Strict):
    """A planning request: which controls to solve for, under which limits."""

    scenario: ScenarioIn = F("The base scenario")
    solve_for: list[Control] = F(
        "Controls to solve for", ["max_placement_temperature_c"], min_length=1, max_length=4
    )
    limits: LimitsIn | None = F("Limits; default: the scenario's", default=None)
    precooling: BatchIn | None = F(
        "Batch constituents: also return the ice or chilled water that brings the fresh "
        "concrete to the max placement temperature found",
        default=None,
    )


class ComparisonIn(Strict):
    """A base scenario and named variants, each a partial override of the base."""

    base: dict[str, Any] = F("The base scenario (as for POST /v1/forecasts)")
    variants: dict[Label, dict[str, Any]] = F(
        'Named partial overrides merged into the base, e.g. {"cooler": {"placement": '
        '{"temperature_c": 15}}}; names without control characters, not "base"',
        min_length=1,
        max_length=20,
    )

    @field_validator("variants")
    @classmethod
    def _not_reserved(cls, variants: dict[str, Any]) -> dict[str, Any]:
        reserved = sorted(RESERVED_VARIANT_NAMES.intersection(variants))
        if reserved:
            raise ValueError(
                f"{', '.join(map(repr, reserved))} is reserved for the base scenario's row: "
                "give the variant another name"
            )
        return variants


class PourIn(Strict):
    """A pour to store and monitor (POST /v1/pours)."""

    name: Label = F(
        "Name of the pour (no control characters)",
        "Mat A, north half",
        min_length=1,
        max_length=120,
    )
    placed_at: str = F(
        "Placement time, ISO 8601 with a UTC offset; from 2000-01-01 to 366 days ahead",
        "2026-11-02T07:00:00-05:00",
    )
    scenario: ScenarioIn = F("The planned scenario; its sensors are the loggers' channels")


class ReadingIn(Strict):
    """One logged temperature."""

    time: str = F("ISO 8601 time with a UTC offset", "2026-11-02T13:00:00Z")
    sensor: str = F("A sensor id of the scenario, or 'air' for the air temperature", "S1")
    temperature_c: float = F("Temperature [C]", 31.2, ge=-50, le=100)


class ReadingsIn(Strict):
    """Readings to store (JSON form; CSV with header time,sensor,temperature_c works too)."""

    readings: list[ReadingIn] = F("Readings", min_length=1)
