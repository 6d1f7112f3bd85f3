"""US customary units at the edge of the service: requests in, forecast bodies and CSV out.

The service works in SI. A caller who prefers US customary units writes the same fields with a
US unit suffix (``thickness_ft`` for ``thickness_m``, ``temperature_f`` for ``temperature_c``)
and gets the forecast back the same way. This module only renames keys and converts values; it
imports nothing from Flask and knows nothing of the model, so the schema still validates the
SI request it produces and names the field that is wrong.

Renaming is by key suffix (see :data:`SUFFIXES`); a few keys are exceptions (see
:data:`EXCEPTIONS`). Temperatures need their context: a value is a temperature *difference*
(converted by the factor 1.8 alone) when its key or any ancestor key contains one of
:data:`DIFFERENCE_WORDS` (or has a word of :data:`DIFFERENCE_TOKENS`), or its key starts with
``margin_`` or ends with ``rise_c``; every other ``_c`` value is an absolute temperature
(T_F = 1.8 T_C + 32). Dicts keyed by names (:data:`NAME_KEYED`) keep their keys.

Conversion factors are those of NIST Special Publication 811 (2008 edition), *Guide for the
Use of the International System of Units (SI)*, Appendix B: B.8, factors for units listed
alphabetically, and B.9, factors for units listed by kind of quantity. Each constant is the
number of SI units in one US unit.
"""

import csv
import io
import math
import re
from collections.abc import Callable, Mapping
from typing import Any, NamedTuple

from service.csvout import SafeCsvWriter
from service.rounding import TEMPERATURE_DIGITS, significant

# --- Conversion factors: SI units per US customary unit -------------------------------------

FOOT_M = 0.3048
"""1 ft = 0.3048 m exactly [m/ft]."""
# NIST SP 811 (2008), App. B.8: foot (ft) to meter (m), 3.048 E-01 (exact).

INCH_M = 0.0254
"""1 in = 0.0254 m exactly [m/in]."""
# NIST SP 811 (2008), App. B.8: inch (in) to meter (m), 2.54 E-02 (exact).

MPH_M_S = 0.44704
"""1 mi/h = 0.44704 m/s exactly [(m/s)/(mi/h)]."""
# NIST SP 811 (2008), App. B.8: mile per hour (mi/h) to meter per second (m/s),
# 4.4704 E-01 (exact).
PSI_MPA = 6.894757e-3
"""1 pound-force per square inch in MPa (NIST SP 811, Appendix B.9: 1 psi = 6.894757 kPa)."""

LB_YD3_KG_M3 = 0.5932764
"""1 lb/yd3 = 0.5932764 kg/m3 [(kg/m3)/(lb/yd3)]."""
# NIST SP 811 (2008), App. B.8: pound per cubic yard (lb/yd3) to kilogram per cubic meter
# (kg/m3), 5.932 764 E-01 (0.45359237 kg / 0.9144**3 m3 = 0.593 276 42..., rounded; not
# 5.932 763).

LB_FT3_KG_M3 = 16.01846
"""1 lb/ft3 = 16.01846 kg/m3 [(kg/m3)/(lb/ft3)]."""
# NIST SP 811 (2008), App. B.8: pound per cubic foot (lb/ft3) to kilogram per cubic meter
# (kg/m3), 1.601 846 E+01.

BTU_LB_J_KG = 2326.0
"""1 Btu_IT/lb = 2326 J/kg exactly [(J/kg)/(Btu_IT/lb)]."""
# NIST SP 811 (2008), App. B.8: British thermal unit_IT per pound (Btu_IT/lb) to joule per
# kilogram (J/kg), 2.326 E+03 (exact).

BTU_LBF_J_KGK = 4186.8
"""1 Btu_IT/(lb F) = 4186.8 J/(kg K) exactly [(J/(kg K))/(Btu_IT/(lb F))]."""
# NIST SP 811 (2008), App. B.8: British thermal unit_IT per pound degree Fahrenheit
# [Btu_IT/(lb . F)] to joule per kilogram kelvin [J/(kg . K)], 4.1868 E+03 (exact).

BTU_HFT2F_W_M2K = 5.678263
"""1 Btu_IT/(h ft2 F) = 5.678263 W/(m2 K) [(W/(m2 K))/(Btu_IT/(h ft2 F))]."""
# NIST SP 811 (2008), App. B.8: British thermal unit_IT per hour square foot degree
# Fahrenheit [Btu_IT/(h . ft2 . F)] to watt per square meter kelvin [W/(m2 . K)], 5.678 263 E+00.

BTU_HFTF_W_MK = 1.730735
"""1 Btu_IT/(h ft F) = 1.730735 W/(m K) [(W/(m K))/(Btu_IT/(h ft F))]."""
# NIST SP 811 (2008), App. B.8: British thermal unit_IT foot per hour square foot degree
# Fahrenheit [Btu_IT . ft/(h . ft2 . F)] to watt per meter kelvin [W/(m . K)], 1.730 735 E+00.

HFT2F_BTU_M2K_W = 0.1761102
"""1 h ft2 F/Btu_IT = 0.1761102 m2 K/W [(m2 K/W)/(h ft2 F/Btu_IT)] (thermal insulance)."""
# NIST SP 811 (2008), App. B.8: degree Fahrenheit hour square foot per British thermal
# unit_IT (F . h . ft2/Btu_IT) to square meter kelvin per watt (m2 . K/W), 1.761 102 E-01.

BTU_HFT2_W_M2 = 3.154591
"""1 Btu_IT/(h ft2) = 3.154591 W/m2 [(W/m2)/(Btu_IT/(h ft2))]."""
# NIST SP 811 (2008), App. B.8 and B.9 (heat flow rate per unit area): British thermal unit_IT per
# hour square foot [Btu_IT/(h . ft2)] to watt per square meter (W/m2), 3.154 591 E+00.

F_PER_C = 1.8
"""Degrees Fahrenheit per degree Celsius (or kelvin) of temperature difference [F/C]."""
# NIST SP 811 (2008), App. B.9, temperature interval: degree Fahrenheit (F) to kelvin (K),
# 5.555 556 E-01 = 1/1.8; a Celsius degree equals a kelvin.

F_AT_0_C = 32.0
"""Fahrenheit temperature of 0 C [F]: t/F = 1.8 t/C + 32."""
# NIST SP 811 (2008), App. B.9, temperature: t/C = (t/F - 32)/1.8.


# --- Renaming table -------------------------------------------------------------------------


class Suffix(NamedTuple):
    """One renaming rule: an SI key suffix, its US twin and the SI units per US unit.

    For temperatures (``kind == "temperature"``) ``si_per_us`` is the factor for differences;
    absolute temperatures also take the 32 F offset.
    """

    si: str
    us: str
    si_per_us: float
    kind: str


TEMPERATURE = "temperature"
"""``Suffix.kind`` of a temperature: absolute or a difference, depending on the key."""

LINEAR = "linear"
"""``Suffix.kind`` of a quantity converted by a factor alone."""

SUFFIXES: tuple[Suffix, ...] = tuple(
    sorted(
        (
            Suffix("_r_m2k_w", "_r_hft2f_btu", HFT2F_BTU_M2K_W, LINEAR),  # R-value
            Suffix("_w_m2k", "_btu_hft2f", BTU_HFT2F_W_M2K, LINEAR),  # film coefficient
            Suffix("_kg_m3", "_lb_yd3", LB_YD3_KG_M3, LINEAR),  # mix contents
            Suffix("_j_kgk", "_btu_lbf", BTU_LBF_J_KGK, LINEAR),  # specific heat
            Suffix("_w_mk", "_btu_hftf", BTU_HFTF_W_MK, LINEAR),  # conductivity
            Suffix("_j_kg", "_btu_lb", BTU_LB_J_KG, LINEAR),  # heat of hydration
            Suffix("_w_m2", "_btu_hft2", BTU_HFT2_W_M2, LINEAR),  # solar irradiance
            Suffix("_m_s", "_mph", MPH_M_S, LINEAR),  # wind speed
            Suffix("_mpa", "_psi", PSI_MPA, LINEAR),  # strength and stress
            Suffix("_ch", "_fh", 1.0 / F_PER_C, LINEAR),  # Nurse-Saul factor (difference x h)
            Suffix("_m", "_ft", FOOT_M, LINEAR),  # lengths
            Suffix("_c", "_f", 1.0 / F_PER_C, TEMPERATURE),  # temperatures
        ),
        key=lambda s: -len(s.si),
    )
)
"""Renaming by key suffix, SI -> US, longest SI suffix first so that ``_kg_m3`` is tried
before any shorter suffix it ends with."""

EXCEPTIONS: tuple[tuple[str, Suffix], ...] = (
    ("near_surface_depth_m", Suffix("_m", "_in", INCH_M, LINEAR)),
    ("surface_cell_m", Suffix("_m", "_in", INCH_M, LINEAR)),
    ("density_kg_m3", Suffix("_kg_m3", "_lb_ft3", LB_FT3_KG_M3, LINEAR)),
)
"""Keys (whole names, or the end of a name after an underscore) whose US twin differs from
the suffix rule: small lengths in inches, densities in lb/ft3."""

UNCHANGED_SUFFIXES = ("_h", "_pct", "_j_mol", "_m2_kg")
"""Suffixes kept in US requests and responses: hours, percentages, activation energy [J/mol]
and Blaine fineness [m2/kg]. Checked before :data:`SUFFIXES`."""

DIFFERENCE_WORDS = ("differential", "spread")
"""A ``_c`` value whose key or any ancestor key contains one of these is a temperature
difference."""

DIFFERENCE_TOKENS = ("rms", "rmse", "error", "range")
"""A ``_c`` value whose key or any ancestor key has one of these as a whole ``_``-separated
word is a temperature difference too: fit errors, such as a calibration's RMS error in C, and
ranges such as the spreadsheet query's daily ``air_range_c``."""

NAME_KEYED = {
    "sensors": "_c",
    "faces_c": "_c",
    "faces_equivalent_age_h": "_h",
    "sensors_equivalent_age_h": "_h",
}
"""Dicts keyed by names (sensor ids, face names), with the SI suffix of their values. Their
keys are kept; the dict's own key is renamed by the usual rule (``faces_c`` -> ``faces_f``)."""

ROUNDED_SECTIONS = ("summary", "series")
"""Top-level sections of a forecast body whose numbers the service rounds."""

DIGITS = TEMPERATURE_DIGITS
"""Decimals kept in converted values of :data:`ROUNDED_SECTIONS` and of CSV cells (0.01 F);
converted values elsewhere in a body keep 6 significant digits (service/rounding.py)."""


def _si_rule(key: str) -> Suffix | None:
    """The rule that applies to an SI key, or None when it has no convertible unit."""
    for name, rule in EXCEPTIONS:
        if key == name or key.endswith("_" + name):
            return rule
    if key.endswith(UNCHANGED_SUFFIXES):
        return None
    for rule in SUFFIXES:
        if key.endswith(rule.si) and len(key) > len(rule.si):
            return rule
    return None


def key_to_us(key: str) -> str:
    """The US name of an SI key; keys without a convertible unit are returned unchanged.

    Parameters
    ----------
    key : str
        A field name in SI, e.g. ``"thickness_m"``.

    Returns
    -------
    str
        Its US twin, e.g. ``"thickness_ft"``.
    """
    rule = _si_rule(key)
    return key if rule is None else key[: -len(rule.si)] + rule.us


def key_to_si(key: str) -> str | None:
    """The SI name of a US key, or None when the key is not the US twin of any SI name.

    A key is recognised only if renaming the candidate SI name back gives the same key, so
    ``density_lb_yd3`` or ``near_surface_depth_ft`` are not recognised.

    Parameters
    ----------
    key : str
        A field name in US customary units, e.g. ``"thickness_ft"``.

    Returns
    -------
    str or None
        Its SI twin, e.g. ``"thickness_m"``.
    """
    candidates = [rule for _, rule in EXCEPTIONS] + list(SUFFIXES)
    for rule in candidates:
        if key.endswith(rule.us) and len(key) > len(rule.us):
            si_key = key[: -len(rule.us)] + rule.si
            if _si_rule(si_key) is not None and key_to_us(si_key) == key:
                return si_key
    return None


def is_temperature_difference(key: str, ancestors: tuple[str, ...] = ()) -> bool:
    """Whether an SI ``_c`` key holds a temperature difference rather than a temperature.

    Parameters
    ----------
    key : str
        The SI key, e.g. ``"margin_c"``.
    ancestors : tuple of str
        The SI keys above it, outermost first, e.g. ``("summary", "limits",
        "max_differential_c")``.

    Returns
    -------
    bool
        True for differences (converted by x1.8, no offset), False for temperatures.
    """
    if key.startswith("margin_") or key.endswith("rise_c"):
        return True
    names = (*ancestors, key)
    if any(word in name for name in names for word in DIFFERENCE_WORDS):
        return True
    return any(token in DIFFERENCE_TOKENS for name in names for token in name.split("_"))


def _number_to_us(value: float, rule: Suffix, difference: bool) -> float:
    """An SI number in the US unit of ``rule``."""
    if rule.kind == TEMPERATURE:
        return value * F_PER_C + (0.0 if difference else F_AT_0_C)
    return value / rule.si_per_us


def _number_to_si(value: float, rule: Suffix, difference: bool) -> float:
    """A US number in the SI unit of ``rule``."""
    if rule.kind == TEMPERATURE:
        return (value - (0.0 if difference else F_AT_0_C)) / F_PER_C
    return value * rule.si_per_us


def _as_number(value: Any) -> float | None:
    """A value that is a number (or a numeric string), or None (booleans are not numbers)."""
    if isinstance(value, bool):
        return None  # not a number: left for the schema to reject
    if isinstance(value, int | float):
        return float(value)
    if isinstance(value, str):
        try:
            return float(value)
        except ValueError:
            return None
    return None


class _Walk(NamedTuple):
    """How to convert: direction and decimals kept (None: full precision, or 6 significant
    digits with ``tidy``)."""

    to_us: bool
    digits: int | None
    tidy: bool = False


def _convert_value(
    value: Any, rule: Suffix | None, difference: bool, walk: _Walk, path: tuple[str, ...]
) -> Any:
    """Convert a value held under a key with a unit: a number, None or a (nested) list."""
    if value is None:
        return None
    if isinstance(value, list | tuple):
        return [_convert_value(v, rule, difference, walk, path) for v in value]
    if isinstance(value, Mapping):
        return _walk_dict(value, walk, path)
    number = _as_number(value)
    if number is None or rule is None:
        return value  # not a number: left for the schema to reject
    convert: Callable[[float, Suffix, bool], float] = _number_to_us if walk.to_us else _number_to_si
    result = convert(number, rule, difference)
    if walk.digits is not None and math.isfinite(result):
        result = round(result, walk.digits)
    elif walk.tidy:
        result = significant(result)
    return result


def _walk(value: Any, walk: _Walk, path: tuple[str, ...]) -> Any:
    """Convert any JSON value; ``path`` holds the SI keys above it."""
    if isinstance(value, Mapping):
        return _walk_dict(value, walk, path)
    if isinstance(value, list | tuple):
        return [_walk(v, walk, path) for v in value]
    return value


def _walk_dict(obj: Mapping, walk: _Walk, path: tuple[str, ...]) -> dict:
    """Convert the keys and values of one JSON object."""
    out: dict = {}
    for key, value in obj.items():
        if not isinstance(key, str):
            out[key] = _walk(value, walk, path)
            continue
        converted = True
        if walk.to_us:
            si_key, new_key = key, key_to_us(key)
        else:
            found = key_to_si(key)
            # A key that is not a US name, or a US name whose SI twin is also given, passes
            # through unchanged and unconverted, so that the schema rejects it by the name the
            # caller wrote (an SI name is taken as SI).
            # Without a US name, only a name without a unit (not an SI name) is "converted".
            converted = _si_rule(key) is None if found is None else found not in obj
            si_key = found if converted and found is not None else key
            new_key = si_key
        if converted and si_key in NAME_KEYED and isinstance(value, Mapping):
            rule = _si_rule("value" + NAME_KEYED[si_key])
            out[new_key] = {
                name: _convert_value(v, rule, False, walk, (*path, si_key))
                for name, v in value.items()
            }
            continue
        rule = _si_rule(si_key) if converted else None
        if rule is None:
            out[new_key] = _walk(value, walk, (*path, si_key))
        elif isinstance(value, Mapping):
            # An object under a key with a unit holds fields (summary.limits.max_temperature_c).
            out[new_key] = _walk_dict(value, walk, (*path, si_key))
        else:
            difference = rule.kind == TEMPERATURE and is_temperature_difference(si_key, path)
            out[new_key] = _convert_value(value, rule, difference, walk, (*path, si_key))
    return out


# --- Public functions -----------------------------------------------------------------------


def request_to_si(payload: Any) -> Any:
    """A request written in US customary units, renamed and converted to SI.

    Keys with a US suffix become their SI twins and their values are converted (numbers,
    numeric strings, hourly lists; None is kept). Keys it does not recognise, and US keys whose
    SI twin is also given, pass through unchanged so that the schema rejects them by name.

    Parameters
    ----------
    payload : Any
        The decoded JSON body, e.g. ``{"element": {"shape": "slab", "thickness_ft": 6.5617}}``
        with lengths [ft], temperatures [F], mix contents [lb/yd3], density [lb/ft3], ...

    Returns
    -------
    Any
        A new object with SI names and values, e.g. ``{"element": {"shape": "slab",
        "thickness_m": 2.0}}`` with lengths [m], temperatures [C], contents [kg/m3], ...
    """
    return _walk(payload, _Walk(to_us=False, digits=None), ())


def request_to_us(payload: Any) -> Any:
    """An SI request renamed and converted to US customary units (inverse of
    :func:`request_to_si`, e.g. to echo a scenario back to a US caller).

    Parameters
    ----------
    payload : Any
        The decoded JSON body in SI (lengths [m], temperatures [C], ...).

    Returns
    -------
    Any
        A new object with US names and values (lengths [ft], temperatures [F], ...), not
        rounded.
    """
    return _walk(payload, _Walk(to_us=True, digits=None), ())


def body_to_us(body: dict) -> dict:
    """A forecast response body in SI, renamed and converted to US customary units.

    Temperatures [C] become [F] (T_F = 1.8 T_C + 32), differentials, spreads and margins are
    differences [F] (x1.8), Nurse-Saul factors [C h] become [F h], hours and dimensionless
    values are unchanged. ``series.sensors`` and ``series.faces_c`` keep their keys (sensor
    ids, face names); ``faces_c`` is renamed ``faces_f``. Converted values in ``summary`` and
    ``series``, which the service rounds, are rounded to 2 decimals; others (the hydration
    parameters, the assumptions) keep 6 significant digits. The ``field`` of each entry of
    ``assumptions`` is renamed to the US path.

    Parameters
    ----------
    body : dict
        The SI body of a forecast (see ``service.convert.forecast_json``).

    Returns
    -------
    dict
        A new body with US names and values; ``body`` is not modified.
    """
    out: dict = {}
    for key, value in body.items():
        digits = DIGITS if key in ROUNDED_SECTIONS else None
        out.update(_walk_dict({key: value}, _Walk(to_us=True, digits=digits, tidy=True), ()))
    if isinstance(out.get("cautions"), list):
        out["cautions"] = [text_to_us(c) if isinstance(c, str) else c for c in out["cautions"]]
    if isinstance(out.get("assumptions"), list):
        out["assumptions"] = [
            {**a, "field": field_path_to_us(a["field"])} if isinstance(a, dict) else a
            for a in out["assumptions"]
        ]
    return out


_TEMPERATURE_IN_TEXT = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?) ?C\b(?! h\b)")
"""A temperature written in a sentence: ``70 C``, ``-5.5 C`` (not ``C3S`` or ``C h``)."""
_DIFFERENCE_NEAR = re.compile(r"differential|difference|spread|margin|rise|drop", re.I)


def text_to_us(text: str) -> str:
    """A sentence (a caution, a note) with its temperatures in F: ``70 C peak`` becomes
    ``158 F peak``; a value next to the words differential, difference, spread, margin, rise or
    drop (or after "by") is a difference (x1.8)."""

    def convert(match: re.Match[str]) -> str:
        value = float(match.group(1))
        before = text[max(0, match.start() - 24) : match.start()].split(",")[-1]
        after = text[match.end() : match.end() + 16].split(",")[0]
        difference = before.endswith("by ") or bool(_DIFFERENCE_NEAR.search(f"{before} {after}"))
        shown = value * 1.8 if difference else value * 1.8 + 32.0
        return f"{significant(round(shown, 2)):g} F"

    return _TEMPERATURE_IN_TEXT.sub(convert, text)


def field_path_to_us(path: str, written: Any = None) -> str:
    """A dotted SI field path (from a validation error) as the US path the caller wrote.

    Parameters
    ----------
    path : str
        The SI path, e.g. ``"element.thickness_m"`` or ``"ambient.air_temperature_c.3"``;
        list indexes and names without units are kept.
    written : Any, optional
        The request as the caller sent it. When given, a part that the caller wrote with its
        SI name (not its US twin) is reported as written.

    Returns
    -------
    str
        The US path, e.g. ``"element.thickness_ft"`` or ``"ambient.air_temperature_f.3"``.
    """
    node = written
    parts = []
    for part in path.split("."):
        name = part if part.isdigit() else key_to_us(part)
        if isinstance(node, Mapping):
            if name not in node and part in node:
                name = part
            node = node.get(name)
        elif isinstance(node, list) and part.isdigit() and int(part) < len(node):
            node = node[int(part)]
        else:
            node = None
        parts.append(name)
    return ".".join(parts)


def _csv_rule(name: str) -> tuple[Suffix | None, bool]:
    """The rule of a CSV column and whether it holds temperature differences."""
    if name.startswith("sensor_") and name.endswith("_c"):
        return _si_rule("sensor_c"), False  # sensor ids are names, not quantities
    rule = _si_rule(name)
    difference = rule is not None and rule.kind == TEMPERATURE
    return rule, difference and is_temperature_difference(name)


def csv_header_to_us(name: str) -> str:
    """The US name of a forecast CSV column.

    Parameters
    ----------
    name : str
        An SI column name, e.g. ``"core_c"``, ``"sensor_S1_c"``, ``"time_h"``.

    Returns
    -------
    str
        Its US name, e.g. ``"core_f"``, ``"sensor_S1_f"``, ``"time_h"``.
    """
    if name.startswith("sensor_") and name.endswith("_c"):
        return name[:-2] + "_f"
    return key_to_us(name)


def csv_to_us(csv_text: str) -> str:
    """A forecast CSV with an SI header, renamed and converted to US customary units.

    Temperature columns [C] become [F]; ``differential_c`` and ``spread_c`` are differences
    (x1.8); ``sensor_<id>_c`` columns are temperatures whatever the id; hours and degrees of
    hydration are unchanged. Converted cells are rounded to 2 decimals; empty or non-numeric
    cells are kept.

    Parameters
    ----------
    csv_text : str
        CSV text whose first row is the header (see ``service.convert.forecast_csv``).

    Returns
    -------
    str
        The CSV with US column names and values, rows ending in ``\\n``.
    """
    rows = list(csv.reader(io.StringIO(csv_text)))
    if not rows:
        return csv_text
    header = rows[0]
    rules = [_csv_rule(name) for name in header]
    walk = _Walk(to_us=True, digits=DIGITS)
    out = io.StringIO()
    writer = SafeCsvWriter(out)
    writer.writerow([csv_header_to_us(name) for name in header])
    for row in rows[1:]:
        cells = []
        for i, cell in enumerate(row):
            rule, difference = rules[i] if i < len(rules) else (None, False)
            if rule is None or cell.strip() == "":
                cells.append(cell)
            else:
                cells.append(_convert_value(cell, rule, difference, walk, ()))
        writer.writerow(cells)
    return out.getvalue()
