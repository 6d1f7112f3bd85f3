"""Printable report of a forecast: a few A4 pages to attach to a thermal control plan.

Page 1 and on: the summary against the limits, the inputs (element, mix and hydration
parameters with their origin, thermal properties, placement, weather, faces with removal times,
ground, sensors), strength and cracking screening where asked, the calibration of a stored
pour, the assumptions and defaults applied, and the cautions. Then the chart (drawn by
:mod:`service.charts` at A4 width). Made with matplotlib's PDF backend (``PdfPages``), text
embedded as TrueType so that it can be selected, searched and read by ``pdftotext``. Figures
are in SI units (degrees Celsius, metres, hours since placement).
"""

import io
import textwrap
from datetime import UTC, datetime
from typing import Any

from matplotlib.backends.backend_pdf import FigureCanvasPdf, PdfPages
from matplotlib.figure import Figure

from service.charts import ChartOptions, chart_figure, hours_text, rendering, when_text
from service.schemas import FaceIn, ScenarioIn

PAGE_IN = (8.27, 11.69)
"""A4 portrait [inch]."""
MARGIN_IN = 0.8
LINE_IN = {"title": 0.36, "heading": 0.32, "text": 0.19}
FONT_PT = {"title": 15.0, "heading": 11.5, "text": 9.0}
WRAP_CHARS = 100
"""Characters per line of body text at 9 pt across the A4 text width."""


class _Pages:
    """Lines of text laid down A4 pages, a new page when one is full."""

    def __init__(self, pdf: PdfPages, footer: str) -> None:
        self.pdf, self.footer, self.figure, self.y = pdf, footer, None, 0.0
        self.page = 0

    def _new_page(self) -> Figure:
        self.close()
        self.page += 1
        self.figure = Figure(figsize=PAGE_IN)
        self.figure.text(
            MARGIN_IN / PAGE_IN[0],
            0.45 / PAGE_IN[1],
            f"{self.footer}    page {self.page}",
            fontsize=7.5,
            color="#444444",
        )
        self.y = PAGE_IN[1] - MARGIN_IN
        return self.figure

    def line(self, text: str, kind: str = "text", indent_in: float = 0.0) -> None:
        """One line (wrapped if long) of ``kind`` title, heading or text."""
        width = WRAP_CHARS - round(indent_in * 12)
        lines = textwrap.wrap(text, width, subsequent_indent="   ") or [""]
        for piece in lines:
            need = LINE_IN[kind] + (0.12 if kind == "heading" else 0.0)
            if self.figure is None or self.y - need < MARGIN_IN:
                self._new_page()
            assert self.figure is not None
            self.y -= need
            self.figure.text(
                (MARGIN_IN + indent_in) / PAGE_IN[0],
                self.y / PAGE_IN[1],
                piece,
                fontsize=FONT_PT[kind],
                fontweight="bold" if kind != "text" else "normal",
            )

    def items(self, rows: list[tuple[str, str]]) -> None:
        """``label: value`` lines."""
        for label, value in rows:
            self.line(f"{label}: {value}", indent_in=0.15)

    def close(self) -> None:
        if self.figure is not None:
            self.pdf.savefig(self.figure)
            self.figure = None


def _num(value: Any, unit: str = "") -> str:
    if value is None:
        return "-"
    if isinstance(value, bool) or not isinstance(value, int | float):
        return f"{value}{unit}"
    return f"{value:.4g}{unit}" if abs(value) < 1e4 else f"{value:.0f}{unit}"


def _limit_rows(body: dict[str, Any], placed_at: datetime | None) -> list[tuple[str, str]]:
    summary = body["summary"]
    limits = summary["limits"]
    rows = []
    for key, name, value, when in (
        ("max_temperature_c", "Peak temperature", "peak_temperature_c", "peak_time_h"),
        ("max_differential_c", "Max differential", "max_differential_c", "max_differential_time_h"),
    ):
        group = limits[key]
        verdict = "met" if group["met"] else "EXCEEDED"
        text = (
            f"{summary[value]:.1f} °C at {when_text(summary[when], placed_at)}; limit "
            f"{group['limit_c']:g} °C {verdict}, margin {group['margin_c']:+.1f} °C"
        )
        if group.get("first_exceeded_h") is not None:
            text += f", exceeded from {when_text(group['first_exceeded_h'], placed_at)}"
        rows.append((name, text))
    rows.append(
        ("Lowest near-surface temperature", f"{summary['min_surface_temperature_c']:.1f} °C")
    )
    rows.append(
        (
            "Max spread (hottest minus coolest point)",
            f"{summary['max_spread_c']:.1f} °C at {hours_text(summary['max_spread_time_h'])}",
        )
    )
    if "uncertainty" in summary:
        rows.append(("Uncertainty band", "see the JSON response (summary.uncertainty)"))
    return rows


def _element_rows(scenario: ScenarioIn) -> list[tuple[str, str]]:
    el = scenario.element
    dims = {
        "slab": lambda: f"slab {el.thickness_m:g} m thick (1D, per m2 of plan)",
        "section": lambda: f"section {el.width_m:g} m wide x {el.height_m:g} m high (2D)",
        "block": lambda: (
            f"block {el.length_m:g} m x {el.width_m:g} m x {el.height_m:g} m high (3D)"
        ),
    }
    rows = [("Element", dims[el.shape]())]
    if scenario.ground is not None:
        g = scenario.ground
        rows.append(
            (
                "Ground",
                f"{g.depth_m:g} m meshed, k {g.conductivity_w_mk:g} W/(m K), "
                f"{g.density_kg_m3:g} kg/m3, c {g.specific_heat_j_kgk:g} J/(kg K), deep "
                f"{g.deep_temperature_c:g} °C",
            )
        )
    return rows


def _mix_rows(scenario: ScenarioIn, body: dict[str, Any]) -> list[tuple[str, str]]:
    mix = scenario.mix
    binder = mix.cement_kg_m3 + mix.fly_ash_kg_m3 + mix.slag_kg_m3
    rows = [
        (
            "Mix",
            f"cement {mix.cement_kg_m3:g}, fly ash {mix.fly_ash_kg_m3:g}, slag "
            f"{mix.slag_kg_m3:g}, water {mix.water_kg_m3:g} kg/m3 (w/cm "
            f"{mix.water_kg_m3 / binder:.2f})"
            if binder
            else "no cementitious material",
        )
    ]
    if mix.aggregate_kg_m3 is not None:
        rows.append(("Aggregate", f"{mix.aggregate_kg_m3:g} kg/m3"))
    hydration = body.get("hydration") or {}
    origin = hydration.get("origin", "given" if mix.hydration is not None else "estimated")
    rows.append(
        (
            "Hydration (Schindler & Folliard 2005)",
            f"Hu {_num(hydration.get('total_heat_j_kg'))} J/kg, tau "
            f"{_num(hydration.get('tau_h'))} h, beta {_num(hydration.get('beta'))}, alpha_u "
            f"{_num(hydration.get('alpha_u'))}, Ea {_num(hydration.get('activation_energy_j_mol'))}"
            f" J/mol; origin: {origin}",
        )
    )
    rows.append(
        (
            "Thermal properties",
            ", ".join(
                [
                    f"density {mix.density_kg_m3:g} kg/m3 (given, constant)"
                    if mix.density_kg_m3
                    else "density from the mix masses",
                    f"specific heat {mix.specific_heat_j_kgk:g} J/(kg K) (given, constant)"
                    if mix.specific_heat_j_kgk
                    else "specific heat by Van Breugel's model",
                    f"conductivity {mix.conductivity_w_mk:g} W/(m K) (given, constant)"
                    if mix.conductivity_w_mk
                    else f"conductivity {mix.hardened_conductivity_w_mk:g} W/(m K) x "
                    "(1.33 - 0.33 alpha)",
                ]
            ),
        )
    )
    return rows


def _weather_rows(scenario: ScenarioIn) -> list[tuple[str, str]]:
    amb = scenario.ambient
    if isinstance(amb.air_temperature_c, list):
        values = amb.air_temperature_c
        air = f"hourly, {len(values)} values, {min(values):g} to {max(values):g} °C"
    elif amb.air_temperature_c is not None:
        air = f"{amb.air_temperature_c:g} °C"
    else:
        air = f"daily cycle {amb.daily_min_c:g} to {amb.daily_max_c:g} °C (warmest at 15:00)"
    wind = amb.wind_m_s
    wind_text = f"hourly, up to {max(wind):g} m/s" if isinstance(wind, list) else f"{wind:g} m/s"
    sun = "none"
    if amb.solar_peak_w_m2 is not None:
        sun = f"clear-day profile, noon {amb.solar_peak_w_m2:g} W/m2"
    elif isinstance(amb.solar_w_m2, list) or amb.solar_w_m2:
        sun = "hourly" if isinstance(amb.solar_w_m2, list) else f"{amb.solar_w_m2:g} W/m2"
    return [
        (
            "Placement",
            f"{scenario.placement.temperature_c:g} °C at {scenario.placement.clock_hour:g} h "
            "of the day",
        ),
        ("Air", air),
        ("Wind", wind_text),
        ("Sun", sun),
    ]


def _face_text(face: FaceIn) -> str:
    if face.adiabatic:
        return "adiabatic (symmetry or perfect insulation)"
    parts = []
    if face.insulation_r_m2k_w:
        off = face.insulation_removal_h
        parts.append(
            f"insulation R {face.insulation_r_m2k_w:g} m2K/W"
            + (f", off at {hours_text(off)}" if off else ", kept on")
        )
    if face.formwork_r_m2k_w:
        off = face.formwork_removal_h
        parts.append(
            f"forms R {face.formwork_r_m2k_w:g} m2K/W"
            + (f", stripped at {hours_text(off)}" if off else ", kept on")
        )
    if face.film_coefficient_w_m2k:
        parts.append(f"surface coefficient {face.film_coefficient_w_m2k:g} W/(m2 K)")
    if face.solar_absorptivity:
        parts.append(f"solar absorptivity {face.solar_absorptivity:g}")
    return "; ".join(parts) or "bare concrete in the air"


def _face_rows(scenario: ScenarioIn) -> list[tuple[str, str]]:
    rows = []
    for name in ("top", "bottom", "sides", "left", "right", "front", "back"):
        face = getattr(scenario.faces, name)
        if face is not None:
            rows.append((f"Face {name}", _face_text(face)))
    if not rows:
        rows.append(("Faces", "all bare concrete in the air"))
    return rows


def _screening_rows(summary: dict[str, Any]) -> list[tuple[str, str]]:
    rows = []
    strength = summary.get("strength")
    if strength:
        relation = strength.get("relation", "-")
        if isinstance(relation, dict):
            relation = ", ".join(f"{k} {_num(v)}" for k, v in relation.items())
        rows.append(("Strength relation", str(relation)))
        for target in strength.get("targets", []):
            reached = target.get("reached_h") or {}
            rows.append(
                (
                    f"Target {target.get('target_mpa'):g} MPa reached",
                    ", ".join(
                        f"{where} {'not reached' if h is None else hours_text(h)}"
                        for where, h in reached.items()
                    ),
                )
            )
        rows.append(
            (
                "Final strength",
                f"core {strength.get('final_core_mpa')} MPa, near surface "
                f"{strength.get('final_surface_mpa')} MPa",
            )
        )
    cracking = summary.get("cracking")
    if cracking:
        rows.append(
            (
                "Cracking index",
                f"max {_num(cracking.get('max_index'))} at "
                f"{hours_text(cracking.get('max_index_time_h') or 0.0)}; limit "
                f"{_num((cracking.get('settings') or {}).get('max_index', 1.0))}",
            )
        )
    return rows


def _assumption_text(item: Any) -> str:
    """An entry of the forecast's ``assumptions`` list, whatever its shape, as one line."""
    if isinstance(item, dict):
        field = item.get("field") or item.get("name") or ""
        value = item.get("value", item.get("default"))
        why = item.get("reason") or item.get("why") or item.get("note") or item.get("source")
        text = f"{field}: {value}" if field else ", ".join(f"{k} {v}" for k, v in item.items())
        return f"{text} ({why})" if why and field else text
    return str(item)


def render_report(
    scenario: ScenarioIn,
    body: dict[str, Any],
    measured: dict[str, list[tuple[float, float]]] | None = None,
    options: ChartOptions | None = None,
    pour: dict[str, Any] | None = None,
) -> bytes:
    """The PDF report of a forecast ``body`` (SI) of ``scenario``; for a stored pour pass
    ``pour`` (its name, id and placement) and ``measured`` points."""
    options = options or ChartOptions()
    name = options.title or scenario.name or "Unnamed scenario"
    generated = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    out = io.BytesIO()
    with rendering(), PdfPages(out) as pdf:
        info = pdf.infodict()
        info.update(
            {"Title": f"Thermal forecast: {name}", "Subject": "Concrete temperature forecast"}
        )
        info["Creator"] = "pourheat"
        pages = _Pages(pdf, f"pourheat thermal forecast: {name}; generated {generated}")
        pages.line(f"Thermal forecast: {name}", "title")
        if pour is not None:
            pages.line(
                f"Stored pour {pour['id']}, placed {options.placed_at or pour['placed_at']}"
                + (
                    f"; readings to {when_text(options.now_h, options.placed_at)}"
                    if options.now_h is not None
                    else ""
                )
            )
        pages.line(f"Generated {generated}. SI units; times in hours since placement.")
        pages.line("Summary against the limits", "heading")
        pages.items(_limit_rows(body, options.placed_at))
        calibration = body.get("calibration")
        if calibration:
            pages.line("Calibration to the readings", "heading")
            rows = [("Status", str(calibration.get("status")))]
            for key in ("values", "standard_errors", "rms_by_sensor_c"):
                if calibration.get(key):
                    rows.append((key.replace("_", " "), str(calibration[key])))
            if calibration.get("rms_c") is not None:
                rows.append(("RMS fit error", f"{calibration['rms_c']} °C"))
            pages.items(rows)
        pages.line("Inputs", "heading")
        pages.items(_element_rows(scenario))
        pages.items(_mix_rows(scenario, body))
        pages.items(_weather_rows(scenario))
        pages.items(_face_rows(scenario))
        if scenario.sensors:
            pages.items(
                [
                    (
                        "Sensors",
                        "; ".join(f"{s.id} at depth {s.depth_m:g} m" for s in scenario.sensors),
                    )
                ]
            )
        pages.items(
            [
                (
                    "Forecast",
                    f"{hours_text(body['series']['time_h'][-1])}, reported every "
                    f"{hours_text(scenario.output_interval_h)}; near-surface layer "
                    f"{scenario.near_surface_depth_m * 1000:g} mm inside exposed faces",
                ),
                (
                    "Limits",
                    f"max temperature {scenario.limits.max_temperature_c:g} °C, max "
                    f"differential {scenario.limits.max_differential_c:g} °C",
                ),
            ]
        )
        screening = _screening_rows(body["summary"])
        if screening:
            pages.line("Strength and cracking screening", "heading")
            pages.items(screening)
        assumptions = body.get("assumptions") or []
        pages.line("Assumptions and defaults applied", "heading")
        for item in assumptions or ["none listed by this forecast"]:
            pages.line(f"- {_assumption_text(item)}", indent_in=0.15)
        pages.line("Cautions", "heading")
        cautions = [*body.get("cautions", [])]
        for key in ("strength", "cracking"):
            caution = (body["summary"].get(key) or {}).get("caution")
            if caution and caution not in cautions:
                cautions.append(caution)
        for caution in cautions:
            pages.line(f"- {caution}", indent_in=0.15)
        pages.close()
        chart = chart_figure(body, measured, "si", options, page_in=PAGE_IN)
        FigureCanvasPdf(chart)
        pdf.savefig(chart)
    return out.getvalue()
