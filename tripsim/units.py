"""Physical constants and unit conversions used across tripsim.

Inside tripsim everything is SI (m, s, kg, W, J) except energies reported to
people, which are in watt-hours (Wh), and angles, which are in degrees where
they are inputs or outputs (headings east of north, like pvlib's azimuths).
"""

from __future__ import annotations

from typing import TypeVar

import numpy as np
import pandas as pd

#: A scalar, an array or a Series: functions return the type they were given.
Numeric = TypeVar("Numeric", float, np.ndarray, pd.Series)

#: Standard acceleration of gravity [m/s²] (CGPM 1901, exact).
G_MPS2 = 9.80665
#: Specific gas constant of dry air [J/(kg·K)] (ISO 2533).
R_DRY_AIR_J_PER_KG_K = 287.05287
#: 0 °C in kelvin.
ZERO_C_K = 273.15
#: Standard sea-level pressure [Pa] (ISO 2533).
P0_PA = 101_325.0

M_PER_MI = 1609.344
M_PER_NMI = 1852.0
J_PER_WH = 3600.0
S_PER_H = 3600.0
KPH_PER_MPS = 3.6
MPH_PER_MPS = 3600.0 / M_PER_MI
LB_PER_KG = 1.0 / 0.45359237


def kph_to_mps(speed_kph: Numeric) -> Numeric:
    """Convert km/h to m/s (scalar, array or Series)."""
    return speed_kph / KPH_PER_MPS


def mps_to_kph(speed_mps: Numeric) -> Numeric:
    """Convert m/s to km/h (scalar, array or Series)."""
    return speed_mps * KPH_PER_MPS


def mph_to_mps(speed_mph: Numeric) -> Numeric:
    """Convert mph to m/s (scalar, array or Series)."""
    return speed_mph / MPH_PER_MPS


def mps_to_mph(speed_mps: Numeric) -> Numeric:
    """Convert m/s to mph (scalar, array or Series)."""
    return speed_mps * MPH_PER_MPS
