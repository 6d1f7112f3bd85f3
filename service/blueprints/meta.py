"""The service's own description: GET / (a short page) and GET /openapi.json (the contract)."""

from flask import Blueprint, Response, jsonify

from service.openapi import build_spec

bp = Blueprint("meta", __name__)

INDEX_HTML = """<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>pourheat</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<style>body{font-family:sans-serif;max-width:52rem;margin:2rem auto;padding:0 1rem;
line-height:1.45}img{max-width:100%}code{background:#f3f3f3;padding:0 .2rem}</style></head><body>
<h1>pourheat</h1>
<p>Temperature forecasts for curing mass concrete: the peak temperature, the near-surface
temperature and the core-to-surface differential of mats, footings, walls and blocks, from the
pour geometry, the mix and the weather.</p>
<p><strong>Forecasts are estimates.</strong> Limits come from the governing specification and
the engineer of record; confirm forecasts by monitoring and follow local codes and licensed
professional practice.</p>
<ul>
<li><a href="/board">Site board</a>: stored pours, their status, charts and reports</li>
<li><a href="/openapi.json">API description (OpenAPI 3.1)</a></li>
<li><code>POST /v1/forecasts</code> with a JSON scenario: JSON, CSV, SVG, PNG or a PDF report
(<code>?format=pdf</code>)</li>
<li><code>GET /v1/forecasts?...</code> for spreadsheets: CSV, or one value as text</li>
</ul>
<h2>Example: a 2 m mat with an insulated top, placed at 20 °C</h2>
<img src="/v1/forecasts?shape=slab&amp;thickness_m=2&amp;cement_kg_m3=380&amp;water_kg_m3=160\
&amp;placement_c=20&amp;air_mean_c=18&amp;air_range_c=10&amp;top_r_m2k_w=0.5&amp;duration_h=168\
&amp;format=svg" alt="Forecast chart of the example mat" style="width:100%;height:auto">
</body></html>
"""


@bp.get("/")
def index() -> Response:
    """A short page saying what the service is, with an example chart."""
    return Response(INDEX_HTML, mimetype="text/html")


@bp.get("/openapi.json")
def openapi() -> Response:
    """The OpenAPI document."""
    return jsonify(build_spec())
