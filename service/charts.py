"""Forecast charts: a forecast response body drawn as an SVG or PNG image.

Temperatures are drawn in the units of the body passed in: degrees Celsius for ``"si"``
(keys ending ``_c``), degrees Fahrenheit for ``"us"`` (keys ending ``_f``); time is always in
hours since placement. A body with strength or cracking screening (series ``cracking_index``,
``core_strength_mpa`` / ``_psi``) gets a third, taller panel: the cracking index against its
limit and the in-place strength (MPa, or psi for ``"us"``) against its targets, in a figure
grown taller for it. Rendering uses matplotlib's object API (``Figure`` and an explicit canvas),
never pyplot, and output is byte-for-byte repeatable for the same input.
"""

import io
import math
import textwrap
import threading
from typing import Any

import matplotlib
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

CAPTION = (
    "Estimate only: limits come from the governing specification and the engineer of record; "
    "confirm by monitoring."
)
"""Footer printed under every chart."""

FIGURE_SIZE_IN = (8.0, 5.5)
"""Figure width and height [inch]."""

SCREENING_FIGURE_HEIGHT_IN = 7.75
"""Figure height [inch] when the strength and cracking panel is drawn (width unchanged)."""

PNG_DPI = 100
"""Resolution of PNG charts [pixel/inch]; a PNG is 800 x 550 pixels, or 800 x 775 with the
strength and cracking panel."""

UNIT_SUFFIX = {"si": "c", "us": "f"}
"""Key suffix of temperature quantities in a body, by unit system."""

UNIT_LABEL = {"si": "C", "us": "F"}
"""Temperature unit shown on the chart, by unit system."""

STRENGTH_SUFFIX = {"si": "mpa", "us": "psi"}
"""Key suffix of strengths in a body, by unit system."""

STRENGTH_LABEL = {"si": "MPa", "us": "psi"}
"""Strength unit shown on the chart, by unit system."""

DEFAULT_MAX_CRACKING_INDEX = 1.0
"""Cracking index limit drawn when the body's cracking settings do not give one."""

TARGET_STYLE = {"color": "tab:green", "linestyle": ":", "linewidth": 1.0}
"""Line style of a target strength."""

FOOTER_WRAP_CHARS = 150
"""Longest footer line [characters]; a longer screening caution is wrapped."""

FOOTER_LINE_IN = 0.13
"""Height of one footer line [inch]."""

HOUR_STEPS = [1, 1.2, 2.4, 3, 6, 10]
"""Tick steps per decade for the time axis, so long forecasts tick every 12, 24 or 60 h."""

SAVE_OPTIONS: dict[str, dict[str, Any]] = {
    "svg": {"format": "svg", "metadata": {"Date": None}},
    "png": {"format": "png", "dpi": PNG_DPI, "metadata": {"Software": None}},
}
"""Arguments to ``print_figure`` per output format; metadata that varies between runs is left
out so output is repeatable."""

RC_PARAMS = {"svg.hashsalt": "pourheat", "svg.fonttype": "none"}
"""matplotlib settings while rendering: fixed SVG element ids, and text kept as SVG text."""

_RENDER_LOCK = threading.Lock()
"""Serialises rendering: ``rc_context`` changes matplotlib's process-wide settings."""

LIMIT_STYLE = {"color": "tab:red", "linestyle": "--", "linewidth": 1.0}
"""Line style of a limit."""

EXCEEDED_STYLE = {"color": "tab:red", "linestyle": ":", "linewidth": 1.0}
"""Line style of the vertical marker where a limit is first exceeded."""

LIMIT_HEADROOM = 0.1
"""Least room above a limit line, as a fraction of the axis range, so its label stays inside."""

LEGEND_COLUMNS = 4
"""Entries per row of the legend above the chart."""

MEASURED_STYLES = [
    {"color": color, "marker": marker}
    for marker in ("o", "s", "^", "D")
    for color in ("tab:green", "tab:brown", "tab:pink", "tab:olive", "tab:cyan", "black")
]
"""Colour and marker per measured sensor, in order, distinct from the forecast lines; they
repeat after 24 sensors."""


def _limit(limits: dict[str, Any], name: str, suffix: str) -> tuple[float, float | None]:
    """Limit value (body units) and first time it is exceeded [h] (None if never).

    The limit group is looked up as ``{name}_{suffix}`` and, failing that, ``{name}_c``: the
    group's name may stay in SI while its values carry the unit suffix.
    """
    group = limits.get(f"{name}_{suffix}") or limits[f"{name}_c"]
    return float(group[f"limit_{suffix}"]), group["first_exceeded_h"]


def _draw_limit(
    ax: Axes,
    time_span_h: tuple[float, float],
    limit: float,
    first_exceeded_h: float | None,
    label: str,
    unit: str,
) -> None:
    """Dashed line at ``limit`` (body units) with a label, and a marker where it is first
    exceeded; the marker's caption sits on whichever side of it ``time_span_h`` leaves room."""
    ax.axhline(limit, **LIMIT_STYLE)
    low, high = ax.get_ylim()
    ax.set_ylim(low, max(high, limit + LIMIT_HEADROOM * (high - low)))
    ax.annotate(
        f"{label} {limit:g} {unit}".rstrip(),
        xy=(0.01, limit),
        xycoords=ax.get_yaxis_transform(),
        xytext=(0, 3),
        textcoords="offset points",
        color=LIMIT_STYLE["color"],
        fontsize=8,
    )
    if first_exceeded_h is not None:
        ax.axvline(first_exceeded_h, **EXCEEDED_STYLE)
        ax.plot([first_exceeded_h], [limit], "o", color=LIMIT_STYLE["color"], markersize=5)
        start, end = time_span_h
        right_side = first_exceeded_h < start + 0.75 * (end - start)
        ax.annotate(
            f"exceeded at {first_exceeded_h:g} h",
            xy=(first_exceeded_h, limit),
            xytext=(4 if right_side else -4, -12),
            textcoords="offset points",
            horizontalalignment="left" if right_side else "right",
            color=LIMIT_STYLE["color"],
            fontsize=8,
        )


def _numbers(values: list[float | None]) -> list[float]:
    """A series with null values as NaN, which matplotlib leaves as gaps."""
    return [math.nan if v is None else float(v) for v in values]


def _strength_series(series: dict[str, Any], name: str, units: str) -> list[float | None] | None:
    """``series[{name}_strength_{mpa|psi}]``, falling back to the MPa key; None if absent."""
    found = series.get(f"{name}_strength_{STRENGTH_SUFFIX[units]}")
    return found if found is not None else series.get(f"{name}_strength_mpa")


def _has_screening(series: dict[str, Any], units: str) -> bool:
    """Whether the body carries strength or cracking series (the third panel is drawn)."""
    return "cracking_index" in series or _strength_series(series, "core", units) is not None


def _screening_cautions(summary: dict[str, Any]) -> list[str]:
    """The strength and cracking screening cautions, without repeats."""
    cautions: list[str] = []
    for key in ("strength", "cracking"):
        caution = (summary.get(key) or {}).get("caution")
        if caution and caution not in cautions:
            cautions.append(caution)
    return cautions


def _draw_screening(ax: Axes, body: dict[str, Any], span: tuple[float, float], units: str) -> None:
    """The screening panel: cracking index against its limit on ``ax``; in-place strength
    against its targets on a twin axis (on ``ax`` itself when there is no cracking index)."""
    series, summary = body["series"], body["summary"]
    time_h = series["time_h"]
    handles = []
    strength_ax = ax
    if "cracking_index" in series:
        index = _numbers(series["cracking_index"])
        settings = (summary.get("cracking") or {}).get("settings") or {}
        limit = float(settings.get("max_index", DEFAULT_MAX_CRACKING_INDEX))
        first_exceeded_h = next((t for t, v in zip(time_h, index, strict=True) if v > limit), None)
        handles += ax.plot(time_h, index, color="black", linewidth=1.2, label="Cracking index")
        finite = [v for v in index if not math.isnan(v)]
        ax.set_ylim(0.0, 1.3 * max([limit, *finite]))
        _draw_limit(ax, span, limit, first_exceeded_h, "Cracking index limit", "")
        ax.set_ylabel("Cracking index")
        strength_ax = ax.twinx()

    core = _strength_series(series, "core", units)
    if core is not None:
        unit = STRENGTH_LABEL[units]
        surface = _strength_series(series, "surface", units) or []
        targets = [
            float(t.get(f"target_{STRENGTH_SUFFIX[units]}", t.get("target_mpa")))
            for t in (summary.get("strength") or {}).get("targets", [])
        ]
        handles += strength_ax.plot(
            time_h, _numbers(core), color="tab:orange", linestyle="-.", label="Core strength"
        )
        if surface:
            handles += strength_ax.plot(
                time_h,
                _numbers(surface),
                color="tab:blue",
                linestyle="-.",
                label="Near-surface strength",
            )
        finite = [v for v in _numbers(core) + _numbers(surface) if not math.isnan(v)]
        strength_ax.set_ylim(0.0, 1.6 * max([*finite, *targets, 1.0]))
        for target in targets:
            strength_ax.axhline(target, **TARGET_STYLE)
            strength_ax.annotate(
                f"target {target:.4g} {unit}" if units == "si" else f"target {target:.0f} {unit}",
                xy=(0.99, target),
                xycoords=strength_ax.get_yaxis_transform(),
                xytext=(0, 3),
                textcoords="offset points",
                horizontalalignment="right",
                color=TARGET_STYLE["color"],
                fontsize=8,
            )
        if targets:
            handles += strength_ax.plot([], [], **TARGET_STYLE, label="Target strength")
        strength_ax.set_ylabel(f"In-place strength ({unit})")
    ax.legend(
        handles=handles,
        loc="upper left",
        ncols=LEGEND_COLUMNS,
        fontsize=7,
        frameon=False,
    )


def _figure(
    body: dict[str, Any], measured: dict[str, list[tuple[float, float]]] | None, units: str
) -> Figure:
    """The chart figure: temperatures on top, the core-to-surface differential below, and,
    when the body has strength or cracking screening, the cracking index and strength last."""
    suffix, unit = UNIT_SUFFIX[units], UNIT_LABEL[units]
    series = body["series"]
    limits = body["summary"]["limits"]
    time_h = series["time_h"]
    span = (time_h[0], time_h[-1])
    screening = _has_screening(series, units)
    twin_axis = "cracking_index" in series and _strength_series(series, "core", units) is not None
    footer = [CAPTION] + [
        line
        for caution in _screening_cautions(body["summary"])
        for line in textwrap.wrap(caution, FOOTER_WRAP_CHARS)
    ]

    legend_rows = -(-(3 + len(measured or {})) // LEGEND_COLUMNS)
    if screening or len(footer) > 1:
        # The same margins in inches as the plain chart, plus one line per footer line.
        height = SCREENING_FIGURE_HEIGHT_IN if screening else FIGURE_SIZE_IN[1]
        scale = FIGURE_SIZE_IN[1] / height
        top_frac = 1.0 - scale * (0.025 + 0.04 * legend_rows)
        bottom_frac = (0.14 * FIGURE_SIZE_IN[1] + FOOTER_LINE_IN * (len(footer) - 1)) / height
    else:
        height, top_frac, bottom_frac = FIGURE_SIZE_IN[1], 0.975 - 0.04 * legend_rows, 0.14
    fig = Figure(figsize=(FIGURE_SIZE_IN[0], height))
    axes = fig.subplots(
        3 if screening else 2,
        1,
        sharex=True,
        height_ratios=[3, 2, 2] if screening else [3, 2],
        gridspec_kw={
            "left": 0.09,
            "right": 0.895 if twin_axis else 0.97,
            "top": top_frac,
            "bottom": bottom_frac,
            "hspace": 0.08,
        },
    )
    top, bottom = axes[0], axes[-1]
    middle = axes[1]
    top.plot(time_h, series[f"core_{suffix}"], color="tab:orange", label="Core (hottest point)")
    top.plot(time_h, series[f"surface_{suffix}"], color="tab:blue", label="Near surface")
    top.plot(time_h, series[f"air_{suffix}"], color="tab:gray", linewidth=1.0, label="Air")
    for i, (sensor_id, points) in enumerate((measured or {}).items()):
        top.plot(
            [t for t, _ in points],
            [v for _, v in points],
            linestyle="none",
            markersize=4,
            label=f"Measured {sensor_id}",
            **MEASURED_STYLES[i % len(MEASURED_STYLES)],
        )
    _draw_limit(
        top, span, *_limit(limits, "max_temperature", suffix), "Max temperature limit", unit
    )
    top.set_ylabel(f"Temperature ({unit})")
    top.legend(
        loc="lower left",
        bbox_to_anchor=(0.0, 1.0),
        ncols=LEGEND_COLUMNS,
        fontsize=8,
        frameon=False,
        borderaxespad=0.2,
    )

    middle.plot(time_h, series[f"differential_{suffix}"], color="tab:purple")
    _draw_limit(
        middle, span, *_limit(limits, "max_differential", suffix), "Differential limit", unit
    )
    middle.set_ylabel(f"Differential ({unit})")
    if screening:
        _draw_screening(bottom, body, span, units)
    bottom.set_xlabel("Time since placement (h)")
    bottom.xaxis.set_major_locator(MaxNLocator(nbins=9, steps=HOUR_STEPS))
    bottom.set_xlim(*span)

    for ax in axes:
        ax.grid(True, linewidth=0.5, alpha=0.4)
    if len(footer) == 1:
        fig.text(0.01, 0.015, CAPTION, fontsize=7, color="dimgray")
    else:
        fig.text(
            0.01,
            0.015 * FIGURE_SIZE_IN[1] / height,
            "\n".join(footer),
            fontsize=7,
            color="dimgray",
            linespacing=1.3,
        )
    return fig


def render_chart(
    body: dict[str, Any],
    fmt: str,
    measured: dict[str, list[tuple[float, float]]] | None = None,
    units: str = "si",
) -> bytes:
    """A forecast body drawn as an image.

    ``body`` is a forecast response body (see ``service.convert.forecast_json``) already in
    ``units``: ``"si"`` (degrees C, keys ``*_c``) or ``"us"`` (degrees F, keys ``*_f``).
    ``fmt`` is ``"svg"`` or ``"png"`` (800 x 550 pixels; 800 x 775 when the body carries
    strength or cracking series, drawn in a third panel). ``measured`` maps a sensor id to
    measured points ``(time [h since placement], temperature [C or F, as units])`` drawn over
    the forecast. Raises ValueError for an unknown ``fmt`` or ``units``.
    """
    if fmt not in SAVE_OPTIONS:
        raise ValueError(f"unknown chart format {fmt!r}; expected 'svg' or 'png'")
    if units not in UNIT_SUFFIX:
        raise ValueError(f"unknown units {units!r}; expected 'si' or 'us'")
    out = io.BytesIO()
    with _RENDER_LOCK, matplotlib.rc_context(RC_PARAMS):
        fig = _figure(body, measured, units)
        canvas = FigureCanvasSVG(fig) if fmt == "svg" else FigureCanvasAgg(fig)
        canvas.print_figure(out, **SAVE_OPTIONS[fmt])
    return out.getvalue()
