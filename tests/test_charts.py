"""Forecast charts: SVG and PNG output from a synthetic forecast body (invented numbers),
with and without the strength and cracking screening panel."""

import io
import math
import xml.etree.ElementTree as ET

import matplotlib.image
import pytest

from service.charts import CAPTION, PNG_DPI, SCREENING_FIGURE_HEIGHT_IN, render_chart

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


def test_svg_parses_and_shows_caption_and_limits() -> None:
    texts = svg_texts(render_chart(synthetic_body(), "svg"))
    assert CAPTION in texts
    assert "Max temperature limit 70 C" in texts
    assert "Differential limit 19 C" in texts
    assert "Temperature (C)" in texts
    assert "exceeded at 20 h" in texts
    assert "exceeded at 11 h" in texts


def test_png_signature_and_size() -> None:
    png = render_chart(synthetic_body(), "png")
    assert png.startswith(PNG_SIGNATURE)
    image = matplotlib.image.imread(io.BytesIO(png), format="png")
    assert image.shape[:2] == (round(5.5 * PNG_DPI), round(8.0 * PNG_DPI))


@pytest.mark.parametrize("fmt", ["svg", "png"])
def test_rendering_is_repeatable(fmt: str) -> None:
    body = synthetic_body()
    assert render_chart(body, fmt) == render_chart(body, fmt)


def test_us_units_label_fahrenheit() -> None:
    texts = svg_texts(render_chart(synthetic_body("us"), "svg", units="us"))
    assert "Temperature (F)" in texts
    assert "Differential (F)" in texts
    assert "Max temperature limit 158 F" in texts


def test_measured_points_are_overlaid() -> None:
    body = synthetic_body()
    measured = {"T1": [(2.0, 30.0), (6.0, 45.0), (12.0, 60.0)], "T2": [(4.0, 33.0)]}
    plain = render_chart(body, "svg")
    overlaid = render_chart(body, "svg", measured=measured)
    assert len(overlaid) > len(plain)
    assert {"Measured T1", "Measured T2"} <= set(svg_texts(overlaid))


@pytest.mark.parametrize(("fmt", "units"), [("pdf", "si"), ("svg", "imperial")])
def test_unknown_format_or_units_rejected(fmt: str, units: str) -> None:
    with pytest.raises(ValueError):
        render_chart(synthetic_body(), fmt, units=units)


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
    assert "Cracking index limit 1" in texts
    assert "exceeded at 21 h" in texts
    assert "In-place strength (MPa)" in texts
    assert "target 10 MPa" in texts
    assert {"Core strength", "Near-surface strength", "Target strength"} <= set(texts)
    assert CAPTION in texts
    assert texts.count(SCREENING_CAUTION) == 1  # once, though strength and cracking both give it


def test_screening_png_is_taller() -> None:
    image = matplotlib.image.imread(io.BytesIO(render_chart(screening_body(), "png")))
    assert image.shape[:2] == (
        round(SCREENING_FIGURE_HEIGHT_IN * PNG_DPI),
        round(8.0 * PNG_DPI),
    )
    assert SCREENING_FIGURE_HEIGHT_IN > 5.5


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
    assert "Cracking index limit 1" in texts
    assert not any("strength" in text for text in texts)
