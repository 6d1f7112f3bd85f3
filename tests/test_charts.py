"""Forecast charts: SVG and PNG output from a synthetic forecast body (invented numbers),
with and without the strength and cracking screening panel, sensors, marks and local time."""

import io
import math
import xml.etree.ElementTree as ET
from datetime import datetime

import matplotlib.image
import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import to_hex

from service.charts import (
    CAPTION,
    FIGURE_WIDTH_IN,
    GREY,
    OKABE_ITO,
    SIZES,
    ChartOptions,
    chart_figure,
    removal_marks,
    render_chart,
    rendering,
    when_text,
)

SVG_NS = "{http://www.w3.org/2000/svg}"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def synthetic_body(units: str = "si") -> dict:
    """A forecast body with 25 hourly points; the core exceeds 70 C from 20 h and the
    differential exceeds 19 C from 11 h. Numbers are invented, not model output; ``"us"``
    converts them to F."""
    time_h = [float(t) for t in range(25)]
    core = [20.0 + 55.0 * (1.0 - math.exp(-t / 8.0)) for t in time_h]
    surface = [20.0 + 25.0 * (1.0 - math.exp(-t / 6.0)) for t in time_h]
    air = [20.0 + 4.0 * math.sin(2.0 * math.pi * t / 24.0) for t in time_h]
    differential = [c - s for c, s in zip(core, surface, strict=True)]
    limits = {"max_temperature": (70.0, core), "max_differential": (19.0, differential)}
    if units == "si":
        s, temp, diff = "c", (lambda v: v), (lambda v: v)
    else:
        s, temp, diff = "f", (lambda v: v * 1.8 + 32.0), (lambda v: v * 1.8)
    series = {
        "time_h": time_h,
        f"core_{s}": [temp(v) for v in core],
        f"surface_{s}": [temp(v) for v in surface],
        f"differential_{s}": [diff(v) for v in differential],
        f"air_{s}": [temp(v) for v in air],
        "sensors": {},
        f"faces_{s}": {},
    }
    convert = {"max_temperature": temp, "max_differential": diff}
    summary_limits = {
        f"{name}_{s}": {
            f"limit_{s}": convert[name](limit),
            "met": max(values) <= limit,
            f"margin_{s}": convert[name](limit) - convert[name](max(values)),
            "first_exceeded_h": next(
                (t for t, v in zip(time_h, values, strict=True) if v > limit), None
            ),
        }
        for name, (limit, values) in limits.items()
    }
    return {"series": series, "summary": {"limits": summary_limits}}


def svg_texts(svg: bytes) -> list[str]:
    """All text in an SVG document, one entry per <text> element."""
    root = ET.fromstring(svg)
    assert root.tag == f"{SVG_NS}svg"
    return ["".join(el.itertext()) for el in root.iter(f"{SVG_NS}text")]


def test_svg_shows_title_caption_degrees_and_limits() -> None:
    texts = svg_texts(render_chart(synthetic_body(), "svg", options=ChartOptions(title="Mat B")))
    assert "Mat B" in texts
    assert CAPTION in texts
    assert "Temperature (°C)" in texts
    assert "Max temperature limit 70 °C; exceeded from 20 h (day 0, 20:00)" in texts
    # too long to fit clear of the curve on one line, so drawn on two
    assert {"Differential limit 19 °C", "exceeded from 11 h (day 0, 11:00)"} <= set(texts)
    assert "Temperature forecast" in svg_texts(render_chart(synthetic_body(), "svg"))


def test_times_in_labels_carry_no_float_noise() -> None:
    body = synthetic_body()
    body["summary"]["limits"]["max_temperature_c"]["first_exceeded_h"] = 31.4149
    texts = svg_texts(render_chart(body, "svg"))
    assert "Max temperature limit 70 °C; exceeded from 31.4 h (day 1, 07:25)" in texts
    assert not any("31.41" in t for t in texts)
    assert when_text(47.999) == "48 h (day 2, 00:00)"  # minutes rounded up into the next day


def test_time_axis_ticks_by_day_with_hours() -> None:
    body = synthetic_body()
    body["series"]["time_h"] = [t * 3.0 for t in body["series"]["time_h"]]  # 0..72 h
    texts = svg_texts(render_chart(body, "svg"))
    assert {"day 0", "0 h", "day 1", "24 h", "day 3", "72 h"} <= {
        line for t in texts for line in t.split("\n")
    } or {"day 0\n0 h", "day 1\n24 h", "day 3\n72 h"} <= set(texts)


def test_stored_pour_axis_shows_local_dates_removals_and_now() -> None:
    options = ChartOptions(
        title="Pour 7",
        placed_at=datetime.fromisoformat("2026-11-02T07:00:00-05:00"),
        now_h=6.5,
        removals=((12.0, "top insulation off"),),
    )
    texts = svg_texts(render_chart(synthetic_body(), "svg", options=options))
    joined = "\n".join(texts)
    assert "Local time (UTC-05:00) and hours since placement (Mon 02 Nov 2026 07:00)" in texts
    assert "Tue 03 Nov" in joined  # local midnight 17 h after a 07:00 placement
    assert "17 h" in joined
    assert " top insulation off at 12 h (Mon 02 Nov 19:00)" in texts
    assert " now 6.5 h (Mon 02 Nov 13:30)" in texts
    assert "Max temperature limit 70 °C; exceeded from 20 h (Tue 03 Nov 03:00)" in texts


def test_removal_marks_from_a_scenario() -> None:
    scenario = {
        "faces": {
            "top": {"insulation_r_m2k_w": 0.5, "insulation_removal_h": 96},
            "sides": {"formwork_r_m2k_w": 0.1, "formwork_removal_h": 48},
            "bottom": {"adiabatic": True},
        }
    }
    assert removal_marks(scenario) == ((48.0, "sides forms off"), (96.0, "top insulation off"))
    scenario["faces"]["top"]["formwork_removal_h"] = 48
    assert removal_marks(scenario)[0] == (48.0, "top forms + sides forms off")


@pytest.mark.parametrize(("size", "width_px"), [("screen", 910), ("a4", 2100)])
def test_png_size_option(size: str, width_px: int) -> None:
    png = render_chart(synthetic_body(), "png", options=ChartOptions(size=size))
    assert png.startswith(PNG_SIGNATURE)
    image = matplotlib.image.imread(io.BytesIO(png), format="png")
    assert image.shape[1] == width_px == round(FIGURE_WIDTH_IN * SIZES[size])
    assert image.shape[0] > 0.6 * width_px


@pytest.mark.parametrize("fmt", ["svg", "png"])
def test_rendering_is_repeatable(fmt: str) -> None:
    body = synthetic_body()
    assert render_chart(body, fmt) == render_chart(body, fmt)


def test_us_units_label_fahrenheit() -> None:
    texts = svg_texts(render_chart(synthetic_body("us"), "svg", units="us"))
    assert "Temperature (°F)" in texts
    assert "Core minus near surface (°F)" in texts
    assert any(t.startswith("Max temperature limit 158 °F") for t in texts)


def _with_sensors(body: dict) -> dict:
    time_h = body["series"]["time_h"]
    body["series"]["sensors"] = {
        "T1": [20.0 + 40.0 * (1.0 - math.exp(-t / 8.0)) for t in time_h],
        "T2": [20.0 + 20.0 * (1.0 - math.exp(-t / 6.0)) for t in time_h],
    }
    return body


def test_each_sensor_forecast_and_readings_share_one_colour() -> None:
    measured = {"T1": [(2.0, 30.0), (6.0, 45.0)], "T2": [(4.0, 33.0)]}
    with rendering():
        fig = chart_figure(_with_sensors(synthetic_body()), measured)
    top = fig.axes[0]
    lines = top.get_lines()
    colours = {}
    for line in lines:
        kind = "points" if line.get_linestyle() == "None" else "line"
        colours.setdefault(to_hex(line.get_color()), set()).add((kind, len(line.get_xdata())))
    t1 = to_hex(next(ln for ln in lines if list(ln.get_xdata()) == [2.0, 6.0]).get_color())
    t2 = to_hex(next(ln for ln in lines if list(ln.get_xdata()) == [4.0]).get_color())
    assert t1 != t2
    assert ("line", 25) in colours[t1] and ("line", 25) in colours[t2]  # forecast lines
    texts = svg_texts(render_chart(_with_sensors(synthetic_body()), "svg", measured=measured))
    assert {"Sensor T1", "Sensor T2", "Sensor forecast: line", "measured: marks"} <= set(texts)


def test_palette_is_colour_blind_safe_and_styles_differ_in_black_and_white() -> None:
    """Okabe & Ito (2008) colours only; every data series differs from every other in line
    style or marker, so a grey-scale print still tells them apart."""
    with rendering():
        fig = chart_figure(_with_sensors(synthetic_body()), {"T1": [(2.0, 30.0)]})
    allowed = {c.lower() for c in OKABE_ITO.values()} | {GREY.lower()}
    data_lines = [ln for ln in fig.axes[0].get_lines() if len(ln.get_xdata()) > 2]
    assert len(data_lines) == 5  # core, near surface, air, T1, T2
    assert {to_hex(ln.get_color()) for ln in data_lines} <= allowed
    # the dash pattern as drawn (matplotlib keeps no public getter for it)
    styles = [(str(ln._dash_pattern), ln.get_marker()) for ln in data_lines]
    assert len(set(styles)) == len(styles)


def test_limit_label_is_drawn_clear_of_the_data() -> None:
    """The limit label's box, as drawn, holds no point of the plotted curves (sampled 20 per
    hour between the reported points)."""
    with rendering():
        fig = chart_figure(synthetic_body())
        FigureCanvasAgg(fig).draw()
    renderer = fig.canvas.get_renderer()
    for ax, name in ((fig.axes[0], "Max temperature limit"), (fig.axes[1], "Differential limit")):
        label = next(t for t in ax.texts if t.get_text().startswith(name))
        box = label.get_window_extent(renderer)
        for line in ax.get_lines():
            xs, ys = np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
            if xs.size < 3:
                continue
            fine = np.linspace(xs[0], xs[-1], 20 * xs.size)
            points = ax.transData.transform(np.column_stack([fine, np.interp(fine, xs, ys)]))
            inside = (
                (points[:, 0] > box.x0)
                & (points[:, 0] < box.x1)
                & (points[:, 1] > box.y0)
                & (points[:, 1] < box.y1)
            )
            assert not inside.any(), f"{name} label overlaps a curve"


def test_labels_are_plain_text_never_math() -> None:
    """A sensor id or title holding TeX markup is drawn as it is (it once broke the chart:
    matplotlib parsed it as math text and raised)."""
    odd = "$\\frac{$"
    body = synthetic_body()
    body["series"]["sensors"] = {odd: body["series"]["core_c"]}
    for fmt in ("svg", "png"):
        out = render_chart(
            body, fmt, measured={odd: [(1.0, 21.0)]}, options=ChartOptions(title="$x^2$ & <b>")
        )
        assert out
    texts = svg_texts(render_chart(body, "svg", options=ChartOptions(title="$x^2$ & <b>")))
    assert f"Sensor {odd}" in texts
    assert "$x^2$ & <b>" in texts


@pytest.mark.parametrize(
    ("fmt", "units", "size"),
    [("pdf", "si", "screen"), ("svg", "imperial", "screen"), ("svg", "si", "poster")],
)
def test_unknown_format_units_or_size_rejected(fmt: str, units: str, size: str) -> None:
    with pytest.raises(ValueError):
        render_chart(synthetic_body(), fmt, units=units, options=ChartOptions(size=size))


SCREENING_CAUTION = "Strength and cracking figures are screening estimates (invented caution)."


def screening_body(units: str = "si") -> dict:
    """The synthetic body with in-place strength (10 MPa target) and cracking screening added;
    the cracking index rises past its 1.0 limit at 21 h. Numbers are invented; ``"us"`` gives
    strengths in psi."""
    body = synthetic_body(units)
    series, time_h = body["series"], body["series"]["time_h"]
    to_unit, s = (1.0, "mpa") if units == "si" else (145.0377, "psi")
    core = [40.0 * (1.0 - math.exp(-t / 10.0)) * to_unit for t in time_h]
    surface = [36.0 * (1.0 - math.exp(-t / 12.0)) * to_unit for t in time_h]
    series[f"core_strength_{s}"] = core
    series[f"surface_strength_{s}"] = surface
    series[f"sensors_strength_{s}"] = {}
    series["cracking_index"] = [None] + [t / 20.0 for t in time_h[1:]]
    body["summary"]["strength"] = {
        "targets": [{f"target_{s}": 10.0 * to_unit, "reached_h": {"core": 2.9, "surface": 3.5}}],
        f"final_core_{s}": core[-1],
        f"final_surface_{s}": surface[-1],
        "caution": SCREENING_CAUTION,
    }
    body["summary"]["cracking"] = {
        "max_index": 1.2,
        "max_index_time_h": 24.0,
        "settings": {"max_index": 1.0},
        "caution": SCREENING_CAUTION,
    }
    return body


def test_screening_panel_shows_cracking_index_and_strength() -> None:
    texts = svg_texts(render_chart(screening_body(), "svg"))
    assert "Cracking index" in texts
    assert "Cracking index limit 1; exceeded from 21 h (day 0, 21:00)" in texts
    assert "In-place strength (MPa)" in texts
    assert "target 10 MPa" in texts
    assert {"Core strength", "Near-surface strength", "Target strength"} <= set(texts)
    assert texts.count(SCREENING_CAUTION) == 1  # once, though strength and cracking both give it


def test_screening_png_is_taller() -> None:
    plain = matplotlib.image.imread(io.BytesIO(render_chart(synthetic_body(), "png")))
    taller = matplotlib.image.imread(io.BytesIO(render_chart(screening_body(), "png")))
    assert taller.shape[1] == plain.shape[1]
    assert taller.shape[0] > plain.shape[0] + 1.5 * SIZES["screen"]


@pytest.mark.parametrize("fmt", ["svg", "png"])
def test_screening_rendering_is_repeatable(fmt: str) -> None:
    body = screening_body()
    assert render_chart(body, fmt) == render_chart(body, fmt)


def test_screening_us_units_show_psi() -> None:
    texts = svg_texts(render_chart(screening_body("us"), "svg", units="us"))
    assert "In-place strength (psi)" in texts
    assert "target 1450 psi" in texts


def test_cracking_without_strength_has_no_strength_axis() -> None:
    body = screening_body()
    del body["series"]["core_strength_mpa"], body["summary"]["strength"]
    texts = svg_texts(render_chart(body, "svg"))
    assert any(t.startswith("Cracking index limit 1") for t in texts)
    assert not any("strength" in t.lower() for t in texts if t not in (CAPTION, SCREENING_CAUTION))
