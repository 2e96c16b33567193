"""A map page of a charging plan (folium): the route coloured by state of charge.

The page holds the route (coloured by state of charge, with a legend), one marker per
stop with its details on click, the other charging sites near the route on a layer that
can be hidden, an elevation and state-of-charge profile under the map, and the caution.
"""

from __future__ import annotations

import base64
import html
import io
from collections.abc import Sequence
from typing import Any

import branca.colormap as cm
import folium
import numpy as np
import pandas as pd

from tripsim.caution import CAUTION

__all__ = ["SOC_COLOURS", "plan_map_html"]

#: tripsim's own state-of-charge scale, low to high: plum, rust, sand, sea green.
SOC_COLOURS = ["#6d2e46", "#b5562b", "#e0b75e", "#2f8f83"]
_STOP_STYLE = ("display:flex;align-items:center;justify-content:center;width:26px;height:26px;"
               "border-radius:7px;border:2px solid #1d3557;background:{bg};color:#1d3557;"
               "font:bold 13px sans-serif;box-shadow:0 1px 3px rgba(0,0,0,.4)")


def _thin(trace: pd.DataFrame, max_points: int = 2500) -> pd.DataFrame:
    step = max(1, len(trace) // max_points)
    return pd.concat([trace.iloc[::step], trace.iloc[[-1]]])


def _profile_png(trace: pd.DataFrame) -> str:
    from tripsim.report.plots import plt

    km = (trace["start_m"] + trace["length_m"]).to_numpy() / 1000.0
    fig, ax = plt.subplots(figsize=(10, 2.6))
    ax.fill_between(km, trace["elevation_m"], trace["elevation_m"].min() - 10, color="#cdbb9b",
                    linewidth=0)
    ax.set_ylabel("elevation [m]")
    ax.set_xlabel("distance [km]")
    ax2 = ax.twinx()
    ax2.plot(km, 100 * trace["soc"], color=SOC_COLOURS[-1], linewidth=1.6)
    ax2.set_ylim(0, 100)
    ax2.set_ylabel("state of charge [%]")
    ax.set_xlim(0, km.max())
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode()


def _clock(ts: pd.Timestamp) -> str:
    return f"{pd.Timestamp(ts).round('s'):%a %d %b %H:%M:%S}"


def _popup(stop: Any, number: int) -> str:
    kind = stop.kind if not stop.nights or stop.kind == "overnight" else "charge, night"
    site = (f" (site {stop.site_kw:.0f} kW)" if stop.site_kw > stop.power_kw + 0.05 else "")
    rows = [
        ("stop", f"{number} — {kind}"), ("at km", f"{stop.route_km:.1f}"),
        ("arrive", f"{_clock(stop.arrive)} with {100 * stop.arrive_soc:.0f} %"),
        ("leave", f"{_clock(stop.depart)} with {100 * stop.depart_soc:.0f} %"),
        ("minutes", f"{stop.minutes:.0f} (stop {stop.overhead_min:.0f}, charging "
                    f"{stop.charge_min:.0f}, waiting {stop.wait_min:.0f}, night "
                    f"{stop.night_min:.0f})"),
        ("energy", f"{stop.battery_kwh:.1f} kWh into the battery, {stop.plug_kwh:.1f} kWh "
                   "from the plug"),
        ("connector", f"{stop.connector} {stop.power_kw:.0f} kW{site}" if stop.connector
         else "none"),
        ("detour", f"{stop.detour_km:.1f} km there and back, {stop.detour_min:.0f} min"),
    ]
    body = "".join(f"<tr><th style='text-align:left;padding-right:8px'>{html.escape(k)}</th>"
                   f"<td>{html.escape(v)}</td></tr>" for k, v in rows)
    return f"<b>{html.escape(stop.name)}</b><table>{body}</table>"


def plan_map_html(plan: Any, other_sites: Sequence[Any] = (), *, title: str = "") -> str:
    """The map page of a plan as HTML.

    Parameters
    ----------
    plan : tripsim.plan.search.Plan
        A plan with its simulated trip.
    other_sites : sequence of SnappedSite
        Sites near the route that the plan does not use (a hideable layer).
    title : str
        Heading above the map.

    Returns
    -------
    str
        A self-contained HTML page (map tiles load from the web when online).
    """
    trace = plan.trip.trace if plan.trip is not None else None
    if trace is None:
        raise ValueError("an infeasible plan has no route to draw")
    pts = _thin(trace)
    lat, lon = pts["lat_deg"].to_numpy(), pts["lon_deg"].to_numpy()
    fmap = folium.Map(location=[float(np.mean(lat)), float(np.mean(lon))], zoom_start=9,
                      height="68vh", control_scale=True)
    fmap.fit_bounds([[float(lat.min()), float(lon.min())], [float(lat.max()), float(lon.max())]])
    scale = cm.LinearColormap(SOC_COLOURS, vmin=0, vmax=100, caption="state of charge [%]")
    soc = 100 * pts["soc"].to_numpy()
    folium.ColorLine(positions=list(zip(lat, lon, strict=True)), colors=soc[:-1].tolist(),
                     colormap=scale, weight=6, opacity=0.9, name="route").add_to(fmap)
    scale.add_to(fmap)
    stops = folium.FeatureGroup(name="stops", show=True)
    for i, s in enumerate(plan.stops, start=1):
        night = s.kind == "overnight" or s.nights > 0
        bg = "#cfd8ea" if night else "#f1faee"
        label = "z" if night else str(i)
        icon = folium.DivIcon(html=f"<div style='{_STOP_STYLE.format(bg=bg)}'>{label}</div>",
                              icon_size=(26, 26), icon_anchor=(13, 13))
        folium.Marker([s.lat_deg, s.lon_deg], icon=icon, tooltip=s.name,
                      popup=folium.Popup(_popup(s, i), max_width=360),
                      class_name="tripsim-stop").add_to(stops)
    stops.add_to(fmap)
    used = {s.site_id for s in plan.stops}
    others = folium.FeatureGroup(name="other charging sites near the route", show=True)
    for snapped in other_sites:
        site = snapped.site
        if site.site_id in used or site.kind != "charger":
            continue
        power = max((kw for _, kw in site.connectors.values()), default=0.0)
        folium.CircleMarker([site.lat_deg, site.lon_deg], radius=4, color="#5c677d",
                            fill=True, fill_opacity=0.7,
                            tooltip=f"{site.name} ({power:.0f} kW, km {snapped.route_m / 1000:.0f})"
                            ).add_to(others)
    others.add_to(fmap)
    folium.LayerControl(collapsed=False).add_to(fmap)
    t = plan.totals
    head = (f"<h3 style='font-family:sans-serif;margin:8px'>{html.escape(title)}</h3>"
            f"<p style='font-family:sans-serif;margin:8px'>{t['charging_stops']} charging "
            f"stop(s), {t['nights']} night(s), {t['total_h']:.1f} h in all; depart "
            f"{_clock(t['depart'])}, arrive {_clock(t['arrive'])} with "
            f"{100 * t['arrival_soc']:.0f} %.</p>")
    below = (f"<div style='font-family:sans-serif;margin:8px'>{head}"
             f"<img alt='elevation and state of charge' style='max-width:100%' "
             f"src='data:image/png;base64,{_profile_png(trace)}'/>"
             f"<p class='tripsim-caution' style='color:#6d2e46'><b>Caution:</b> "
             f"{html.escape(CAUTION)}</p></div>")
    fmap.get_root().html.add_child(folium.Element(below))
    return fmap.get_root().render()
