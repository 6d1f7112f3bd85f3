"""Response schemas (pydantic v2), used for the OpenAPI contract and to check real responses.

The service builds its bodies in :mod:`service.convert`; these models describe them, field by
field, with units. SI names are shown; with ``units=us`` the suffixes change (see the README).
"""

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict

from service.schemas import F


class Out(BaseModel):
    """Base: the documented fields are all there is."""

    model_config = ConfigDict(extra="forbid")


class LimitStatusOut(Out):
    """A limit checked against every solver step."""

    limit_c: float = F("The limit checked [C]", 70.0)
    met: bool | None = F(
        "true: met; false: exceeded; null: not settled within the forecast (verdict "
        "unsettled), never true then, so treat it as not met",
        True,
    )
    verdict: Literal["met", "exceeded", "unsettled"] = F(
        "met; exceeded; unsettled: not above the limit within the forecast, but its maximum is "
        "within the last 24 h and still rising at the end, or (differential) insulation or "
        "forms come off within the last 48 h: extend duration_h",
        "met",
    )
    margin_c: float = F("Limit minus the worst forecast value; negative when exceeded [C]", 3.2)
    first_exceeded_h: float | None = F("First time the limit is exceeded, or null [h]", None)
    unsettled_reason: str | None = F(
        "Why the verdict is unsettled (present only then)", None, default=None
    )


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
    band_content_sd: float = F(
        "Standard deviation of the probability the P10-P90 band holds (nominally 0.8), from "
        "order statistics of this many independent samples [-]",
        0.0686,
    )
    min_stable_samples: int = F(
        "Fewest samples whose band content varies by at most 0.05 (the README explains)", 62
    )
    enough_samples: bool = F(
        "Whether samples reaches min_stable_samples; if not, a caution says so", False
    )
    seed: int = F("Random seed", 1)
    method: str = F(
        "Sampling method and percentile rule",
        "Latin hypercube of whole forecasts; percentiles at rank p n + 1/2 (Hazen)",
    )
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
        "Equivalent age at 21.1 C of the most mature point of the concrete, at the end [h]", 420.0
    )
    final_surface_equivalent_age_h: float = F(
        "Equivalent age at 21.1 C of the least mature near-surface point, at the end [h]", 250.0
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
        "Equivalent age at 21.1 C of the most mature point of the concrete (greatest over its "
        "points; never decreases) [h]",
        [0.0, 1.0, 2.0],
    )
    surface_equivalent_age_h: list[float] = F(
        "Equivalent age at 21.1 C of the least mature point of the near-surface layer of every "
        "exposed face (least over fixed points; never decreases) [h]",
        [0.0, 1.0, 2.0],
    )
    core_degree_of_hydration: list[float] = F(
        "Degree of hydration of the most mature point of the concrete [-]", [0.0, 0.0, 0.002]
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
    faces_equivalent_age_h: dict[str, list[float]] = F(
        "Equivalent age at 21.1 C of each exposed face: the least over the points of its "
        "near-surface layer (never decreases) [h]",
        {"top": [0.0, 1.0, 2.0]},
    )
    sensors_equivalent_age_h: dict[str, list[float]] = F(
        "Equivalent age at 21.1 C at each requested sensor [h]", {"S1": [0.0, 1.0, 2.0]}
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


class AssumptionOut(Out):
    """A default the forecast applied because the request left the field out."""

    field: str = F("Dotted request path left out", "ground")
    value: str | float | dict[str, Any] = F(
        "What was used instead: a number, a name, or an object whose keys carry units",
        {"depth_m": 3.0, "deep_temperature_c": 18.0},
    )
    note: str = F("Why and from where", "neither ground nor faces.bottom given: ...")


class ForecastOut(Out):
    """A forecast."""

    summary: SummaryOut = F("Peak, differential, limits")
    series: SeriesOut = F("Series on the reporting times")
    cautions: list[str] = F(
        "Cautions that go with every forecast", ["Limits come from the governing specification ..."]
    )
    hydration: HydrationUsedOut = F("Hydration parameters used")
    assumptions: list[AssumptionOut] = F(
        "Every default applied on the caller's behalf (ground, faces, limits, mix models, "
        "near-surface depth, resolution ...)"
    )
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
    errors: list[FieldErrorOut] | None = F(
        "Each invalid field (the first 100; errors_count says how many in all)", default=None
    )
    errors_count: int | None = F("How many errors there were in all", 1, default=None)


class PlanSummaryOut(Out):
    """Forecast summary at a control's value."""

    peak_temperature_c: float = F("Peak temperature [C]", 69.9)
    peak_time_h: float = F("When [h]", 86.5)
    max_differential_c: float = F("Maximum differential [C]", 10.6)
    max_differential_time_h: float = F("When [h]", 194.0)
    max_spread_c: float = F("Maximum hottest-minus-coolest [C]", 11.3)
    max_spread_time_h: float = F("When [h]", 190.5)
    min_surface_temperature_c: float = F("Lowest near-surface temperature [C]", 17.2)
    final_core_equivalent_age_h: float = F(
        "Equivalent age of the most mature point, at the end [h]", 2284.0
    )
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
    forecasts_run: int | None = F(
        "Whole forecasts the search took, on the scenario's grid and on the coarse grid",
        7,
        default=None,
    )
    coarse_forecasts_run: int | None = F(
        "How many of them ran on a grid twice as coarse in space and time, to locate the "
        "answer before it is checked on the scenario's own grid (sections and blocks; 0 for "
        "slabs)",
        0,
        default=None,
    )
    note: str = F("Plain-language explanation", "most permissive value that meets the limits")
    unsettled: str | None = F(
        "Why a limit is not settled within the forecast at the value shown (it then counts as "
        "not met: extend duration_h), or null",
        None,
        default=None,
    )


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
    max_temperature_c_met: bool | None = F(
        "Peak limit met (null: not settled within the forecast, not met)", False
    )
    max_differential_c_met: bool | None = F(
        "Differential limit met (null: not settled within the forecast, not met)", True
    )
    max_temperature_c_verdict: str = F("Peak limit: met, exceeded or unsettled", "exceeded")
    max_differential_c_verdict: str = F("Differential limit: met, exceeded or unsettled", "met")


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
    rejected: list[RejectedRowOut] = F(
        "Rows not stored, each with its reason (the first 100; rejected_count says how many)"
    )
    rejected_count: int = F("How many rows were rejected in all", 0)


class ReadingOut(Out):
    """A stored reading."""

    time: str = F("Time, UTC", "2026-11-02T13:00:00Z")
    sensor: str = F("Sensor id", "S1")
    temperature_c: float = F("Temperature [C]", 31.2)
    hours: float = F("Hours since placement [h]", 1.0)


class ReadingsOut(Out):
    """Stored readings, by time then sensor."""

    readings: list[ReadingOut] = F("Readings")


class SuspectSensorOut(Out):
    """A sensor whose readings the calibration left out, in whole or in part."""

    sensor: str = F("Sensor id", "S2")
    reason: str = F(
        "stuck (a flat run while the forecast moves), offset (the misfit is mostly a constant "
        "shift) or outlier misfit (its RMS misfit stands out from the other sensors')",
        "offset",
    )
    readings_excluded: int = F("Its readings left out of the fit", 48)
    rms_misfit_c: float = F(
        "RMS of measured minus calibrated forecast over those readings [C]", 2.02
    )
    median_error_c: float = F(
        "Median of measured minus calibrated forecast over those readings [C]", 2.0
    )
    detail: str = F("One sentence for people", "reads +2.00 C from the calibrated forecast")


class PourForecastOut(ForecastOut):
    """A re-forecast of a stored pour, calibrated to its readings."""

    calibration: dict[str, Any] = F(
        "status, fitted values (Hu and tau factors, top and, for sections and blocks, side "
        "conductance factors, placement offset C), their standard errors, RMS misfit per "
        "sensor and overall [C], readings used, suspect_sensors (see SuspectSensorOut: "
        "stuck, offset or outlier sensors left out of the fit), the robust loss and its scale "
        "[C], forecasts run",
        {"status": "calibrated to the readings so far", "rms_c": 0.18, "suspect_sensors": []},
    )
    now_h: float = F("Hours since placement, now (at the request) [h]", 50.5)
    latest_reading_h: float | None = F(
        "Hours since placement of the latest reading, or null when there is none [h]", 48.0
    )
    differential_limit_exceeded_h: float | None = F(
        "When the differential limit is forecast to be exceeded, or null [h]", None
    )
    earliest_insulation_removal_h: float | None = F(
        "Earliest hour the top insulation may come off without exceeding the differential "
        "limit later, or null [h]",
        190.0,
    )


class PlannedRemovalOut(Out):
    """A removal of insulation or forms that the scenario plans."""

    face: str = F("Face", "top")
    what: Literal["insulation", "formwork"] = F("What comes off", "insulation")
    at_h: float = F("Hour after placement [h]", 168.0)


class PourStatusOut(Out):
    """Compact status of a pour for dashboards."""

    id: str = F("Pour id", "3f9c2a7d81b4")
    name: str = F("Name", "Mat A, north half")
    now_h: float = F("Hours since placement, now (at the request) [h]", 50.5)
    latest_reading_h: float | None = F(
        "Hours since placement of the newest concrete reading, or null [h]", 48.0
    )
    latest_reading_age_h: float | None = F(
        "How old the newest concrete reading is, or null when there is none [h]", 2.5
    )
    readings_stale: bool = F(
        "The newest concrete reading is older than 2 h (or there is none 2 h after "
        "placement): check the data logger",
        True,
    )
    measured_max_c: float | None = F("Hottest current reading [C]", 61.2)
    measured_differential_c: float | None = F("Hottest minus coolest current reading [C]", 14.1)
    forecast_peak_c: float = F("Forecast peak [C]", 66.0)
    forecast_peak_time_h: float = F("When [h]", 70.0)
    forecast_max_differential_c: float = F("Forecast maximum differential [C]", 18.2)
    limits_met: bool = F(
        "No limit measured or forecast to be exceeded, and none unsettled in the forecast", True
    )
    limit_measured_exceeded: bool = F("A limit is exceeded by the current readings", False)
    limit_forecast_exceeded: bool = F("A limit is forecast to be exceeded", False)
    limits_measured_exceeded: list[str] = F(
        "The limits the current readings exceed", ["max_differential_c"]
    )
    limits_forecast_exceeded: list[str] = F("The limits forecast to be exceeded", [])
    limits_forecast_unsettled: list[str] = F(
        "The limits not settled within the forecast (counted as not met)", []
    )
    planned_removals: list[PlannedRemovalOut] = F(
        "Insulation and form removals the pour's scenario plans, by time"
    )
    earliest_insulation_removal_h: float | None = F(
        "Earliest hour the top insulation may come off without exceeding a limit later (from "
        "the forecast), or null [h]",
        150.0,
    )
    hours_until_insulation_removal: float | None = F(
        "Hours from now until earliest_insulation_removal_h, or null", 99.5
    )
    calibration: str | None = F("Calibration status", "calibrated to the readings so far")
    suspect_sensors: list[SuspectSensorOut] = F(
        "Sensors the calibration left out (stuck, offset or outlier misfit); their readings "
        "still count in the measured values above"
    )
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
