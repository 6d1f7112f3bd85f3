"""Forecast charts: a forecast response body drawn as an SVG or PNG image.

Temperatures are drawn in the units of the body passed in: degrees Celsius for ``"si"``
(keys ending ``_c``), degrees Fahrenheit for ``"us"`` (keys ending ``_f``); time is always in
hours since placement. Rendering uses matplotlib's object API (``Figure`` and an explicit
canvas), never pyplot, and output is byte-for-byte repeatable for the same input.
"""

import io
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

PNG_DPI = 100
"""Resolution of PNG charts [pixel/inch]; a PNG is 800 x 550 pixels."""

UNIT_SUFFIX = {"si": "c", "us": "f"}
"""Key suffix of temperature quantities in a body, by unit system."""

UNIT_LABEL = {"si": "C", "us": "F"}
"""Temperature unit shown on the chart, by unit system."""

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
        f"{label} {limit:g} {unit}",
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


def _figure(
    body: dict[str, Any], measured: dict[str, list[tuple[float, float]]] | None, units: str
) -> Figure:
    """The chart figure: temperatures on top, the core-to-surface differential below."""
    suffix, unit = UNIT_SUFFIX[units], UNIT_LABEL[units]
    series = body["series"]
    limits = body["summary"]["limits"]
    time_h = series["time_h"]
    span = (time_h[0], time_h[-1])

    legend_rows = -(-(3 + len(measured or {})) // LEGEND_COLUMNS)
    fig = Figure(figsize=FIGURE_SIZE_IN)
    top, bottom = fig.subplots(
        2,
        1,
        sharex=True,
        height_ratios=[3, 2],
        gridspec_kw={
            "left": 0.09,
            "right": 0.97,
            "top": 0.975 - 0.04 * legend_rows,
            "bottom": 0.14,
            "hspace": 0.08,
        },
    )
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

    bottom.plot(time_h, series[f"differential_{suffix}"], color="tab:purple")
    _draw_limit(
        bottom, span, *_limit(limits, "max_differential", suffix), "Differential limit", unit
    )
    bottom.set_ylabel(f"Differential ({unit})")
    bottom.set_xlabel("Time since placement (h)")
    bottom.xaxis.set_major_locator(MaxNLocator(nbins=9, steps=HOUR_STEPS))
    bottom.set_xlim(*span)

    for ax in (top, bottom):
        ax.grid(True, linewidth=0.5, alpha=0.4)
    fig.text(0.01, 0.015, CAPTION, fontsize=7, color="dimgray")
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
    ``fmt`` is ``"svg"`` or ``"png"`` (800 x 550 pixels). ``measured`` maps a sensor id to
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
