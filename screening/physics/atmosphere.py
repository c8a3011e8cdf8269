"""Barometric pressure of the site from the 1976 standard atmosphere.

Used when a site has no barometer tag, or the barometer reading is missing at a time.
"""

from __future__ import annotations

import numpy as np

# U.S. Standard Atmosphere, 1976 (NOAA/NASA/USAF, COESA), Table 4 and eqs. 18, 33a:
P0 = 101325.0  # sea-level pressure [Pa]
T0 = 288.15  # sea-level temperature [K]
LAPSE = -0.0065  # temperature gradient of the lowest layer [K/m'] (geopotential metre)
R0_EARTH = 6356766.0  # effective Earth radius used for geopotential altitude [m]
# g0' * M0 / R* in [K/m']: 9.80665 * 0.0289644 / 8.31432 (Table 2 of the 1976 standard)
GMR = 9.80665 * 0.0289644 / 8.31432
TROPOPAUSE = 11000.0  # top of the first layer [m'] geopotential


def geopotential_altitude(z):
    """Geopotential altitude [m'] from geometric altitude ``z`` [m].

    U.S. Standard Atmosphere 1976, eq. 18: H = r0·Z / (r0 + Z), r0 = 6 356 766 m.
    """
    z = np.asarray(z, dtype=np.float64)
    return R0_EARTH * z / (R0_EARTH + z)


def standard_pressure(elevation):
    """Barometric pressure [Pa] of the 1976 standard atmosphere at a site elevation.

    Parameters
    ----------
    elevation : float or array_like
        Geometric altitude of the site above mean sea level [m]; valid from -500 m to
        11 000 m (the first layer of the model, which holds every plant on Earth).

    Returns
    -------
    float or numpy.ndarray
        Pressure [Pa].

    Notes
    -----
    U.S. Standard Atmosphere 1976, eq. 33a for a layer with a non-zero lapse rate:
    P = P0 · (T0 / (T0 + L·H))^(g0'·M0 / (R*·L)), with H the geopotential altitude (eq. 18).
    """
    z = np.asarray(elevation, dtype=np.float64)
    if np.any(~np.isfinite(z)) or np.any(z < -500.0) or np.any(z > TROPOPAUSE):
        raise ValueError(
            f"site elevation {elevation} m is outside the standard atmosphere's lowest layer "
            "(-500 m to 11000 m)"
        )
    h = geopotential_altitude(z)
    # eq. 33a of the 1976 standard
    p = P0 * (T0 / (T0 + LAPSE * h)) ** (GMR / LAPSE)
    return float(p) if p.ndim == 0 else p
