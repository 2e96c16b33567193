"""Map pages of a plan or a simulation (folium on Leaflet) that render with no network.

A page is made in two steps.  :func:`plan_page_data` and :func:`trip_page_data` turn a
result into page data: plain JSON-ready values (the route thinned and coloured by state
of charge, start and finish, the stops with their details, nights, the elevation and
state-of-charge profile as SVG, the caution).  :func:`map_page_html` draws page data
with Leaflet through folium.  The service stores the page data of each run and draws it
on request; the command line draws it at once.

Every script and style a page needs comes from :class:`MapAssets`: inline (a saved file
opens anywhere offline) or as links to the service that sends the page.  Nothing is
loaded from another host.  Base-map tiles are optional (``tiles``); without them the page
still shows the route coloured by state of charge, start and finish, a marker and a list
entry for every stop, nights marked, the profile and the caution.
"""

from __future__ import annotations

import html
import io
import json
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from tripsim.caution import CAUTION

__all__ = ["SOC_COLOURS", "MapAssets", "map_page_html", "plan_map_html", "plan_page_data",
           "trip_map_html", "trip_page_data"]

#: tripsim's own state-of-charge scale, low to high: plum, rust, sand, sea green.
SOC_COLOURS = ["#6d2e46", "#b5562b", "#e0b75e", "#2f8f83"]
#: Steps of the route's colour scale (one Leaflet line per step).
SOC_STEPS = 10
#: Page data format (kept with each stored run; bump when the keys change).
PAGE_FORMAT = 1
_NIGHT_BG, _STOP_BG, _INK = "#cfd8ea", "#f1faee", "#1d3557"
_MARKER = ("display:flex;align-items:center;justify-content:center;width:26px;height:26px;"
           "border-radius:7px;border:2px solid {ink};background:{bg};color:{ink};"
           "font:bold 13px sans-serif;box-shadow:0 1px 3px rgba(0,0,0,.4)")
_END = ("display:flex;align-items:center;justify-content:center;min-width:22px;height:22px;"
        "border-radius:50%;border:3px solid #fff;background:{bg};color:#fff;"
        "font:bold 11px sans-serif;box-shadow:0 1px 3px rgba(0,0,0,.5)")


@dataclass(frozen=True)
class MapAssets:
    """The scripts and styles of a page, as the ``<head>`` HTML that loads them.

    Make one with :meth:`inline` (the text itself: a file that opens offline) or
    :meth:`linked` (URLs on the service that sends the page).
    """

    head: str

    @classmethod
    def inline(cls, script: str, style: str, images: Mapping[str, str] | None = None
               ) -> MapAssets:
        """Leaflet's script and style written into the page.

        ``images`` maps Leaflet's image names (``marker-icon.png``) to ``data:`` URIs, so
        its default marker icon needs no file either.
        """
        safe = script.replace("</script", "<\\/script")
        icons = {k: (images or {}).get(v) for k, v in _ICONS.items()}
        default = ("" if not all(icons.values()) else
                   f"<script>L.Icon.Default.mergeOptions({json.dumps(icons)});</script>")
        return cls(f"<style>{style}</style>\n<script>{safe}</script>{default}")

    @classmethod
    def linked(cls, script_url: str, style_url: str, images_url: str | None = None
               ) -> MapAssets:
        """Leaflet's script and style (and images) loaded from the service's own URLs."""
        images = ("" if images_url is None else
                  f"<script>L.Icon.Default.imagePath = {json.dumps(images_url)};</script>")
        return cls(f'<link rel="stylesheet" href="{html.escape(style_url)}"/>\n'
                   f'<script src="{html.escape(script_url)}"></script>{images}')


_ICONS = {"iconUrl": "marker-icon.png", "iconRetinaUrl": "marker-icon-2x.png",
          "shadowUrl": "marker-shadow.png"}


# --- page data ----------------------------------------------------------------------------

def _thin(trace: pd.DataFrame, max_points: int) -> pd.DataFrame:
    step = max(1, len(trace) // max_points)
    return pd.concat([trace.iloc[::step], trace.iloc[[-1]]])


def _clock(ts: Any) -> str:
    return f"{pd.Timestamp(ts).round('s'):%a %d %b %H:%M:%S}"


def _route(trace: pd.DataFrame, max_points: int = 2500) -> dict[str, list[float]]:
    """The route as points with the state of charge at each (the last point is the end)."""
    pts = _thin(trace, max_points)
    lat = [*pts["lat_deg"].round(6).tolist(), round(float(trace["lat_end_deg"].iloc[-1]), 6)]
    lon = [*pts["lon_deg"].round(6).tolist(), round(float(trace["lon_end_deg"].iloc[-1]), 6)]
    soc = (100 * pts["soc"]).round(2).tolist()
    return {"lat": lat, "lon": lon, "soc": [soc[0], *soc]}


def _end_points(trip: Any) -> list[dict[str, Any]]:
    trace = trip.trace
    first, last = trace.iloc[0], trace.iloc[-1]
    arrive = last["clock"] + pd.Timedelta(seconds=float(last["time_s"] + last["dwell_s"]))
    return [
        {"role": "start", "label": "S", "lat": float(first["lat_deg"]),
         "lon": float(first["lon_deg"]),
         "text": f"start: {_clock(first['clock'])} with {100 * trip.summary.start_soc:.0f} %"},
        {"role": "finish", "label": "F", "lat": float(last["lat_end_deg"]),
         "lon": float(last["lon_end_deg"]),
         "text": f"finish: km {(last['start_m'] + last['length_m']) / 1000:.1f}, "
                 f"{_clock(arrive)} with {100 * float(last['soc']):.0f} %"},
    ]


def _stop_rows(stop: Any) -> list[list[str]]:
    site = f" (site {stop.site_kw:.0f} kW)" if stop.site_kw > stop.power_kw + 0.05 else ""
    return [
        ["at km", f"{stop.route_km:.1f}"],
        ["arrive", f"{_clock(stop.arrive)} with {100 * stop.arrive_soc:.0f} %"],
        ["leave", f"{_clock(stop.depart)} with {100 * stop.depart_soc:.0f} %"],
        ["minutes", f"{stop.minutes:.0f} (stop {stop.overhead_min:.0f}, charging "
                    f"{stop.charge_min:.0f}, waiting {stop.wait_min:.0f}, night "
                    f"{stop.night_min:.0f})"],
        ["energy", f"{stop.battery_kwh:.1f} kWh into the battery, {stop.plug_kwh:.1f} kWh "
                   "from the plug"],
        ["connector", f"{stop.connector} {stop.power_kw:.0f} kW{site}" if stop.connector
         else "none"],
        ["detour", f"{stop.detour_km:.1f} km there and back, {stop.detour_min:.0f} min"],
    ]


def _plan_stops(plan: Any) -> list[dict[str, Any]]:
    out = []
    for i, s in enumerate(plan.stops, start=1):
        night = s.kind == "overnight" or s.nights > 0
        kind = "night at a lodging" if s.kind == "overnight" else (
            "charge, night" if night else "charge")
        out.append({"number": i, "name": s.name, "kind": kind, "night": bool(night),
                    "lat": float(s.lat_deg), "lon": float(s.lon_deg),
                    "km": float(s.route_km), "rows": _stop_rows(s)})
    return out


def _profile_svg(trace: pd.DataFrame, stops: Sequence[dict[str, Any]],
                 nights: Sequence[tuple[float, float]] = ()) -> str:
    """The elevation and state-of-charge profile with stops and nights marked, as SVG."""
    from tripsim.report.plots import plt

    pts = _thin(trace, 1200)
    km = (pts["start_m"] + pts["length_m"]).to_numpy() / 1000.0
    elevation = pts["elevation_m"].to_numpy()
    with plt.rc_context({"svg.fonttype": "none", "svg.hashsalt": "tripsim"}):
        fig, ax = plt.subplots(figsize=(10, 2.8))
        floor = float(elevation.min()) - 10.0
        ax.fill_between(km, elevation, floor, color="#cdbb9b", linewidth=0, label="elevation")
        ax.set_ylabel("elevation [m]")
        ax.set_xlabel("distance [km]")
        ax2 = ax.twinx()
        for a, b in nights:
            ax2.axvspan(a, b, color=_NIGHT_BG, alpha=0.9, linewidth=0, zorder=0)
        ax2.plot(km, 100 * pts["soc"].to_numpy(), color=SOC_COLOURS[-1], linewidth=1.6,
                 label="state of charge")
        for s in stops:
            colour = _INK if s["night"] else SOC_COLOURS[1]
            ax2.axvline(s["km"], color=colour, linewidth=1.0, linestyle="--")
            ax2.annotate("z" if s["night"] else str(s["number"]), (s["km"], 100),
                         xytext=(0, 2), textcoords="offset points", ha="center",
                         va="bottom", fontsize=8, color=colour, annotation_clip=False)
        ax2.set_ylim(0, 100)
        ax2.set_ylabel("state of charge [%]")
        ax.set_xlim(0, max(float(km.max()), 0.001))
        fig.tight_layout()
        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None})
        plt.close(fig)
    svg = buf.getvalue()
    return svg[svg.index("<svg"):]


def _nights(plan: Any) -> list[tuple[float, float]]:
    """Where nights fall on the profile: a band around each stop with a night."""
    width = max(0.004 * float(plan.trip.trace["start_m"].iloc[-1]) / 1000.0, 0.5)
    return [(s.route_km - width, s.route_km + width) for s in plan.stops
            if s.kind == "overnight" or s.nights > 0]


def plan_page_data(plan: Any, other_sites: Sequence[Any] = (), *,
                   title: str = "") -> dict[str, Any]:
    """The page data of a plan (see :func:`map_page_html`).

    Parameters
    ----------
    plan : tripsim.plan.search.Plan
        A plan with its simulated trip.
    other_sites : sequence of SnappedSite
        Sites near the route that the plan does not use (a layer that can be hidden).
    title : str
        Heading of the page.

    Raises
    ------
    ValueError
        For a plan without a trip (no plan keeps every constraint: nothing to draw).
    """
    if plan.trip is None:
        raise ValueError("an infeasible plan has no route to draw")
    trace = plan.trip.trace
    stops = _plan_stops(plan)
    used = {s.site_id for s in plan.stops}
    sites = []
    for snapped in other_sites:
        site = snapped.site
        if site.site_id in used or site.kind != "charger":
            continue
        power = max((kw for _, kw in site.connectors.values()), default=0.0)
        sites.append({"lat": float(site.lat_deg), "lon": float(site.lon_deg),
                      "text": f"{site.name} ({power:.0f} kW, km {snapped.route_m / 1000:.0f})"})
    t = plan.totals
    headline = (f"{t['charging_stops']} charging stop(s), {t['nights']} night(s), "
                f"{t['total_h']:.1f} h in all; depart {_clock(t['depart'])}, arrive "
                f"{_clock(t['arrive'])} with {100 * t['arrival_soc']:.0f} %.")
    return {"format": PAGE_FORMAT, "kind": "plan", "title": title, "headline": headline,
            "route": _route(trace), "ends": _end_points(plan.trip), "stops": stops,
            "sites": sites, "summary": [],
            "profile_svg": _profile_svg(trace, stops, _nights(plan)), "caution": CAUTION}


def trip_page_data(trip: Any, *, title: str = "") -> dict[str, Any]:
    """The page data of a simulated trip (see :func:`map_page_html`).

    The list beside the map holds the summary; where the battery ran empty the
    page marks the place.
    """
    trace, s = trip.trace, trip.summary
    stops: list[dict[str, Any]] = []
    if getattr(s, "stranded", False) and s.stranded_at_km is not None:
        row = trace.iloc[int(np.searchsorted(
            (trace["start_m"] + trace["length_m"]).to_numpy(), s.stranded_at_km * 1000.0)
            .clip(0, len(trace) - 1))]
        stops.append({"number": 1, "name": "battery empty", "kind": "stranded",
                      "night": False, "lat": float(row["lat_deg"]),
                      "lon": float(row["lon_deg"]), "km": float(s.stranded_at_km),
                      "rows": [["at km", f"{s.stranded_at_km:.1f}"],
                               ["clock", _clock(row["clock"])]]})
    d = s.to_dict()
    summary = [["distance", f"{d['distance_km']:.1f} km"],
               ["driving", f"{d['duration_h']:.2f} h"],
               ["battery energy", f"{d['battery_wh'] / 1000:.2f} kWh "
                                  f"({d['wh_per_km']:.0f} Wh/km)"],
               ["regenerated", f"{d['regen_wh'] / 1000:.2f} kWh"],
               ["auxiliaries", f"{d['aux_wh'] / 1000:.2f} kWh"],
               ["state of charge", f"{100 * d['start_soc']:.0f} % → "
                                   f"{100 * d['final_soc']:.0f} % (lowest "
                                   f"{100 * d['min_soc']:.0f} %)"],
               ["ascent", f"{d['ascent_m']:.0f} m"]]
    if d.get("solar_wh"):
        summary.append(["solar", f"{d['solar_wh'] / 1000:.2f} kWh"])
    headline = (f"{d['distance_km']:.1f} km, {d['duration_h']:.2f} h driving, "
                f"{d['wh_per_km']:.0f} Wh/km; arrives with {100 * d['final_soc']:.0f} %"
                + (f"; the battery runs empty at km {d['stranded_at_km']:.1f}."
                   if stops else "."))
    return {"format": PAGE_FORMAT, "kind": "simulate", "title": title, "headline": headline,
            "route": _route(trace), "ends": _end_points(trip), "stops": stops, "sites": [],
            "summary": summary, "profile_svg": _profile_svg(trace, stops), "caution": CAUTION}


# --- drawing ------------------------------------------------------------------------------

_CSS = """
html, body {height:auto; margin:0; font-family:system-ui, sans-serif; color:#1d3557;}
body {display:grid; grid-template-columns:minmax(0,2fr) minmax(15rem,1fr);
      grid-template-areas:"head head" "map list" "profile profile" "caution caution";
      gap:8px; padding:8px; box-sizing:border-box;}
.tripsim-head {grid-area:head;} .tripsim-head h1 {font-size:1.3rem; margin:0 0 4px;}
.tripsim-head p {margin:0;}
.folium-map {grid-area:map; height:66vh !important; min-height:320px; border:1px solid #ccc;
             background:#eef1f4;}
.tripsim-list {grid-area:list; max-height:66vh; overflow:auto; font-size:.85rem;}
.tripsim-list ol {padding-left:1.2rem; margin:0;} .tripsim-list li {margin-bottom:8px;
  cursor:pointer;} .tripsim-list li.night {border-left:4px solid #1d3557; padding-left:4px;}
.tripsim-list th {text-align:left; padding-right:6px; font-weight:600; vertical-align:top;}
.tripsim-legend {display:flex; align-items:center; gap:6px; margin:6px 0; font-size:.8rem;}
.tripsim-legend .bar {width:9rem; height:10px; border:1px solid #999;}
.tripsim-profile {grid-area:profile;} .tripsim-profile svg {width:100%; height:auto;}
.tripsim-caution {grid-area:caution; color:#6d2e46; font-size:.85rem;}
@media (max-width:800px) {body {grid-template-columns:1fr; grid-template-areas:"head" "map"
  "list" "profile" "caution";}}
"""


def _soc_colour(cmap: Any, value: float) -> str:
    return cmap(min(max(value, 0.0), 100.0))


def _ends(ends: Sequence[dict[str, Any]]) -> list[dict[str, Any]]:
    """Start and finish markers; one marker for both where a loop closes (within ~50 m)."""
    start, finish = ends
    if abs(start["lat"] - finish["lat"]) < 5e-4 and abs(start["lon"] - finish["lon"]) < 5e-4:
        return [{**start, "label": "S/F", "roles": ["start", "finish"],
                 "text": f"{start['text']}; {finish['text']}"}]
    return [{**start, "roles": ["start"]}, {**finish, "roles": ["finish"]}]


def _route_layer(fmap: Any, route: dict[str, list[float]]) -> None:
    """The route as one Leaflet line per step of the colour scale."""
    import branca.colormap as cm
    import folium

    scale = cm.LinearColormap(SOC_COLOURS, vmin=0, vmax=100).to_step(SOC_STEPS)
    pieces: dict[str, list[list[list[float]]]] = {}
    lat, lon, soc = route["lat"], route["lon"], route["soc"]
    for i in range(1, len(lat)):
        colour = _soc_colour(scale, soc[i])
        pieces.setdefault(colour, []).append([[lat[i - 1], lon[i - 1]], [lat[i], lon[i]]])
    group = folium.FeatureGroup(name="route (state of charge)")
    for colour, lines in pieces.items():
        folium.PolyLine(lines, color=colour, weight=6, opacity=0.95,
                        class_name="tripsim-route").add_to(group)
    group.add_to(fmap)


def _details(rows: Sequence[Sequence[str]]) -> str:
    return "<table>" + "".join(f"<tr><th>{html.escape(k)}</th><td>{html.escape(v)}</td></tr>"
                               for k, v in rows) + "</table>"


def _list_html(data: dict[str, Any]) -> str:
    parts = ["<aside class='tripsim-list'>"]
    gradient = ", ".join(SOC_COLOURS)
    parts.append("<div class='tripsim-legend'>state of charge 0 % <span class='bar' "
                 f"style='background:linear-gradient(to right, {gradient})'></span> 100 %</div>")
    if data["summary"]:
        parts.append(f"<h2 style='font-size:1rem'>Summary</h2>{_details(data['summary'])}")
    if data["kind"] == "plan":
        parts.append(f"<h2 style='font-size:1rem'>Stops ({len(data['stops'])})</h2>")
        if not data["stops"]:
            parts.append("<p>No stop: the trip closes on the charge at departure.</p>")
    elif data["stops"]:
        parts.append("<h2 style='font-size:1rem'>Where the battery runs empty</h2>")
    if data["stops"]:
        parts.append("<ol class='tripsim-stops'>")
        for s in data["stops"]:
            cls = "tripsim-stop-item night" if s["night"] else "tripsim-stop-item"
            parts.append(f"<li class='{cls}' data-stop='{s['number']}'><b>"
                         f"{html.escape(s['name'])}</b> — {html.escape(s['kind'])}"
                         f"{_details(s['rows'])}</li>")
        parts.append("</ol>")
    ends = "".join(f"<li>{html.escape(e['text'])}</li>" for e in data["ends"])
    parts.append(f"<ul style='padding-left:1.2rem'>{ends}</ul></aside>")
    return "".join(parts)


def _marker(fmap_group: Any, stop: dict[str, Any]) -> Any:
    import folium

    bg = _NIGHT_BG if stop["night"] else _STOP_BG
    label = "z" if stop["night"] else str(stop["number"])
    cls = "tripsim-stop tripsim-night" if stop["night"] else "tripsim-stop"
    icon = folium.DivIcon(html=f"<div style='{_MARKER.format(bg=bg, ink=_INK)}'>{label}</div>",
                          icon_size=(26, 26), icon_anchor=(13, 13), class_name=cls)
    marker = folium.Marker([stop["lat"], stop["lon"]], icon=icon, tooltip=stop["name"])
    marker.add_to(fmap_group)
    return marker


def _popup(stop: dict[str, Any]) -> str:
    return (f"<b>{html.escape(stop['name'])}</b> — {html.escape(stop['kind'])}"
            f"{_details(stop['rows'])}")


def map_page_html(data: dict[str, Any], *, assets: MapAssets, tiles: str | None = None,
                  tile_attribution: str | None = None) -> str:
    """Draw page data as an HTML page.

    Parameters
    ----------
    data : dict
        From :func:`plan_page_data` or :func:`trip_page_data`.
    assets : MapAssets
        How the page loads Leaflet (inline, or links to the service).
    tiles : str, optional
        A tile URL template (``https://host/{z}/{x}/{y}.png``); none by default: the
        page needs no network.
    tile_attribution : str, optional
        The tiles' attribution (shown on the map).

    Returns
    -------
    str
        The page.
    """
    import folium

    route = data["route"]
    lat, lon = np.asarray(route["lat"]), np.asarray(route["lon"])
    fmap = folium.Map(location=[float(lat.mean()), float(lon.mean())], zoom_start=9,
                      tiles=None, control_scale=True)
    fmap.default_js, fmap.default_css = [], []  # Leaflet comes from `assets`, nothing else
    if tiles:
        folium.TileLayer(tiles=tiles, attr=tile_attribution or "map tiles",
                         name="base map").add_to(fmap)
    fmap.fit_bounds([[float(lat.min()), float(lon.min())], [float(lat.max()), float(lon.max())]])
    _route_layer(fmap, route)
    for end in _ends(data["ends"]):
        bg = SOC_COLOURS[-1] if end["role"] == "start" else _INK
        icon = folium.DivIcon(html=f"<div style='{_END.format(bg=bg)}'>{end['label']}</div>",
                              icon_size=(22, 22), icon_anchor=(11, 11),
                              class_name=" ".join(f"tripsim-{r}" for r in end["roles"]))
        folium.Marker([end["lat"], end["lon"]], icon=icon, tooltip=end["text"]).add_to(fmap)
    stops = folium.FeatureGroup(name="stops")
    markers = {s["number"]: _marker(stops, s) for s in data["stops"]}
    stops.add_to(fmap)
    if data["sites"]:
        others = folium.FeatureGroup(name="other charging sites near the route")
        for site in data["sites"]:
            folium.CircleMarker([site["lat"], site["lon"]], radius=4, color="#5c677d",
                                fill=True, fill_opacity=0.7, tooltip=site["text"],
                                class_name="tripsim-site").add_to(others)
        others.add_to(fmap)
    folium.LayerControl(collapsed=False).add_to(fmap)
    root = fmap.get_root()
    root.header.add_child(folium.Element(f"<title>{html.escape(data['title'] or 'tripsim')}"
                                         f"</title>\n{assets.head}\n<style>{_CSS}</style>"))
    root.html.add_child(folium.Element(
        f"<header class='tripsim-head'><h1>{html.escape(data['title'])}</h1>"
        f"<p>{html.escape(data['headline'])}</p></header>"))
    root.html.add_child(folium.Element(_list_html(data)))
    root.html.add_child(folium.Element(
        "<figure class='tripsim-profile' style='margin:0'><figcaption>elevation and state of "
        "charge along the route (stops dashed, nights shaded)</figcaption>"
        f"{data['profile_svg']}</figure>"))
    root.html.add_child(folium.Element(
        f"<p class='tripsim-caution'><b>Caution:</b> {html.escape(data['caution'])}</p>"))
    # Pop-ups bound here in plain Leaflet (folium's own use jQuery, which the page lacks).
    popups = "".join(f"{markers[s['number']].get_name()}.bindPopup({json.dumps(_popup(s))}, "
                     "{maxWidth: 360});\n" for s in data["stops"])
    links = json.dumps({n: m.get_name() for n, m in markers.items()})
    root.script.add_child(folium.Element(  # runs once folium's own script has made the map
        "document.addEventListener('DOMContentLoaded', function () {\n"
        f"{popups}var tripsimMarkers = {links};\n"
        "document.querySelectorAll('[data-stop]').forEach(function (li) {\n"
        "  li.addEventListener('click', function () {\n"
        "    var m = window[tripsimMarkers[li.dataset.stop]];\n"
        f"    if (m) {{ {fmap.get_name()}.panTo(m.getLatLng()); m.openPopup(); }}\n"
        "  });\n});\n});"))
    page = root.render()
    return _no_remote(page)


_REMOTE = re.compile(r"""<(?:script|link|img)\b[^>]*\b(?:src|href)\s*=\s*["']?(?:[a-z]+:)?//""",
                     re.IGNORECASE)


def _no_remote(page: str) -> str:
    """Refuse a page whose scripts, styles or images would load from another host."""
    m = _REMOTE.search(page)
    if m:
        raise ValueError(f"the map page would load from the network: {page[m.start():][:80]}")
    return page


def plan_map_html(plan: Any, other_sites: Sequence[Any] = (), *, title: str = "",
                  assets: MapAssets, tiles: str | None = None) -> str:
    """The map page of a plan (see :func:`plan_page_data` and :func:`map_page_html`)."""
    return map_page_html(plan_page_data(plan, other_sites, title=title), assets=assets,
                         tiles=tiles)


def trip_map_html(trip: Any, *, title: str = "", assets: MapAssets,
                  tiles: str | None = None) -> str:
    """The map page of a simulated trip (see :func:`trip_page_data`)."""
    return map_page_html(trip_page_data(trip, title=title), assets=assets, tiles=tiles)

