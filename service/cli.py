"""Command line: `pourheat forecast` for cron jobs and spreadsheets, `pourheat serve` (gunicorn).

A thin shell around :func:`service.forecasting.run_forecast`, so the command line and the HTTP
service validate and answer the same way. Exit codes of ``pourheat forecast``:

    0  the forecast ran (and, with --fail-on-limit, every limit is met)
    1  an output file (--csv, --json) could not be written
    2  bad input: unreadable file, invalid JSON, or an invalid scenario (each "field: message"
       is printed to stderr); also argparse's usage errors
    3  --fail-on-limit was given and a limit is forecast to be exceeded, or is not settled
       within the forecast (its maximum near the end and still rising, or a removal's cooling
       shock not over: verdict "unsettled")
"""

import argparse
import json
import os
import sys
from pathlib import Path
from typing import Any, TextIO

from pydantic import ValidationError

from service.convert import forecast_csv
from service.errors import InvalidScenarioError, validation_errors
from service.forecasting import COMMAND_LINE_MAX_CELL_STEPS, run_forecast
from service.limits import repeated_keys
from service.progress_display import ProgressDisplay

EXIT_OK = 0
EXIT_OUTPUT_ERROR = 1
EXIT_BAD_INPUT = 2
EXIT_LIMIT_EXCEEDED = 3
EXIT_READINGS_STALE = 4

DEFAULT_PORT = 8000
APP_SPEC = "service.app:create_app()"
GUNICORN_CONF = Path("deploy") / "gunicorn.conf.py"

EPILOG = """exit codes: 0 ok; 1 an output file could not be written; 2 bad input (unreadable file,
invalid JSON, invalid scenario: each "field: message" on stderr); 3 --fail-on-limit and a limit
is forecast to be exceeded or not settled within the forecast. Forecasts are estimates: limits
come from the governing specification and the engineer of record; confirm by monitoring."""


class InputError(Exception):
    """The scenario could not be read or parsed; the message says why."""


def read_scenario(source: str, stdin: TextIO | None = None) -> Any:
    """The JSON document in file ``source`` ("-" reads standard input)."""
    try:
        if source == "-":
            text = (stdin or sys.stdin).read()
            name = "<stdin>"
        else:
            text = Path(source).read_text(encoding="utf-8")
            name = source
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"cannot read {source}: {error}") from error
    try:
        payload = json.loads(text)
    except json.JSONDecodeError as error:
        raise InputError(f"{name} is not valid JSON: {error}") from error
    repeated = repeated_keys(text)
    if repeated:
        raise InputError(f"{name} repeats the key(s) {', '.join(repeated)} in one object")
    return payload


def max_cell_steps_setting() -> float:
    """The compute budget: POURHEAT_MAX_CELL_STEPS as for the service, else the command line's
    default (larger than the service's: no request cap applies here)."""
    value = os.environ.get("POURHEAT_MAX_CELL_STEPS")
    if not value:
        return COMMAND_LINE_MAX_CELL_STEPS
    try:
        return float(value)
    except ValueError:
        return COMMAND_LINE_MAX_CELL_STEPS


def _value(record: dict[str, Any], stem: str, suffix: str) -> Any:
    """``record[stem_suffix]``, falling back to ``stem_c`` (a converter may keep the SI key)."""
    return record.get(f"{stem}_{suffix}", record.get(f"{stem}_c"))


def _limit_name(key: str) -> str:
    """A limit's key as words: "max_temperature_c" -> "max temperature"."""
    return key.removesuffix("_c").removesuffix("_f").replace("_", " ")


def _strength(record: dict[str, Any], stem: str) -> tuple[float | None, str]:
    """``record[stem_psi]`` with unit "psi" if present (a US body), else ``record[stem_mpa]``
    with "MPa"; the value is None when neither is given."""
    if record.get(f"{stem}_psi") is not None:
        return record[f"{stem}_psi"], "psi"
    return record.get(f"{stem}_mpa"), "MPa"


def _screening_lines(s: dict[str, Any], unit: str) -> list[str]:
    """Summary lines for in-place strength and cracking screening, when the summary has them.
    Strengths are in psi where the body's keys end ``_psi`` (a US body), else in MPa;
    temperatures are in ``unit``."""
    lines = []
    cautions: list[str] = []
    if "strength" in s:
        strength = s["strength"]
        for target in strength.get("targets", []):
            value, shown = _strength(target, "target")
            amount = f"{value:.0f}" if shown == "psi" else f"{value:g}"
            reached = ", ".join(
                f"{where} {hours:.1f} h" if hours is not None else f"{where} not reached"
                for where, hours in target["reached_h"].items()
            )
            lines.append(f"Strength {amount} {shown} reached: {reached}")
        finals = []
        for where in ("core", "surface"):
            value, shown = _strength(strength, f"final_{where}")
            if value is not None:
                amount = f"{value:.0f}" if shown == "psi" else f"{value:.1f}"
                finals.append(f"{where} {amount} {shown}")
        if finals:
            lines.append(f"Final in-place strength: {', '.join(finals)}")
        cautions.append(strength.get("caution"))
    if "cracking" in s:
        cracking = s["cracking"]
        line = f"Cracking index (screening): max {cracking['max_index']:.2f}"
        if cracking.get("max_index_time_h") is not None:
            line += f" at {cracking['max_index_time_h']:g} h"
        allowable = _value(cracking, "min_allowable_differential", unit.lower())
        if allowable is not None:
            line += f"; smallest allowable differential {allowable:.1f} {unit}"
        lines.append(line)
        cautions.append(cracking.get("caution"))
    unique = [c for i, c in enumerate(cautions) if c and c not in cautions[:i]]
    lines.extend(f"Caution: {caution}" for caution in unique)
    return lines


def format_summary(body: dict[str, Any], unit: str = "C") -> str:
    """A short human summary of a forecast body: peak, differential, limits, cautions, and
    in-place strength and cracking screening when the forecast has them.

    ``unit`` is "C" for the SI body, "F" for a body converted by ``service.units.body_to_us``
    (whose strengths, keys ``*_psi``, are shown in psi).
    """
    s = body["summary"]
    suffix = unit.lower()
    lines = [
        f"Peak temperature: {_value(s, 'peak_temperature', suffix):.1f} {unit} "
        f"at {s['peak_time_h']:.1f} h",
        f"Max differential: {_value(s, 'max_differential', suffix):.1f} {unit} "
        f"at {s['max_differential_time_h']:.1f} h",
    ]
    for key, status in s["limits"].items():
        limit = _value(status, "limit", suffix)
        margin = _value(status, "margin", suffix)
        if status.get("verdict") == "unsettled":
            verdict = (
                f"NOT SETTLED within the forecast (margin {margin:.1f} {unit} so far, not "
                "counted as met): extend duration_h"
            )
        elif status["met"]:
            verdict = f"met (margin {margin:.1f} {unit})"
        else:
            verdict = f"EXCEEDED by {-margin:.1f} {unit}"
            if status.get("first_exceeded_h") is not None:
                verdict += f", first at {status['first_exceeded_h']:.1f} h"
        lines.append(f"Limit {_limit_name(key)} {limit:g} {unit}: {verdict}")
    lines.extend(_screening_lines(s, unit))
    assumed = [a["field"] for a in body.get("assumptions", [])]
    if assumed:
        lines.append(f"Assumed (defaults applied; see the JSON output): {', '.join(assumed)}")
    lines.extend(f"Caution: {caution}" for caution in body.get("cautions", []))
    return "\n".join(lines)


def limits_exceeded(body: dict[str, Any]) -> list[str]:
    """Names of the limits the forecast does not show as met: exceeded (``met`` false) or not
    settled within the forecast (``met`` null, verdict "unsettled")."""
    return [
        _limit_name(k) + (" (not settled)" if v["met"] is None else "")
        for k, v in body["summary"]["limits"].items()
        if v["met"] is not True
    ]


def _print_errors(errors: list[dict[str, str]]) -> None:
    for e in errors:
        print(f"{e['field']}: {e['message']}", file=sys.stderr)


def cmd_forecast(args: argparse.Namespace) -> int:
    """``pourheat forecast``: run one scenario, print a summary, write the requested files."""
    try:
        payload = read_scenario(args.scenario)
    except InputError as error:
        print(f"pourheat: {error}", file=sys.stderr)
        return EXIT_BAD_INPUT
    units = None
    if args.units == "us":
        try:
            from service import units  # lazy: only the US path needs it
        except ImportError as error:
            print(f"pourheat: --units us is not available: {error}", file=sys.stderr)
            return EXIT_BAD_INPUT
    shown = ProgressDisplay("forecast", "h", args.quiet)
    try:
        _, body = run_forecast(
            units.request_to_si(payload) if units is not None else payload,
            max_cell_steps_setting(),
            progress=shown,
        )
    except (ValidationError, InvalidScenarioError) as error:
        errors = validation_errors(error) if isinstance(error, ValidationError) else error.errors
        if units is not None:  # name the fields as the caller wrote them, as the API does
            errors = [{**e, "field": units.field_path_to_us(e["field"], payload)} for e in errors]
        _print_errors(errors)
        return EXIT_BAD_INPUT
    finally:
        shown.close()

    exceeded = limits_exceeded(body)  # decided on the SI body, whatever the output units
    csv_text = forecast_csv(body) if args.csv else None
    if units is not None:
        body = units.body_to_us(body)
        csv_text = units.csv_to_us(csv_text) if csv_text is not None else None
    try:
        if csv_text is not None:
            Path(args.csv).write_text(csv_text, encoding="utf-8")
        if args.json:
            Path(args.json).write_text(json.dumps(body, indent=2) + "\n", encoding="utf-8")
    except OSError as error:
        print(f"pourheat: cannot write output: {error}", file=sys.stderr)
        return EXIT_OUTPUT_ERROR

    print(format_summary(body, "F" if units is not None else "C"))
    if exceeded and args.fail_on_limit:
        print(f"pourheat: limit exceeded: {', '.join(exceeded)}", file=sys.stderr)
        return EXIT_LIMIT_EXCEEDED
    return EXIT_OK


UNMET_STATUSES = ("missed_over_range", "peak_limit_binds")


def format_plan(body: dict[str, Any]) -> str:
    """A short human summary of a plan body: each control's value or why there is none."""
    lines = []
    for control, answer in body["controls"].items():
        value = answer.get("value")
        shown = f"{value:g}" if value is not None else "none"
        tolerance = answer.get("tolerance")
        within = f" (+-{tolerance:g})" if tolerance is not None and value is not None else ""
        lines.append(f"{control}: {shown}{within} [{answer['status']}] {answer['note']}")
    if "precooling" in body:
        pre = body["precooling"]
        line = f"Fresh concrete {pre['fresh_concrete_c']} C"
        if pre.get("target_c") is not None:
            ice, water = pre.get("ice_kg_m3"), pre.get("chilled_water_c")
            options = [
                *([f"ice {ice} kg/m3"] if ice is not None else []),
                *([f"chilled water {water} C"] if water is not None else []),
            ]
            line += f"; to reach {pre['target_c']} C: {' or '.join(options) or 'no ice or water'}"
        if pre.get("note"):
            line += f" ({pre['note']})"
        lines.append(line)
    lines.extend(f"Caution: {caution}" for caution in body.get("cautions", []))
    return "\n".join(lines)


def cmd_plan(args: argparse.Namespace) -> int:
    """``pourheat plan``: solve for controls on a scenario file; print each answer."""
    try:
        scenario = read_scenario(args.scenario)
    except InputError as error:
        print(f"pourheat: {error}", file=sys.stderr)
        return EXIT_BAD_INPUT
    from service.planning import run_plan

    shown = ProgressDisplay("plan", "forecasts", args.quiet)
    try:
        body = run_plan(
            {"scenario": scenario, "solve_for": args.solve},
            max_cell_steps_setting(),
            progress=shown,
        )
    except (ValidationError, InvalidScenarioError) as error:
        _print_errors(
            validation_errors(error) if isinstance(error, ValidationError) else error.errors
        )
        return EXIT_BAD_INPUT
    finally:
        shown.close()
    if args.json:
        try:
            Path(args.json).write_text(json.dumps(body, indent=2) + "\n", encoding="utf-8")
        except OSError as error:
            print(f"pourheat: cannot write output: {error}", file=sys.stderr)
            return EXIT_OUTPUT_ERROR
    print(format_plan(body))
    unmet = [c for c, a in body["controls"].items() if a["status"] in UNMET_STATUSES]
    if unmet and args.fail_on_limit:
        print(f"pourheat: limits cannot be met by: {', '.join(unmet)}", file=sys.stderr)
        return EXIT_LIMIT_EXCEEDED
    return EXIT_OK


DEFAULT_SERVER = "http://127.0.0.1:8000"
HTTP_TIMEOUT_S = 120.0


def _http(
    method: str, url: str, data: bytes | None = None, content_type: str | None = None
) -> tuple[int, Any]:
    """One HTTP request with the standard library: (status, parsed JSON body or text)."""
    import urllib.error
    import urllib.request

    req = urllib.request.Request(url, data=data, method=method)
    if content_type:
        req.add_header("Content-Type", content_type)
    token = os.environ.get("POURHEAT_TOKEN")
    if token:  # the service's bearer token, when it requires one (never printed)
        req.add_header("Authorization", f"Bearer {token.strip()}")
    try:
        with urllib.request.urlopen(req, timeout=HTTP_TIMEOUT_S) as response:
            status, raw = response.status, response.read()
    except urllib.error.HTTPError as error:
        status, raw = error.code, error.read()
    try:
        return status, json.loads(raw)
    except ValueError:
        return status, raw.decode("utf-8", "replace")


def cmd_watch(args: argparse.Namespace) -> int:
    """``pourheat watch``: post new readings of a pour, print its status line.

    Exit 3 when a limit is measured or forecast to be exceeded, or not settled within the
    forecast; 4 when the limits are met but the newest reading is stale (older than
    service.monitoring.STALE_READINGS_H: the logger may have stopped); 2 when the readings file
    cannot be read or the server refuses the input (4xx); 1 when the server cannot be reached
    or fails.
    """
    from service.monitoring import status_line

    base = f"{args.server.rstrip('/')}/v1/pours/{args.pour}"
    data = None
    if args.readings:
        try:
            data = Path(args.readings).read_bytes()
        except OSError as error:
            print(
                f"pourheat: cannot read readings file {args.readings}: {error.strerror or error}",
                file=sys.stderr,
            )
            return EXIT_BAD_INPUT
    try:
        if data is not None:
            status, body = _http("POST", f"{base}/readings", data, "text/csv")
            if status >= 400:
                _report_problem(status, body)
                return EXIT_BAD_INPUT if status < 500 else EXIT_OUTPUT_ERROR
            print(
                f"readings: {body['accepted']} new, {body['duplicates']} already stored, "
                f"{len(body['rejected'])} rejected"
            )
            for row in body["rejected"]:
                print(
                    f"rejected row {row['row']}: {row['field']}: {row['message']}", file=sys.stderr
                )
        status, body = _http("GET", f"{base}/status")
    except OSError as error:
        print(f"pourheat: cannot reach {args.server}: {error}", file=sys.stderr)
        return EXIT_OUTPUT_ERROR
    if status >= 400:
        _report_problem(status, body)
        return EXIT_BAD_INPUT if status < 500 else EXIT_OUTPUT_ERROR
    print(status_line(body))
    if not body["limits_met"]:
        return EXIT_LIMIT_EXCEEDED
    return EXIT_READINGS_STALE if body.get("readings_stale") else EXIT_OK


def cmd_refresh(args: argparse.Namespace) -> int:
    """``pourheat refresh``: re-forecast every active stored pour, print each status line.

    Exit 3 when a limit of any pour is measured or forecast to be exceeded, 1 when a pour could
    not be refreshed or the database cannot be opened.
    """
    from service import store
    from service.monitoring import status_line
    from service.parallel import executor_name
    from service.refresh import refresh_pours

    database = args.db or os.environ.get("POURHEAT_DB", "pourheat.sqlite3")
    shown = ProgressDisplay("refresh", "pours", args.quiet)
    try:
        db = store.connect(database)
    except Exception as error:  # noqa: BLE001 - any failure to open is reported the same way
        print(f"pourheat: cannot open the database {database}: {error}", file=sys.stderr)
        return EXIT_OUTPUT_ERROR
    try:
        if not args.quiet:
            print(f"refreshing on {executor_name()}", file=sys.stderr)
        statuses = refresh_pours(db, max_cell_steps_setting(), progress=shown)
    finally:
        shown.close()
        db.close()
    failed = exceeded = 0
    for status in statuses:
        if "error" in status:
            failed += 1
            print(
                f"pourheat: {status['name']} ({status['id']}): {status['error']}", file=sys.stderr
            )
            continue
        print(status_line(status))
        exceeded += not status["limits_met"]
    print(f"{len(statuses)} pours: {exceeded} over a limit, {failed} failed", file=sys.stderr)
    if failed:
        return EXIT_OUTPUT_ERROR
    return EXIT_LIMIT_EXCEEDED if exceeded else EXIT_OK


def _report_problem(status: int, body: Any) -> None:
    if isinstance(body, dict):
        print(f"pourheat: HTTP {status}: {body.get('detail', '')}", file=sys.stderr)
        _print_errors(body.get("errors") or [])
    else:
        print(f"pourheat: HTTP {status}: {body}", file=sys.stderr)


def find_gunicorn_conf() -> Path | None:
    """deploy/gunicorn.conf.py in the working directory or beside the source tree, if present."""
    candidates = (Path.cwd() / GUNICORN_CONF, Path(__file__).resolve().parents[1] / GUNICORN_CONF)
    return next((p for p in candidates if p.is_file()), None)


def gunicorn_argv(config: Path, host: str | None, port: int) -> list[str]:
    """The command that serves the app with gunicorn under this interpreter."""
    argv = [sys.executable, "-m", "gunicorn", "--config", str(config)]
    if host is not None:
        bracketed = f"[{host}]" if ":" in host and not host.startswith("[") else host
        argv += ["--bind", f"{bracketed}:{port}"]  # the command line overrides the config file
    return [*argv, APP_SPEC]


def cmd_serve(args: argparse.Namespace) -> int:
    """``pourheat serve``: replace this process with gunicorn (returns only on failure)."""
    config = Path(args.config) if args.config else find_gunicorn_conf()
    if config is None or not config.is_file():
        print(
            f"pourheat: gunicorn settings not found ({args.config or GUNICORN_CONF}); "
            "run from the project directory or pass --config",
            file=sys.stderr,
        )
        return EXIT_BAD_INPUT
    port = args.port if args.port is not None else int(os.environ.get("PORT", DEFAULT_PORT))
    os.environ["PORT"] = str(port)
    argv = gunicorn_argv(config, args.host, port)
    try:
        os.execvp(argv[0], argv)
    except OSError as error:
        print(f"pourheat: cannot start gunicorn: {error}", file=sys.stderr)
        return EXIT_OUTPUT_ERROR
    return EXIT_OK  # pragma: no cover - execvp does not return


QUIET_HELP = "no progress display (for cron); errors and the result are still printed"


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``pourheat``."""
    parser = argparse.ArgumentParser(
        prog="pourheat",
        description="Temperature forecasts for curing mass concrete.",
        epilog=EPILOG,
    )
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    fc = sub.add_parser(
        "forecast",
        help="forecast one scenario and print a summary",
        description="Forecast one scenario (the JSON body of POST /v1/forecasts).",
        epilog=EPILOG,
    )
    fc.add_argument("scenario", metavar="SCENARIO.json", help='scenario file, or "-" for stdin')
    fc.add_argument("--csv", metavar="FILE", help="write the hourly series as CSV to FILE")
    fc.add_argument("--json", metavar="FILE", help="write the full JSON response to FILE")
    fc.add_argument(
        "--units",
        choices=("si", "us"),
        default="si",
        help="units of the scenario and outputs: si (C, m; default) or us (F, ft)",
    )
    fc.add_argument(
        "--fail-on-limit",
        action="store_true",
        help="exit 3 when a limit (max temperature, max differential) is forecast exceeded",
    )
    fc.add_argument("--quiet", action="store_true", help=QUIET_HELP)
    fc.set_defaults(handler=cmd_forecast)

    pl = sub.add_parser(
        "plan",
        help="solve for the controls that keep a pour inside its limits",
        description="Solve for controls on a scenario (the JSON body of POST /v1/forecasts); "
        "the limits are the scenario's `limits`.",
        epilog=EPILOG,
    )
    pl.add_argument("scenario", metavar="SCENARIO.json", help='scenario file, or "-" for stdin')
    pl.add_argument(
        "--solve",
        action="append",
        required=True,
        choices=(
            "max_placement_temperature_c",
            "min_top_insulation_r_m2k_w",
            "earliest_insulation_removal_h",
            "max_thickness_m",
        ),
        help="control to solve for (repeat for several)",
    )
    pl.add_argument("--json", metavar="FILE", help="write the full JSON response to FILE")
    pl.add_argument(
        "--fail-on-limit",
        action="store_true",
        help="exit 3 when a control cannot meet the limits over its whole range",
    )
    pl.add_argument("--quiet", action="store_true", help=QUIET_HELP)
    pl.set_defaults(handler=cmd_plan)

    wt = sub.add_parser(
        "watch",
        help="post new readings of a stored pour and print its status (for cron)",
        description="Post a data-logger CSV (time,sensor,temperature_c) to a stored pour, then "
        "print its calibrated status. Exit 3 when a limit is measured or forecast exceeded (or "
        "not settled within the forecast), 4 when the newest reading is stale (the logger may "
        "have stopped), 2 when the readings file cannot be read. "
        "When the service requires a token, put it in the environment as POURHEAT_TOKEN.",
        epilog=EPILOG,
    )
    wt.add_argument("--pour", required=True, help="pour id")
    wt.add_argument("--readings", metavar="FILE.csv", help="readings to post (optional)")
    wt.add_argument("--server", default=DEFAULT_SERVER, help=f"default {DEFAULT_SERVER}")
    wt.set_defaults(handler=cmd_watch)

    rf = sub.add_parser(
        "refresh",
        help="re-forecast every active stored pour and keep its status (for cron)",
        description="Calibrate and re-forecast every active stored pour on the configured "
        "executor (local processes, or the Dask cluster of POURHEAT_DASK_SCHEDULER), keep each "
        "status, print one status line per pour. Exit 3 when any limit is measured or forecast "
        "exceeded, 1 when a pour cannot be refreshed.",
        epilog=EPILOG,
    )
    rf.add_argument("--db", help="database (default: $POURHEAT_DB or pourheat.sqlite3)")
    rf.add_argument("--quiet", action="store_true", help=QUIET_HELP)
    rf.set_defaults(handler=cmd_refresh)

    sv = sub.add_parser(
        "serve",
        help="serve the REST API with gunicorn",
        description="Serve the REST API with gunicorn and deploy/gunicorn.conf.py.",
    )
    sv.add_argument(
        "--port", type=int, help=f"port (default: $PORT or {DEFAULT_PORT})", default=None
    )
    sv.add_argument("--host", help="address to bind (default: that of the gunicorn settings)")
    sv.add_argument(
        "--config", metavar="FILE", help=f"gunicorn settings (default: {GUNICORN_CONF})"
    )
    sv.set_defaults(handler=cmd_serve)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run ``pourheat`` with ``argv`` (default: the process arguments); returns the exit code."""
    args = build_parser().parse_args(argv)
    return args.handler(args)


if __name__ == "__main__":
    raise SystemExit(main())
