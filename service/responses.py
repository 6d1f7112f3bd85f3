"""Response schemas (pydantic v2), used for the OpenAPI contract and to check real responses.

The service builds its bodies in :mod:`service.convert`; these models describe them, field by
field, with units. SI names are shown; with ``units=us`` the suffixes change (see the README).
"""

from typing import Any

from pydantic import BaseModel, ConfigDict

from service.schemas import F


class Out(BaseModel):
    """Base: the documented fields are all there is."""

    model_config = ConfigDict(extra="forbid")


class LimitStatusOut(Out):
    """A limit checked against every solver step."""

    limit_c: float = F("The limit checked [C]", 70.0)
    met: bool = F("Whether the forecast stays within the limit", True)
    margin_c: float = F("Limit minus the worst forecast value; negative when exceeded [C]", 3.2)
    first_exceeded_h: float | None = F("First time the limit is exceeded, or null [h]", None)


class LimitsOut(Out):
    """Status of each limit."""

    max_temperature_c: LimitStatusOut = F("Peak temperature limit")
    max_differential_c: LimitStatusOut = F("Differential limit")


class PercentilesOut(Out):
    """Percentiles of a sampled quantity."""

    p10: float = F("10th percentile", 70.1)
    p50: float = F("Median", 72.8)
    p90: float = F("90th percentile", 76.3)


class UncertaintyOut(Out):
    """Band of the forecast over sampled inputs."""

    samples: int = F("Number of whole forecasts run", 32)
    seed: int = F("Random seed", 1)
    method: str = F("Sampling method", "Latin hypercube of whole forecasts")
    spreads: dict[str, float] = F(
        "Standard deviations used (C, or relative)", {"placement_sd_c": 1.0}
    )
    peak_temperature_c: PercentilesOut = F("Peak temperature percentiles [C]")
    max_differential_c: PercentilesOut = F("Maximum differential percentiles [C]")


class StrengthTargetOut(Out):
    """When each location reaches a target strength."""

    target_mpa: float = F("Target compressive strength [MPa]", 10.0)
    reached_h: dict[str, float | None] = F(
        "Hours after placement at which core, surface and each sensor reach it (null: not "
        "within the forecast) [h]",
        {"core": 10.7, "surface": 10.9},
    )


class StrengthSummaryOut(Out):
    """In-place strength from maturity (a screening estimate)."""

    relation: dict[str, Any] = F(
        "The strength-maturity relation used or fitted (MPa, h)",
        {"form": "exponential", "ultimate_mpa": 45.0},
    )
    targets: list[StrengthTargetOut] = F("Time to each target strength")
    final_core_mpa: float = F("Strength at the hottest point at the end [MPa]", 43.4)
    final_surface_mpa: float = F("Strength at the near-surface point at the end [MPa]", 41.8)
    caution: str = F("Screening caution", "Strength and cracking figures are screening ...")


class CrackingSummaryOut(Out):
    """Thermal cracking screening (a screening estimate)."""

    max_index: float = F("Largest (internal + external stress) / tensile strength [-]", 0.8)
    max_index_time_h: float = F("When [h]", 120.0)
    max_internal_stress_mpa: float = F("Largest internal-restraint stress [MPa]", 2.1)
    max_external_stress_mpa: float = F("Largest external-restraint stress [MPa]", 0.9)
    min_allowable_differential_c: float | None = F(
        "Smallest differential that keeps the index at max_index [C]", 31.2
    )
    settings: dict[str, float] = F("Screening settings used", {"internal_restraint": 0.42})
    caution: str = F("Screening caution", "Strength and cracking figures are screening ...")


class SummaryOut(Out):
    """Extremes of the forecast, over every solver step."""

    peak_temperature_c: float = F("Hottest concrete temperature at any time [C]", 66.8)
    peak_time_h: float = F("When the peak occurs [h]", 62.5)
    max_differential_c: float = F("Largest hottest-minus-near-surface difference [C]", 17.9)
    max_differential_time_h: float = F("When the largest differential occurs [h]", 98.0)
    max_spread_c: float = F("Largest hottest-minus-coolest point difference [C]", 19.4)
    max_spread_time_h: float = F("When the largest spread occurs [h]", 98.0)
    min_surface_temperature_c: float = F("Lowest near-surface temperature [C]", 18.5)
    final_core_equivalent_age_h: float = F(
        "Equivalent age at 21.1 C at the hottest point [h]", 420.0
    )
    final_surface_equivalent_age_h: float = F(
        "Equivalent age at 21.1 C at the coolest near-surface point [h]", 250.0
    )
    limits: LimitsOut = F("Each limit: met or not, margin, first time exceeded")
    uncertainty: UncertaintyOut | None = F("P10/P50/P90 band, when asked for", default=None)
    strength: StrengthSummaryOut | None = F("In-place strength, when asked for", default=None)
    cracking: CrackingSummaryOut | None = F("Cracking screening, when asked for", default=None)


class SeriesOut(Out):
    """Time series on the reporting times (all lists have the length of time_h)."""

    time_h: list[float] = F("Hours since placement [h]", [0.0, 1.0, 2.0])
    core_c: list[float] = F("Hottest point of the concrete [C]", [20.0, 20.1, 20.4])
    surface_c: list[float] = F(
        "Near-surface temperature (coolest inset point) [C]", [20.0, 20.0, 20.2]
    )
    differential_c: list[float] = F("core_c minus surface_c [C]", [0.0, 0.1, 0.2])
    coolest_c: list[float] = F("Coolest point of the concrete [C]", [20.0, 19.9, 20.0])
    spread_c: list[float] = F("core_c minus coolest_c [C]", [0.0, 0.2, 0.4])
    air_c: list[float] = F("Air temperature [C]", [20.0, 20.0, 20.0])
    core_equivalent_age_h: list[float] = F(
        "Equivalent age at the hottest point [h]", [0.0, 1.0, 2.0]
    )
    surface_equivalent_age_h: list[float] = F(
        "Equivalent age at the near-surface point [h]", [0.0, 1.0, 2.0]
    )
    core_degree_of_hydration: list[float] = F(
        "Degree of hydration at the hottest point [-]", [0.0, 0.0, 0.002]
    )
    core_nurse_saul_ch: list[float] = F(
        "Nurse-Saul factor at the hottest point [C h]", [0.0, 20.0, 40.2]
    )
    surface_nurse_saul_ch: list[float] = F(
        "Nurse-Saul factor at the near-surface point [C h]", [0.0, 20.0, 40.1]
    )
    faces_c: dict[str, list[float]] = F(
        "Near-surface temperature of each exposed face [C]", {"top": [20.0, 20.0, 20.2]}
    )
    sensors: dict[str, list[float]] = F(
        "Temperature at each requested sensor [C]", {"S1": [20.0, 20.1, 20.3]}
    )
    core_strength_mpa: list[float] | None = F(
        "In-place strength at the hottest point [MPa]", [0.0, 0.0, 0.1], default=None
    )
    surface_strength_mpa: list[float] | None = F(
        "In-place strength near the surface [MPa]", [0.0, 0.0, 0.1], default=None
    )
    sensors_strength_mpa: dict[str, list[float]] | None = F(
        "In-place strength at each sensor [MPa]", {"S1": [0.0, 0.0, 0.1]}, default=None
    )
    cracking_index: list[float | None] | None = F(
        "Cracking index [-]", [0.0, 0.01, 0.02], default=None
    )
    internal_stress_mpa: list[float | None] | None = F(
        "Internal-restraint stress [MPa]", [0.0, 0.0, 0.01], default=None
    )
    external_stress_mpa: list[float | None] | None = F(
        "External-restraint stress [MPa]", [0.0, 0.0, 0.0], default=None
    )
    allowable_differential_c: list[float | None] | None = F(
        "Differential keeping the index at max_index (null before strength) [C]",
        [None, 40.0, 41.0],
        default=None,
    )


class HydrationUsedOut(Out):
    """The hydration parameters the forecast used."""

    origin: str = F("'given' or how they were estimated", "given")
    total_heat_j_kg: float = F("Hu [J/kg of cementitious material]", 460000.0)
    tau_h: float = F("tau [h]", 13.0)
    beta: float = F("beta [-]", 0.9)
    alpha_u: float = F("Ultimate degree of hydration [-]", 0.75)
    activation_energy_j_mol: float = F("Ea [J/mol]", 41000.0)


class NumericsOut(Out):
    """What the solver did."""

    cells: int = F("Number of grid cells", 28)
    steps: int = F("Number of time steps", 497)
    energy_imbalance: float = F("(generated - stored - lost) / generated heat [-]", 2e-7)


class ForecastOut(Out):
    """A forecast."""

    summary: SummaryOut = F("Peak, differential, limits")
    series: SeriesOut = F("Series on the reporting times")
    cautions: list[str] = F(
        "Cautions that go with every forecast", ["Limits come from the governing specification ..."]
    )
    hydration: HydrationUsedOut = F("Hydration parameters used")
    numerics: NumericsOut = F("Solver statistics")


class FieldErrorOut(Out):
    """One invalid field."""

    field: str = F("Dotted path of the field", "element.thickness_m")
    message: str = F("What is wrong", "Input should be greater than 0")


class ProblemOut(Out):
    """RFC 9457 problem details."""

    type: str = F("Problem type URI", "about:blank")
    title: str = F("Short summary", "Invalid scenario")
    status: int = F("HTTP status", 422)
    detail: str = F("Explanation", "1 field(s) are invalid: see errors")
    errors: list[FieldErrorOut] | None = F("Each invalid field", default=None)


class PlanSummaryOut(Out):
    """Forecast summary at a control's value."""

    peak_temperature_c: float = F("Peak temperature [C]", 69.9)
    peak_time_h: float = F("When [h]", 86.5)
    max_differential_c: float = F("Maximum differential [C]", 10.6)
    max_differential_time_h: float = F("When [h]", 194.0)
    max_spread_c: float = F("Maximum hottest-minus-coolest [C]", 11.3)
    max_spread_time_h: float = F("When [h]", 190.5)
    min_surface_temperature_c: float = F("Lowest near-surface temperature [C]", 17.2)
    final_core_equivalent_age_h: float = F("Equivalent age at the hottest point [h]", 2284.0)
    final_surface_equivalent_age_h: float = F("Equivalent age near the surface [h]", 1550.0)


class ControlOut(Out):
    """The answer for one control."""

    value: float | None = F("The control's value (C, m2 K/W, h or m), null if none", 17.26)
    status: str = F(
        "found, met_over_range, missed_over_range, peak_limit_binds or not_applicable", "found"
    )
    tolerance: float | None = F("Resolution of the value (same unit)", 0.25, default=None)
    range: list[float] | None = F("Range searched", [2.0, 40.0], default=None)
    temperature_margin_c: float | None = F(
        "Peak limit minus peak at the value [C]", 0.07, default=None
    )
    differential_margin_c: float | None = F(
        "Differential limit minus maximum at the value [C]", 8.4, default=None
    )
    summary: PlanSummaryOut | None = F("Forecast summary at the value", default=None)
    forecasts_run: int | None = F("Whole forecasts the search took", 7, default=None)
    note: str = F("Plain-language explanation", "most permissive value that meets the limits")


class PrecoolingOut(Out):
    """Fresh concrete temperature and the cooling to reach the target."""

    method: str = F("Formula used", "heat balance of ACI 305R / ACI 207.4R (SI form)")
    fresh_concrete_c: float = F("Fresh concrete temperature of the batch as given [C]", 29.9)
    target_c: float | None = F("Target: the max placement temperature found [C]", 17.3)
    ice_kg_m3: float | None = F(
        "Ice replacing batch water to reach the target [kg/m3]", 52.0, default=None
    )
    chilled_water_c: float | None = F(
        "Batch water temperature reaching the target without ice [C]; null if below 1 C",
        None,
        default=None,
    )
    note: str | None = F("Why a value is missing", default=None)


class PlanOut(Out):
    """Answers of a plan request."""

    limits: dict[str, float] = F(
        "Limits used [C]", {"max_temperature_c": 70.0, "max_differential_c": 19.0}
    )
    controls: dict[str, ControlOut] = F("One answer per control requested")
    cautions: list[str] = F("Cautions that go with every plan", ["Limits come from ..."])
    precooling: PrecoolingOut | None = F("Pre-cooling, when batch data were given", default=None)


class ComparisonRowOut(Out):
    """Summary of one variant."""

    model_config = ConfigDict(extra="allow")

    variant: str = F("Variant name (base first)", "base")
    peak_temperature_c: float = F("Peak temperature [C]", 72.8)
    max_differential_c: float = F("Maximum differential [C]", 11.2)
    max_temperature_c_met: bool = F("Peak limit met", False)
    max_differential_c_met: bool = F("Differential limit met", True)


class ComparisonOut(Out):
    """One row per variant."""

    rows: list[ComparisonRowOut] = F("Rows, the base first")
    cautions: list[str] = F("Cautions", ["Limits come from ..."])


class PourCreatedOut(Out):
    """A stored pour's id."""

    id: str = F("Pour id", "3f9c2a7d81b4")
    name: str = F("Name", "Mat A, north half")
    placed_at: str = F("Placement time, UTC", "2026-11-02T12:00:00Z")


class PourSummaryOut(Out):
    """A stored pour in a list."""

    model_config = ConfigDict(extra="allow")

    id: str = F("Pour id", "3f9c2a7d81b4")
    name: str = F("Name", "Mat A, north half")
    placed_at: str = F("Placement time, UTC", "2026-11-02T12:00:00Z")
    archived: bool = F("Archived (read-only)", False)
    readings_count: int = F("Number of stored readings", 144)
    last_reading_time: str | None = F("Latest reading, UTC", "2026-11-04T12:00:00Z")


class PourListOut(Out):
    """Stored pours, latest placement first."""

    pours: list[PourSummaryOut] = F("Pours")


class RejectedRowOut(Out):
    """A reading that was not stored, and why."""

    row: int = F("0-based row of the upload", 3)
    field: str = F("Offending field", "sensor")
    message: str = F("Why", "unknown sensor 'S9'")


class ConflictRowOut(Out):
    """A reading whose sensor and time are stored already with another value."""

    row: int = F("0-based row of the upload", 7)
    time: str = F("Time, UTC", "2026-11-02T13:00:00Z")
    sensor: str = F("Sensor id", "S1")
    temperature_c: float = F("Value posted [C]", 25.75)
    stored_temperature_c: float = F(
        "Value stored before this upload [C] (replaced by the posted one with replace=true)", 2.0
    )


class ReadingsReportOut(Out):
    """What happened to an upload of readings."""

    accepted: int = F("New readings stored", 140)
    duplicates: int = F("Readings already stored with the same value, not changed", 4)
    conflicts: int = F(
        "Readings already stored (same sensor and time) with another value: left as stored, "
        "or overwritten with replace=true",
        1,
    )
    conflict_rows: list[ConflictRowOut] = F("The conflicting rows (the first 100)")
    replaced: int = F("Stored values overwritten (replace=true)", 0)
    rejected: list[RejectedRowOut] = F("Rows not stored, each with its reason")


class ReadingOut(Out):
    """A stored reading."""

    time: str = F("Time, UTC", "2026-11-02T13:00:00Z")
    sensor: str = F("Sensor id", "S1")
    temperature_c: float = F("Temperature [C]", 31.2)
    hours: float = F("Hours since placement [h]", 1.0)


class ReadingsOut(Out):
    """Stored readings, by time then sensor."""

    readings: list[ReadingOut] = F("Readings")


class PourForecastOut(ForecastOut):
    """A re-forecast of a stored pour, calibrated to its readings."""

    calibration: dict[str, Any] = F(
        "status, fitted values (Hu and tau factors, top conductance factor, placement offset "
        "C), their standard errors, RMS misfit per sensor and overall [C], readings used",
        {"status": "calibrated to the readings so far", "rms_c": 0.18},
    )
    now_h: float = F("Hours since placement of the latest reading [h]", 48.0)
    differential_limit_exceeded_h: float | None = F(
        "When the differential limit is forecast to be exceeded, or null [h]", None
    )
    earliest_insulation_removal_h: float | None = F(
        "Earliest hour the top insulation may come off without exceeding the differential "
        "limit later, or null [h]",
        190.0,
    )


class PourStatusOut(Out):
    """Compact status of a pour for dashboards."""

    id: str = F("Pour id", "3f9c2a7d81b4")
    name: str = F("Name", "Mat A, north half")
    now_h: float = F("Hours since placement of the latest reading [h]", 48.0)
    measured_max_c: float | None = F("Hottest current reading [C]", 61.2)
    measured_differential_c: float | None = F("Hottest minus coolest current reading [C]", 14.1)
    forecast_peak_c: float = F("Forecast peak [C]", 66.0)
    forecast_peak_time_h: float = F("When [h]", 70.0)
    forecast_max_differential_c: float = F("Forecast maximum differential [C]", 18.2)
    limits_met: bool = F("No limit measured or forecast to be exceeded", True)
    limit_measured_exceeded: bool = F("A limit is exceeded by the readings", False)
    limit_forecast_exceeded: bool = F("A limit is forecast to be exceeded", False)
    hours_until_insulation_removal: float | None = F(
        "Hours until the insulation may come off", 140.0
    )
    calibration: str | None = F("Calibration status", "calibrated to the readings so far")
    cautions: list[str] = F("Cautions", ["Limits come from ..."])


class JobProgressOut(Out):
    """How far a job has got."""

    forecasts_done: int = F("Whole forecasts finished", 3)
    forecasts_total: int | None = F(
        "Whole forecasts the job will run; null when a search decides (plans, calibrations)", 5
    )
    simulated_h: float | None = F("Hours simulated of the forecast in hand [h]", 96.5)
    horizon_h: float | None = F("Horizon of the forecast in hand [h]", 168.0)


class JobLinksOut(Out):
    """Where to look."""

    self: str = F("This job", "/v1/jobs/9b1deb4d3b7d4bad9bdd2b0d7b3dcb6d")
    result: str = F(
        "The result in any format of the synchronous call",
        "/v1/jobs/9b1deb4d3b7d4bad9bdd2b0d7b3dcb6d/result",
    )


class JobOut(Out):
    """An asynchronous job (a compute request sent with Prefer: respond-async)."""

    id: str = F("Job id", "9b1deb4d3b7d4bad9bdd2b0d7b3dcb6d")
    kind: str = F("forecast, plan, comparison or pour_forecast", "plan")
    state: str = F("queued, running, done, failed or cancelled", "running")
    progress: JobProgressOut = F("Progress")
    created_at: str = F("When it was queued, UTC", "2026-11-02T13:00:00Z")
    started_at: str | None = F("When its (last) run started, UTC", "2026-11-02T13:00:01Z")
    finished_at: str | None = F("When it ended, UTC", None)
    queued_s: float | None = F("Seconds it waited in the queue [s]", 1.0)
    run_s: float | None = F("Seconds it has run, or ran [s]", 12.5)
    attempts: int = F("Times it was started (more than 1 if a runner died)", 1)
    expires_at: str | None = F("When its result is dropped, UTC (set when it ends)", None)
    links: JobLinksOut = F("Links")
    error: ProblemOut | None = F("When failed: the problem details of the call", default=None)
    result_expired: bool | None = F("When done: whether the result has expired", default=None)
    result: dict[str, Any] | None = F(
        "When done: the JSON body the synchronous call would have given", default=None
    )
