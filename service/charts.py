"""Forecast charts: a forecast response body drawn as an SVG or PNG image (or a figure for the
PDF report).

Temperatures are drawn in the units of the body passed in: degrees Celsius for ``"si"``
(keys ending ``_c``), degrees Fahrenheit for ``"us"`` (keys ending ``_f``). Time runs in hours
since placement, ticked by day (``day 0``, ``day 1`` ... for a scenario; local dates and clock
times in the pour's own UTC offset for a stored pour). A body with strength or cracking
screening (series ``cracking_index``, ``core_strength_mpa`` / ``_psi``) gets a third panel: the
cracking index against its limit and the in-place strength against its targets.

Made to be read in print as well as on a screen: 7.0 inches wide (A4 text width), colours from
the Okabe-Ito palette, which readers with the common colour-vision deficiencies can tell apart
(Okabe & Ito 2008, "Color Universal Design"), and every series with its own line style or
marker so a black-and-white print still reads. Each sensor's forecast line and its measured
points share one colour and marker. Limit labels are placed where no data run through them.
Every string is drawn as plain text (``text.parse_math`` off): a ``$`` in a pour name or a
sensor id is shown as it is, never parsed as math. Rendering uses matplotlib's object API
(``Figure`` and an explicit canvas), never pyplot, and output is byte-for-byte repeatable for
the same input.
"""

import io
import math
import textwrap
import threading
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from typing import Any

import matplotlib
import numpy as np
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import FixedLocator, NullFormatter

CAPTION = (
    "Estimate only: limits come from the governing specification and the engineer of record; "
    "confirm by monitoring."
)
"""Footer printed under every chart."""

OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
"""The Okabe-Ito colour-blind-safe palette (Okabe & Ito 2008)."""

GREY = "#666666"
"""Air temperature and removal marks."""

CORE_STYLE = {"color": OKABE_ITO["vermillion"], "linestyle": "-", "linewidth": 1.8}
SURFACE_STYLE = {"color": OKABE_ITO["blue"], "linestyle": "--", "linewidth": 1.6}
AIR_STYLE = {"color": GREY, "linestyle": ":", "linewidth": 1.2}
DIFFERENTIAL_STYLE = {"color": OKABE_ITO["black"], "linestyle": "-", "linewidth": 1.5}
LIMIT_STYLE = {"color": OKABE_ITO["black"], "linestyle": "-.", "linewidth": 1.0}
EXCEEDED_STYLE = {"color": OKABE_ITO["black"], "linestyle": ":", "linewidth": 0.9}
REMOVAL_STYLE = {"color": GREY, "linestyle": (0, (4, 2)), "linewidth": 1.0}
NOW_STYLE = {"color": OKABE_ITO["black"], "linestyle": "-", "linewidth": 1.2}
TARGET_STYLE = {"color": OKABE_ITO["bluish_green"], "linestyle": ":", "linewidth": 1.2}
CRACKING_STYLE = {"color": OKABE_ITO["black"], "linestyle": "-", "linewidth": 1.4}
CORE_STRENGTH_STYLE = {"color": OKABE_ITO["vermillion"], "linestyle": "-.", "linewidth": 1.3}
SURFACE_STRENGTH_STYLE = {"color": OKABE_ITO["blue"], "linestyle": (0, (5, 1, 1, 1, 1, 1))}

LABEL_BOX = {"facecolor": "white", "edgecolor": "none", "alpha": 0.8, "pad": 0.5}
"""Background of labels drawn over data, so they read where a curve runs behind them."""

SENSOR_COLOURS = ("orange", "sky_blue", "bluish_green", "reddish_purple", "blue", "yellow")
SENSOR_DASHES = ((0, (6, 2)), (0, (1, 1.5)), (0, (4, 1.5, 1, 1.5)), (0, (8, 2, 2, 2)))
SENSOR_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<")


def sensor_style(i: int) -> dict[str, Any]:
    """Colour, dash pattern and marker of the ``i``-th sensor: the colour, dash and marker
    sequences have coprime lengths (6, 4 joined with 8 markers), so neighbours differ in all
    three and 24 sensors differ in at least two."""
    return {
        "color": OKABE_ITO[SENSOR_COLOURS[i % len(SENSOR_COLOURS)]],
        "linestyle": SENSOR_DASHES[i % len(SENSOR_DASHES)],
        "marker": SENSOR_MARKERS[(i // len(SENSOR_COLOURS) + i) % len(SENSOR_MARKERS)],
    }


FIGURE_WIDTH_IN = 7.0
"""Figure width [inch]: the text width of an A4 page with 17 mm margins (178 mm)."""

SIZES = {"screen": 130, "a4": 300}
"""PNG resolution [pixel/inch] per ``size``: ``screen`` is 910 pixels wide, ``a4`` prints at
300 dpi across the text width of an A4 page (2100 pixels). SVG is the same drawing."""

FONT_PT = 8.5
"""Base font size [pt]: at A4 print size, as legible as a report's footnotes."""

PANEL_HEIGHTS_IN = {"temperature": 2.7, "differential": 1.5, "screening": 1.7}
PANEL_GAP_IN = 0.12
MARGINS_IN = {"left": 0.7, "right": 0.2, "twin_right": 0.75, "title": 0.4, "legend_row": 0.19}
XAXIS_IN = 0.62
"""Room below the last panel for the two-line tick labels and the axis label [inch]."""
FOOTER_LINE_IN = 0.13
FOOTER_WRAP_CHARS = 140
LEGEND_COLUMNS = 4
PAGE_TOP_IN = 0.8
"""Top margin of a chart placed on a page [inch]."""

DEFAULT_MAX_CRACKING_INDEX = 1.0
"""Cracking index limit drawn when the body's cracking settings do not give one."""

UNIT_SUFFIX = {"si": "c", "us": "f"}
"""Key suffix of temperature quantities in a body, by unit system."""
UNIT_LABEL = {"si": "°C", "us": "°F"}
"""Temperature unit shown on the chart, by unit system."""
STRENGTH_SUFFIX = {"si": "mpa", "us": "psi"}
STRENGTH_LABEL = {"si": "MPa", "us": "psi"}

SAVE_OPTIONS: dict[str, dict[str, Any]] = {
    "svg": {"format": "svg", "metadata": {"Date": None}},
    "png": {"format": "png", "metadata": {"Software": None}},
}
"""Arguments to ``print_figure`` per output format; metadata that varies between runs is left
out so output is repeatable."""

RC_PARAMS = {
    "svg.hashsalt": "pourheat",
    "svg.fonttype": "none",
    "pdf.fonttype": 42,
    "text.usetex": False,
    "text.parse_math": False,
    "font.family": "DejaVu Sans",
    "font.size": FONT_PT,
}
"""matplotlib settings while rendering: fixed SVG ids, text kept as text (SVG) or TrueType
(PDF, so it can be selected and searched), no TeX and no math parsing of any string."""

_RENDER_LOCK = threading.Lock()
"""Serialises rendering: ``rc_context`` changes matplotlib's process-wide settings."""


@dataclass(frozen=True)
class ChartOptions:
    """What a chart shows beyond the forecast body.

    ``title``: the pour's or scenario's name. ``placed_at``: the stored pour's placement, an
    aware datetime in the pour's own offset (the time axis then shows its local dates and
    times). ``now_h``: hours since placement of the "now" mark. ``removals``: (hour, label)
    marks, e.g. from :func:`removal_marks`. ``size``: ``"screen"`` or ``"a4"`` (PNG
    resolution, see SIZES).
    """

    title: str | None = None
    placed_at: datetime | None = None
    now_h: float | None = None
    removals: tuple[tuple[float, str], ...] = ()
    size: str = "screen"


def hours_text(hours: float) -> str:
    """Hours to one decimal without float noise: 31.4149 -> ``31.4 h``, 20.0 -> ``20 h``."""
    return f"{hours:.1f}".rstrip("0").rstrip(".") + " h"


def when_text(hours: float, placed_at: datetime | None = None) -> str:
    """A time since placement in words: ``31.4 h (day 1, 07:25)`` counting days from day 0,
    or with ``placed_at``, the local date and time: ``31.4 h (Tue 03 Nov 14:25)``."""
    if placed_at is not None:
        moment = placed_at + timedelta(hours=hours)
        return f"{hours_text(hours)} ({moment:%a %d %b %H:%M})"
    days, minutes = divmod(round(hours * 60), 1440)
    return f"{hours_text(hours)} (day {days}, {minutes // 60:02d}:{minutes % 60:02d})"


FACE_WORDS = {"top": "top", "bottom": "bottom", "sides": "sides", "left": "left side"}
FACE_WORDS |= {"right": "right side", "front": "front side", "back": "back side"}


def removal_marks(scenario: dict[str, Any]) -> tuple[tuple[float, str], ...]:
    """Planned insulation and form removals of a scenario (request JSON, any units: hours stay
    hours) as (hour, label) pairs in time order; removals at the same hour share one label."""
    by_hour: dict[float, list[str]] = {}
    faces = scenario.get("faces") or {}
    for face, words in FACE_WORDS.items():
        spec = faces.get(face) or {}
        for key, what in (("insulation_removal_h", "insulation"), ("formwork_removal_h", "forms")):
            hour = spec.get(key)
            if isinstance(hour, int | float) and not isinstance(hour, bool):
                by_hour.setdefault(float(hour), []).append(f"{words} {what}")
    return tuple((h, " + ".join(by_hour[h]) + " off") for h in sorted(by_hour))


def pour_options(pour: dict[str, Any], size: str = "screen") -> ChartOptions:
    """Chart options of a stored pour (as ``service.store.get_pour`` gives it): its name, its
    placement in its own UTC offset, the planned removals and "now" at the server's clock."""
    local = pour.get("placed_at_local")
    placed_at = datetime.fromisoformat(local) if local else pour["placed_at"]
    now_h = (datetime.now(UTC) - pour["placed_at"]).total_seconds() / 3600.0
    return ChartOptions(
        title=pour["name"],
        placed_at=placed_at,
        now_h=now_h,
        removals=removal_marks(pour["scenario"]),
        size=size,
    )


def _numbers(values: Sequence[float | None]) -> list[float]:
    """A series with null values as NaN, which matplotlib leaves as gaps."""
    return [math.nan if v is None else float(v) for v in values]


def _limit(limits: dict[str, Any], name: str, suffix: str) -> tuple[float, float | None]:
    """Limit value (body units) and first time it is exceeded [h] (None if never); the group
    is ``{name}_{suffix}`` or, failing that, ``{name}_c`` with values carrying the suffix."""
    group = limits.get(f"{name}_{suffix}") or limits[f"{name}_c"]
    return float(group[f"limit_{suffix}"]), group.get("first_exceeded_h")


def _number_text(value: float) -> str:
    return f"{value:.1f}".rstrip("0").rstrip(".")


def _dense(
    xs: Sequence[float], ys: Sequence[float], x0: float, x1: float
) -> list[tuple[float, float]]:
    """The points of a curve, and for a line of 3 or more points also 400 points along it
    across [x0, x1] (so a segment between reported hours counts too); NaN gaps dropped."""
    points = [(x, y) for x, y in zip(xs, ys, strict=False) if not (math.isnan(x) or math.isnan(y))]
    if len(points) >= 3:
        px, py = zip(*points, strict=True)
        grid = np.linspace(max(x0, px[0]), min(x1, px[-1]), 400)
        points += list(zip(grid.tolist(), np.interp(grid, px, py).tolist(), strict=True))
    return points


def _label_spot(
    ax: Axes, curves: list[tuple[list[float], list[float]]], limit: float, size_frac: tuple
) -> tuple[float, float, str, int]:
    """Where a label of ``size_frac`` (width, height as fractions of the axes) sits by the
    line at ``limit`` with the fewest data points under it: (x in axes fraction, y in data,
    vertical alignment, points under it). Above the line is preferred, then the left."""
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    width, height = size_frac[0] * (x1 - x0), size_frac[1] * (y1 - y0)
    pad = 0.015 * (y1 - y0)
    points = np.array([p for xs, ys in curves for p in _dense(xs, ys, x0, x1)] or [(x0, y0)])
    starts = 0.01 + 0.01 * np.arange(100)
    starts = starts[starts + size_frac[0] <= 0.99]
    best: tuple[int, int, float, float, str] | None = None
    for side, (low, high, y, align) in enumerate(
        [
            (limit + pad, limit + pad + height, limit + pad, "bottom"),
            (limit - pad - height, limit - pad, limit - pad, "top"),
        ]
    ):
        if low < y0 or high > y1 or starts.size == 0:
            continue
        in_band = np.sort(points[(points[:, 1] >= low) & (points[:, 1] <= high), 0])
        left = x0 + starts * (x1 - x0)
        hits = np.searchsorted(in_band, left + width, "right") - np.searchsorted(in_band, left)
        k = int(np.argmin(hits))  # the first (leftmost) of the fewest
        key = (int(hits[k]), side, float(starts[k]), y, align)
        if best is None or key[:3] < best[:3]:
            best = key
    if best is None:
        return 0.01, limit, "bottom", len(points)
    return best[2], best[3], best[4], best[0]


def _draw_limit(
    ax: Axes,
    curves: list[tuple[list[float], list[float]]],
    limit: float,
    first_exceeded_h: float | None,
    label: str,
    placed_at: datetime | None,
) -> None:
    """The limit as a dash-dot line labelled where no data run, and where it is first
    exceeded a dotted vertical mark (its time is in the label)."""
    ax.axhline(limit, **LIMIT_STYLE)
    low, high = ax.get_ylim()
    ax.set_ylim(low, max(high, limit + 0.16 * (high - low)))
    if first_exceeded_h is not None:
        label += f"; exceeded from {when_text(first_exceeded_h, placed_at)}"
        ax.axvline(first_exceeded_h, **EXCEEDED_STYLE)
        ax.plot([first_exceeded_h], [limit], marker="x", color="black", markersize=6)
    fig = ax.get_figure()
    assert fig is not None
    box = ax.get_position()
    fig_w, fig_h = fig.get_size_inches()
    choices = []
    for text in (label, label.replace("; ", "\n")):  # one line, else two narrower lines
        lines = text.split("\n")
        size_frac = (
            (max(map(len, lines)) * 0.62 * (FONT_PT - 0.5) / 72 + 0.1) / (box.width * fig_w),
            (len(lines) * (FONT_PT - 0.5) * 1.6 / 72) / (box.height * fig_h),
        )
        choices.append((*_label_spot(ax, curves, limit, size_frac), text))
        if choices[-1][3] == 0:
            break
    x, y, align, _, text = min(choices, key=lambda c: c[3])
    ax.text(
        x,
        y,
        text,
        transform=ax.get_yaxis_transform(),
        verticalalignment=align,
        fontsize=FONT_PT - 0.5,
        bbox=LABEL_BOX,
        zorder=6,  # over the removal and "now" labels where they cross
    )


def _time_ticks(span: tuple[float, float], placed_at: datetime | None) -> tuple[list, list, list]:
    """Major tick hours, their two-line labels and minor tick hours: every day (or 2, 7, 14
    days for long forecasts; 6 or 12 h for short ones), at local midnights for a stored pour."""
    start, end = span
    length = max(end - start, 1e-9)
    major = next((s for s in (6.0, 12.0, 24.0, 48.0, 168.0, 336.0) if length / s <= 9), 672.0)
    minor = {6.0: 1.0, 12.0: 3.0, 24.0: 6.0, 48.0: 12.0, 168.0: 24.0}.get(major, 168.0)
    shift = 0.0
    if placed_at is not None:
        midnight = placed_at.replace(hour=0, minute=0, second=0, microsecond=0)
        shift = (midnight - placed_at).total_seconds() / 3600.0  # <= 0
    first = shift + math.ceil((start - shift) / major - 1e-9) * major
    majors = [first + i * major for i in range(int((end - first) // major) + 1)]
    labels = []
    for h in majors:
        if placed_at is not None:
            moment = placed_at + timedelta(hours=h)
            top = (
                f"{moment:%a %d %b}"
                if moment.hour == 0 and moment.minute == 0
                else (f"{moment:%H:%M}")
            )
            labels.append(f"{top}\n{_number_text(h)} h")
        else:
            day = f"day {round(h / 24)}" if abs(h / 24 - round(h / 24)) < 1e-9 else ""
            labels.append(f"{day}\n{_number_text(h)} h")
    first_minor = shift + math.ceil((start - shift) / minor - 1e-9) * minor
    minors = [first_minor + i * minor for i in range(int((end - first_minor) // minor) + 1)]
    return majors, labels, minors


def _offset_text(placed_at: datetime) -> str:
    offset = placed_at.strftime("%z") or "+0000"
    return f"UTC{offset[:3]}:{offset[3:]}"


def _strength_series(series: dict[str, Any], name: str, units: str) -> list[float | None] | None:
    """``series[{name}_strength_{mpa|psi}]``, falling back to the MPa key; None if absent."""
    found = series.get(f"{name}_strength_{STRENGTH_SUFFIX[units]}")
    return found if found is not None else series.get(f"{name}_strength_mpa")


def _has_screening(series: dict[str, Any], units: str) -> bool:
    return "cracking_index" in series or _strength_series(series, "core", units) is not None


def _screening_cautions(summary: dict[str, Any]) -> list[str]:
    cautions: list[str] = []
    for key in ("strength", "cracking"):
        caution = (summary.get(key) or {}).get("caution")
        if caution and caution not in cautions:
            cautions.append(caution)
    return cautions


def _draw_screening(ax: Axes, body: dict[str, Any], units: str, options: ChartOptions) -> list:
    """The screening panel: cracking index against its limit on ``ax``; in-place strength
    against its targets on a twin axis (on ``ax`` itself without a cracking index). Returns
    the legend handles."""
    series, summary = body["series"], body["summary"]
    time_h = series["time_h"]
    handles: list = []
    strength_ax = ax
    if "cracking_index" in series:
        index = _numbers(series["cracking_index"])
        settings = (summary.get("cracking") or {}).get("settings") or {}
        limit = float(settings.get("max_index", DEFAULT_MAX_CRACKING_INDEX))
        first = next((t for t, v in zip(time_h, index, strict=True) if v > limit), None)
        handles += ax.plot(time_h, index, **CRACKING_STYLE, label="Cracking index")
        finite = [v for v in index if not math.isnan(v)]
        ax.set_ylim(0.0, 1.3 * max([limit, *finite]))
        _draw_limit(
            ax,
            [(time_h, index)],
            limit,
            first,
            f"Cracking index limit {_number_text(limit)}",
            options.placed_at,
        )
        ax.set_ylabel("Cracking index")
        strength_ax = ax.twinx()

    core = _strength_series(series, "core", units)
    if core is not None:
        unit, key = STRENGTH_LABEL[units], STRENGTH_SUFFIX[units]
        surface = _strength_series(series, "surface", units) or []
        targets = [
            float(t.get(f"target_{key}", t.get("target_mpa")))
            for t in (summary.get("strength") or {}).get("targets", [])
        ]
        handles += strength_ax.plot(
            time_h, _numbers(core), **CORE_STRENGTH_STYLE, label="Core strength"
        )
        if surface:
            handles += strength_ax.plot(
                time_h, _numbers(surface), **SURFACE_STRENGTH_STYLE, label="Near-surface strength"
            )
        finite = [v for v in _numbers(core) + _numbers(surface) if not math.isnan(v)]
        strength_ax.set_ylim(0.0, 1.6 * max([*finite, *targets, 1.0]))
        for target in targets:
            strength_ax.axhline(target, **TARGET_STYLE)
            text = _number_text(target) if units == "si" else f"{target:.0f}"
            strength_ax.annotate(
                f"target {text} {unit}",
                xy=(0.99, target),
                xycoords=strength_ax.get_yaxis_transform(),
                xytext=(0, 3),
                textcoords="offset points",
                horizontalalignment="right",
                color=TARGET_STYLE["color"],
                fontsize=FONT_PT - 0.5,
            )
        if targets:
            handles += strength_ax.plot([], [], **TARGET_STYLE, label="Target strength")
        strength_ax.set_ylabel(f"In-place strength ({unit})")
    ax.legend(handles=handles, loc="upper left", ncols=4, fontsize=FONT_PT - 1, frameon=False)
    return handles


def _marks(axes: Sequence[Axes], options: ChartOptions, span: tuple[float, float]) -> list:
    """Vertical removal and "now" marks across every panel, labelled in the top panel;
    returns legend handles."""
    handles: list = []
    top = axes[0]
    inside = [(h, text) for h, text in options.removals if span[0] <= h <= span[1]]
    for hour, text in inside:
        for ax in axes:
            ax.axvline(hour, **REMOVAL_STYLE)
        top.text(
            hour,
            0.03,
            f" {text} at {when_text(hour, options.placed_at)}",
            transform=top.get_xaxis_transform(),
            rotation=90,
            verticalalignment="bottom",
            horizontalalignment="right",
            fontsize=FONT_PT - 1.5,
            color="#444444",
            bbox=LABEL_BOX,
        )
    if inside:
        handles.append(Line2D([], [], **REMOVAL_STYLE, label="Planned removal"))
    now = options.now_h
    if now is not None and span[0] <= now <= span[1]:
        for ax in axes:
            ax.axvline(now, **NOW_STYLE)
        top.text(
            now,
            0.03,
            f" now {when_text(now, options.placed_at)}",
            transform=top.get_xaxis_transform(),
            rotation=90,
            verticalalignment="bottom",
            horizontalalignment="left",
            fontsize=FONT_PT - 1.5,
            bbox=LABEL_BOX,
        )
        handles.append(Line2D([], [], **NOW_STYLE, label="Now"))
    return handles


def chart_figure(
    body: dict[str, Any],
    measured: dict[str, list[tuple[float, float]]] | None = None,
    units: str = "si",
    options: ChartOptions | None = None,
    page_in: tuple[float, float] | None = None,
) -> Figure:
    """The chart as a matplotlib Figure (no canvas attached): temperatures on top, the
    core-to-surface differential below, and the screening panel when the body has one.
    ``page_in`` (width, height [inch]) places the chart at the top of a page of that size,
    centred across it. Build it inside :func:`rendering` (plain-text settings)."""
    if units not in UNIT_SUFFIX:
        raise ValueError(f"unknown units {units!r}; expected 'si' or 'us'")
    options = options or ChartOptions()
    if options.size not in SIZES:
        raise ValueError(f"unknown size {options.size!r}; expected one of {sorted(SIZES)}")
    suffix, unit = UNIT_SUFFIX[units], UNIT_LABEL[units]
    series, summary = body["series"], body["summary"]
    time_h = [float(t) for t in series["time_h"]]
    span = (time_h[0], time_h[-1])
    screening = _has_screening(series, units)
    twin = "cracking_index" in series and _strength_series(series, "core", units) is not None
    sensors_forecast: dict[str, list] = series.get("sensors") or {}
    sensor_ids = list(dict.fromkeys([*sensors_forecast, *(measured or {})]))
    footer = [
        line
        for text in [CAPTION, *_screening_cautions(summary)]
        for line in textwrap.wrap(text, FOOTER_WRAP_CHARS)
    ]

    legend_entries = 3 + (2 if sensor_ids else 0) + len(sensor_ids) + 2
    legend_rows = -(-legend_entries // LEGEND_COLUMNS)
    panels = ["temperature", "differential"] + (["screening"] if screening else [])
    heights = [PANEL_HEIGHTS_IN[p] for p in panels]
    top_in = MARGINS_IN["title"] + MARGINS_IN["legend_row"] * legend_rows + 0.05
    bottom_in = XAXIS_IN + FOOTER_LINE_IN * len(footer) + 0.08
    height = top_in + sum(heights) + PANEL_GAP_IN * (len(panels) - 1) + bottom_in
    right_in = MARGINS_IN["twin_right"] if twin else MARGINS_IN["right"]
    fig_w, fig_h = page_in or (FIGURE_WIDTH_IN, height)
    pad_x = (fig_w - FIGURE_WIDTH_IN) / 2
    pad_y = PAGE_TOP_IN if page_in else 0.0
    fig = Figure(figsize=(fig_w, fig_h))
    axes = fig.subplots(
        len(panels),
        1,
        sharex=True,
        height_ratios=heights,
        gridspec_kw={
            "left": (pad_x + MARGINS_IN["left"]) / fig_w,
            "right": 1 - (pad_x + right_in) / fig_w,
            "top": 1 - (pad_y + top_in) / fig_h,
            "bottom": (fig_h - pad_y - height + bottom_in) / fig_h,
            "hspace": PANEL_GAP_IN / (sum(heights) / len(panels)),
        },
    )
    top, middle, bottom = axes[0], axes[1], axes[-1]
    for ax in axes:
        ax.set_xlim(*span)

    core, surface, air = (_numbers(series[f"{k}_{suffix}"]) for k in ("core", "surface", "air"))
    handles = top.plot(time_h, core, **CORE_STYLE, label="Core (hottest point)")
    handles += top.plot(time_h, surface, **SURFACE_STYLE, label="Near surface")
    handles += top.plot(time_h, air, **AIR_STYLE, label="Air")
    curves = [(time_h, core), (time_h, surface), (time_h, air)]
    if sensor_ids:
        handles.append(Line2D([], [], color=GREY, linestyle="-", label="Sensor forecast: line"))
        handles.append(
            Line2D([], [], color=GREY, linestyle="none", marker="o", label="measured: marks")
        )
    for i, sensor_id in enumerate(sensor_ids):
        style = sensor_style(i)
        line_style = {"color": style["color"], "linestyle": style["linestyle"], "linewidth": 1.1}
        if sensor_id in sensors_forecast:
            values = _numbers(sensors_forecast[sensor_id])
            top.plot(time_h, values, **line_style)
            curves.append((time_h, values))
        points = (measured or {}).get(sensor_id, [])
        if points:
            xs, ys = [float(t) for t, _ in points], [float(v) for _, v in points]
            top.plot(
                xs,
                ys,
                linestyle="none",
                marker=style["marker"],
                markersize=3.5,
                markerfacecolor=style["color"],
                markeredgecolor="black",
                markeredgewidth=0.4,
                color=style["color"],
            )
            curves.append((xs, ys))
        handles.append(
            Line2D(
                [],
                [],
                **line_style,
                marker=style["marker"],
                markersize=4,
                markeredgecolor="black",
                markeredgewidth=0.4,
                label=f"Sensor {sensor_id}",
            )
        )
    top.set_ylabel(f"Temperature ({unit})")
    top.autoscale(axis="y")
    t_limit, t_first = _limit(summary["limits"], "max_temperature", suffix)
    _draw_limit(
        top,
        curves,
        t_limit,
        t_first,
        f"Max temperature limit {_number_text(t_limit)} {unit}",
        options.placed_at,
    )

    differential = _numbers(series[f"differential_{suffix}"])
    handles += middle.plot(time_h, differential, **DIFFERENTIAL_STYLE, label="Differential")
    d_limit, d_first = _limit(summary["limits"], "max_differential", suffix)
    _draw_limit(
        middle,
        [(time_h, differential)],
        d_limit,
        d_first,
        f"Differential limit {_number_text(d_limit)} {unit}",
        options.placed_at,
    )
    middle.set_ylabel(f"Core minus near surface ({unit})")
    if screening:
        _draw_screening(bottom, body, units, options)
    handles += _marks(axes, options, span)

    majors, labels, minors = _time_ticks(span, options.placed_at)
    bottom.xaxis.set_major_locator(FixedLocator(majors))
    bottom.set_xticklabels(labels)
    bottom.xaxis.set_minor_locator(FixedLocator(minors))
    bottom.xaxis.set_minor_formatter(NullFormatter())
    if options.placed_at is not None:
        bottom.set_xlabel(
            f"Local time ({_offset_text(options.placed_at)}) and hours since placement "
            f"({options.placed_at:%a %d %b %Y %H:%M})"
        )
    else:
        bottom.set_xlabel("Time since placement: days, hours")
    for ax in axes:
        ax.grid(True, which="major", linewidth=0.6, alpha=0.5)
        ax.grid(True, which="minor", axis="x", linewidth=0.4, alpha=0.25)
    fig.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=((pad_x + MARGINS_IN["left"]) / fig_w - 0.01, 1 - (pad_y + 0.36) / fig_h),
        ncols=LEGEND_COLUMNS,
        fontsize=FONT_PT - 0.5,
        frameon=False,
        handlelength=3.2,
        columnspacing=1.2,
        borderaxespad=0.0,
    )
    fig.text(
        (pad_x + 0.07) / fig_w,
        1 - (pad_y + 0.08) / fig_h,
        options.title or "Temperature forecast",
        fontsize=FONT_PT + 2.5,
        fontweight="bold",
        verticalalignment="top",
    )
    fig.text(
        (pad_x + 0.07) / fig_w,
        (fig_h - pad_y - height + 0.06) / fig_h,
        "\n".join(footer),
        fontsize=FONT_PT - 1.5,
        color="#444444",
        linespacing=1.3,
        verticalalignment="bottom",
    )
    return fig


@contextmanager
def rendering() -> Iterator[None]:
    """The lock and settings every chart is drawn under (plain text, repeatable SVG ids)."""
    with _RENDER_LOCK, matplotlib.rc_context(RC_PARAMS):
        yield


def render_chart(
    body: dict[str, Any],
    fmt: str,
    measured: dict[str, list[tuple[float, float]]] | None = None,
    units: str = "si",
    options: ChartOptions | None = None,
) -> bytes:
    """A forecast body drawn as an image.

    ``body`` is a forecast response body (see ``service.convert.forecast_json``) already in
    ``units``: ``"si"`` (degrees C, keys ``*_c``) or ``"us"`` (degrees F, keys ``*_f``).
    ``fmt`` is ``"svg"`` or ``"png"``. ``measured`` maps a sensor id to measured points
    ``(time [h since placement], temperature [C or F, as units])``. Raises ValueError for an
    unknown ``fmt``, ``units`` or ``options.size``.
    """
    if fmt not in SAVE_OPTIONS:
        raise ValueError(f"unknown chart format {fmt!r}; expected 'svg' or 'png'")
    options = options or ChartOptions()
    out = io.BytesIO()
    with rendering():
        fig = chart_figure(body, measured, units, options)
        canvas = FigureCanvasSVG(fig) if fmt == "svg" else FigureCanvasAgg(fig)
        extra = {"dpi": SIZES[options.size]} if fmt == "png" else {}
        canvas.print_figure(out, **SAVE_OPTIONS[fmt], **extra)
    return out.getvalue()
