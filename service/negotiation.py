"""Content negotiation: which offered format a request gets (``?format=`` or ``Accept``).

One rule for every endpoint that offers more than one format:

- ``?format=NAME`` wins (an unknown name is a 422 naming ``format``);
- without an ``Accept`` header the endpoint's default format is answered;
- otherwise the offered format with the highest ``Accept`` quality (RFC 9110, section 12.5.1;
  the most specific matching range sets each type's quality) is answered, the default one on a
  tie, so that ``*/*`` and browser-style headers (``text/html,...,*/*;q=0.8``) get the default;
- an ``Accept`` header that gives every offered type quality 0 gets 406 (problem details).
"""

from collections.abc import Mapping

from flask import g, request
from werkzeug.exceptions import NotAcceptable

from service.errors import InvalidScenarioError


def choose_format(offered: Mapping[str, str], default: str, allow_param: bool = True) -> str:
    """The name of the format to answer, from ``offered`` (name -> media type).

    Parameters
    ----------
    offered : name -> media type, in order of preference after ``default``
    default : the name answered to ``*/*``, to no ``Accept`` header and on ties
    allow_param : whether ``?format=`` selects a format here

    Raises
    ------
    InvalidScenarioError
        ``?format=`` names no offered format (422).
    NotAcceptable
        The ``Accept`` header accepts none of the offered media types (406).
    """
    fmt = request.args.get("format") if allow_param else None
    if fmt is not None:
        if fmt not in offered:
            raise InvalidScenarioError(
                [{"field": "format", "message": f"expected one of {sorted(offered)}"}]
            )
        return fmt
    accept = request.accept_mimetypes
    if not accept:
        return default
    quality = {name: accept.quality(media) for name, media in offered.items()}
    best = max(quality.values())
    if best <= 0:
        raise NotAcceptable(
            f"the Accept header ({request.headers.get('Accept', '')!r}) accepts none of the "
            f"offered media types: {', '.join(offered.values())}"
        )
    if quality[default] == best:
        return default
    return next(name for name, q in quality.items() if q == best)


UNITS = ("si", "us")


def requested_units(us_offered: bool = True) -> str:
    """The units a request asks for with ``?units=`` ("si" by default, or "us").

    Raises
    ------
    InvalidScenarioError
        ``units`` is neither "si" nor "us", or is "us" where the endpoint does not offer US
        customary units (a 422 naming ``units`` and saying to use SI), so that no endpoint
        quietly answers SI to a caller who asked for US units.
    """
    units = request.args.get("units", "si")
    g.units = units if units in UNITS else "si"  # error field names in the caller's units
    if units not in UNITS:
        raise InvalidScenarioError([{"field": "units", "message": "expected 'si' or 'us'"}])
    if units == "us" and not us_offered:
        raise InvalidScenarioError(
            [
                {
                    "field": "units",
                    "message": "US customary units are not offered by this endpoint: send and "
                    "read SI units (C, m, kg/m3)",
                }
            ]
        )
    return units
