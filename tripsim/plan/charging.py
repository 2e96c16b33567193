r"""Charging: power against state of charge, and the exact time to charge.

A vehicle accepts power as a concave, piecewise-linear function of its state of
charge (high in the middle, tapering towards full); a site caps it.  With power
:math:`P(s)` linear on each piece, the time from :math:`a` to :math:`b` is the exact
integral

.. math:: t = E_{cap} \int_a^b \frac{ds}{P(s)}, \qquad
   \int_{s_0}^{s_1} \frac{ds}{P_0 + k (s - s_0)} = \frac{\ln(P_1 / P_0)}{k}

(:math:`\Delta s / P_0` where :math:`k = 0`).  Concave piecewise-linear charging
functions are the usual model in charging-stop planning (Montoya et al. 2017,
Transportation Research B 103).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tripsim.errors import TripsimInputError
from tripsim.plan.sites import AC_CONNECTORS, DC_CONNECTORS
from tripsim.vehicle import Vehicle

__all__ = ["ChargeCurve", "charge_curve", "cold_factor"]

#: Power never falls below this while charging (the top-off trickle) [kW]; it keeps
#: the time to 100 % finite when a curve ends at zero.
MIN_KW = 0.5


def cold_factor(temp_c: float) -> float:
    """DC charging power factor in the cold: 1 at 15 °C and above, 0.5 at −10 °C and below.

    A battery without preconditioning limits fast-charging current when cold; the
    linear ramp is tripsim's assumption (common practice), not a measured curve.
    """
    return float(np.clip(0.5 + 0.5 * (temp_c + 10.0) / 25.0, 0.5, 1.0))


@dataclass(frozen=True)
class ChargeCurve:
    """Battery-side charging power, piecewise linear over state of charge.

    Attributes
    ----------
    soc : array
        Breakpoints, increasing from 0 to 1.
    kw : array
        Power into the battery at each breakpoint. [kW]
    capacity_kwh : float
        Usable energy that the state of charge refers to. [kWh]
    efficiency : float
        Plug to battery.
    """

    soc: np.ndarray
    kw: np.ndarray
    capacity_kwh: float
    efficiency: float

    def power_kw(self, soc: float | np.ndarray) -> float | np.ndarray:
        """Power [kW] into the battery at a state of charge."""
        return np.interp(soc, self.soc, self.kw)

    def cumulative_h(self, soc: np.ndarray | float) -> np.ndarray:
        """Hours to charge from 0 to ``soc`` (exact; vectorised)."""
        s = np.clip(np.asarray(soc, dtype=float), 0.0, 1.0)
        x, p = self.soc, self.kw
        k = np.diff(p) / np.diff(x)
        piece = np.where(np.isclose(k, 0.0), np.diff(x) / p[:-1],
                         np.log(p[1:] / p[:-1]) / np.where(np.isclose(k, 0.0), 1.0, k))
        start = np.concatenate([[0.0], np.cumsum(piece)])
        i = np.clip(np.searchsorted(x, s, side="right") - 1, 0, x.size - 2)
        p_s = p[i] + k[i] * (s - x[i])
        within = np.where(np.isclose(k[i], 0.0), (s - x[i]) / p[i],
                          np.log(p_s / p[i]) / np.where(np.isclose(k[i], 0.0), 1.0, k[i]))
        return self.capacity_kwh * (start[i] + within)

    def hours(self, a: float, b: float) -> float:
        """Hours to charge from ``a`` to ``b`` (0 when ``b ≤ a``)."""
        if b <= a:
            return 0.0
        return float(self.cumulative_h(b) - self.cumulative_h(a))

    def soc_after(self, a: float, hours: float) -> float:
        """State of charge after charging ``hours`` from ``a`` (exact inverse)."""
        target = float(self.cumulative_h(a)) + max(hours, 0.0)
        if target >= float(self.cumulative_h(1.0)):
            return 1.0
        grid = self.cumulative_h(self.soc)
        i = int(np.clip(np.searchsorted(grid, target, side="right") - 1, 0, self.soc.size - 2))
        x0, x1, p0, p1 = self.soc[i], self.soc[i + 1], self.kw[i], self.kw[i + 1]
        rest = (target - grid[i]) / self.capacity_kwh
        if np.isclose(p1, p0):
            return float(x0 + rest * p0)
        k = (p1 - p0) / (x1 - x0)
        return float(x0 + (p0 * np.exp(rest * k) - p0) / k)

    def plug_kwh(self, a: float, b: float) -> float:
        """Energy [kWh] drawn from the plug to charge from ``a`` to ``b``."""
        return max(b - a, 0.0) * self.capacity_kwh / self.efficiency


def _cap(x: np.ndarray, y: np.ndarray, cap: float) -> tuple[np.ndarray, np.ndarray]:
    """min(y(x), cap) as a piecewise-linear function, with the crossing points added."""
    xs, ys = [x[0]], [min(y[0], cap)]
    for x0, x1, y0, y1 in zip(x[:-1], x[1:], y[:-1], y[1:], strict=True):
        if (y0 - cap) * (y1 - cap) < 0:
            xc = x0 + (cap - y0) * (x1 - x0) / (y1 - y0)
            xs.append(xc)
            ys.append(cap)
        xs.append(x1)
        ys.append(min(y1, cap))
    return np.asarray(xs), np.asarray(ys)


def charge_curve(
    vehicle: Vehicle,
    connector: str,
    site_kw: float,
    *,
    temp_c: float = 20.0,
    capacity_kwh: float | None = None,
) -> ChargeCurve:
    """The charging curve of a vehicle on one connector of a site.

    Parameters
    ----------
    vehicle : Vehicle
        ``[charging]`` gives ``ac_max_kw``, ``dc_max_kw``, the DC ``curve`` (kW over
        SoC) and ``efficiency``.
    connector : str
        An AC connector charges flat at ``min(site, ac_max_kw)``; a DC connector follows
        the vehicle's curve, capped by the site and ``dc_max_kw`` and derated in the
        cold (:func:`cold_factor`).
    site_kw : float
        The site's output per port (at the plug). [kW]
    temp_c : float, default 20
        Ambient temperature. [°C]
    capacity_kwh : float, optional
        Usable energy (default the vehicle's). [kWh]

    Returns
    -------
    ChargeCurve
    """
    ch = vehicle.charging
    cap_kwh = vehicle.battery.usable_kwh if capacity_kwh is None else capacity_kwh
    eff = ch.efficiency
    if connector in AC_CONNECTORS:
        kw = min(site_kw, ch.ac_max_kw) * eff
        x, y = np.array([0.0, 1.0]), np.array([kw, kw])
    elif connector in DC_CONNECTORS:
        if ch.dc_max_kw <= 0:
            raise TripsimInputError(f"{vehicle.name} cannot charge on DC ({connector}): "
                                    "[charging] dc_max_kw is 0", "vehicle")
        if ch.curve is None:
            x, y = np.array([0.0, 1.0]), np.full(2, ch.dc_max_kw)
        else:
            x, y = np.asarray(ch.curve.x, float), np.asarray(ch.curve.y, float)
            if x[0] > 0:
                x, y = np.r_[0.0, x], np.r_[y[0], y]
            if x[-1] < 1:
                x, y = np.r_[x, 1.0], np.r_[y, y[-1]]
        y = np.minimum(y, ch.dc_max_kw) * cold_factor(temp_c)
        x, y = _cap(x, y, site_kw * eff)
    else:
        raise TripsimInputError(f"unknown connector {connector!r}", "chargers")
    y = np.maximum(y, MIN_KW)
    keep = np.r_[True, np.diff(x) > 1e-12]
    return ChargeCurve(x[keep], y[keep], cap_kwh, eff)
