"""HTML pages of the service: the list of runs with a small form, a job's page, map pages.

Pages load every script and style from the service itself (Leaflet under
``/assets/leaflet/``); map pages are drawn by :func:`tripsim.report.mapview.map_page_html`
from the page data stored with each run.
"""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

from tripsim.caution import CAUTION
from tripsim.report.mapview import MapAssets

__all__ = ["LEAFLET", "index_page", "job_page"]

#: Leaflet as the service sends it.
LEAFLET = MapAssets.linked("/assets/leaflet/leaflet.js", "/assets/leaflet/leaflet.css",
                           "/assets/leaflet/images/")

_STYLE = """
body {font-family:system-ui, sans-serif; color:#1d3557; margin:1.5rem; max-width:72rem;}
table {border-collapse:collapse; margin:.5rem 0 1.5rem;} th, td {padding:3px 10px;
text-align:left; border-bottom:1px solid #ddd;} form {display:grid;
grid-template-columns:max-content minmax(12rem, 28rem); gap:6px 12px; align-items:center;}
.caution {color:#6d2e46; font-size:.9rem;} code {background:#f3f3f3; padding:1px 4px;}
"""


def _page(title: str, body: str, *, refresh_s: int | None = None) -> str:
    meta = f'<meta http-equiv="refresh" content="{refresh_s}">' if refresh_s else ""
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>{meta}"
            f"<meta name='viewport' content='width=device-width, initial-scale=1'>"
            f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>"
            f"{body}<p class='caution'><b>Caution:</b> {html.escape(CAUTION)}</p>"
            "</body></html>")


def _options(rows: Sequence[dict[str, Any]], *, empty: str | None = None) -> str:
    out = [f"<option value=''>{html.escape(empty)}</option>"] if empty is not None else []
    out += [f"<option value='{html.escape(r['id'])}'>{html.escape(r['name'])} "
            f"({html.escape(r['id'])})</option>" for r in rows]
    return "".join(out)


def index_page(runs: Sequence[dict[str, Any]], total: int, inputs: dict[str, list[dict]],
               collections: dict[str, str]) -> str:
    """The front page: stored runs with links, stored inputs, and a form to run."""
    rows = []
    for r in runs:
        base = f"/{collections[r['kind']]}/{r['id']}"
        links = [f"<a href='{base}'>JSON</a>"]
        if r["kind"] in ("simulate", "plan"):
            links.insert(0, f"<a href='{base}/map'>map</a>")
        rows.append(f"<tr><td>{html.escape(r['kind'])}</td><td>{html.escape(r['name'])}</td>"
                    f"<td>{r['created_at']:%Y-%m-%d %H:%M}</td><td>{r['exit_code']}</td>"
                    f"<td>{' · '.join(links)}</td></tr>")
    table = ("<table><tr><th>kind</th><th>name</th><th>stored (UTC)</th><th>exit</th>"
             f"<th></th></tr>{''.join(rows)}</table>" if rows else
             "<p>No run is stored yet.</p>")
    counts = ", ".join(f"<a href='/{collections[k]}'>{len(v)} {k}</a>" for k, v in
                       inputs.items())
    ready = inputs["route"] and inputs["vehicle"]
    form = ("<p>Store a route and a vehicle first (see <a href='/docs'>/docs</a>).</p>"
            if not ready else f"""
<form method='post' action='/ui/runs'>
<label for='kind'>run</label><select id='kind' name='kind'><option value='plan'>plan
</option><option value='simulate'>simulation</option></select>
<label for='route'>route</label><select id='route' name='route'>
{_options(inputs['route'])}</select>
<label for='vehicle'>vehicle</label><select id='vehicle' name='vehicle'>
{_options(inputs['vehicle'])}</select>
<label for='weather'>weather</label><select id='weather' name='weather'>
{_options(inputs['weather'], empty='constant air (20 °C, calm)')}</select>
<label for='chargers'>chargers (plans)</label><select id='chargers' name='chargers'>
{_options(inputs['chargers'], empty='none')}</select>
<label for='lodging'>lodgings (plans)</label><select id='lodging' name='lodging'>
{_options(inputs['lodgings'], empty='none')}</select>
<label for='depart'>departure</label><input id='depart' name='depart'
 placeholder='2026-07-14T08:00:00-02:00'>
<label for='start_soc'>state of charge at departure</label><input id='start_soc'
 name='start_soc' placeholder='0.9'>
<label for='speed_kph'>speed where no limit is known [km/h]</label><input id='speed_kph'
 name='speed_kph' placeholder='GPX tracks carry no limits: 50'>
<span></span><button type='submit'>run</button>
</form>""")
    body = (f"<h1>tripsim</h1><p>{total} stored run(s); inputs: {counts}. "
            "The API is described at <a href='/docs'>/docs</a>.</p>"
            f"<h2>Runs</h2>{table}<h2>Run a plan or a simulation</h2>{form}")
    return _page("tripsim", body)


def job_page(job: dict[str, Any], result_href: str | None) -> str:
    """A job's state; refreshes itself until the job ends."""
    state = job["state"]
    lines = [f"<h1>Job {html.escape(job['id'])}</h1>",
             f"<p>{html.escape(state)}: {html.escape(job['message'])} "
             f"({100 * job['progress']:.0f} %)</p>"]
    if result_href:
        lines.append(f"<p><a href='{html.escape(result_href)}'>the result</a></p>")
    if job.get("problem"):
        lines.append(f"<p>{html.escape(str(job['problem'].get('detail', '')))}</p>")
    lines.append("<p><a href='/'>all runs</a></p>")
    active = state in ("queued", "running")
    return _page(f"job {job['id']}", "".join(lines), refresh_s=1 if active else None)
