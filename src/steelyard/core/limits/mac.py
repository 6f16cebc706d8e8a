"""CG as a percentage of the mean aerodynamic chord (MAC).

Wing-borne vehicles often state CG limits in %MAC rather than as stations:
%MAC = (x − LEMAC) / MAC × 100 (FAA-H-8083-1), with LEMAC the station of the
MAC's leading edge. Both directions are vectorised; scalars in give floats out.
"""

from __future__ import annotations

import numpy as np

from steelyard.core.errors import SteelyardError


def _check(lemac, mac) -> None:
    lemac, mac = np.asarray(lemac, dtype=float), np.asarray(mac, dtype=float)
    if not np.isfinite(lemac).all():
        raise SteelyardError("LEMAC must be a finite station", field="lemac")
    if not (np.isfinite(mac).all() and (mac > 0).all()):
        raise SteelyardError("MAC must be a finite length greater than zero", field="mac")


def _out(value: np.ndarray):
    return float(value) if np.ndim(value) == 0 else value


def percent_mac(x, lemac, mac):
    """Station(s) x [m] as %MAC."""
    _check(lemac, mac)
    x = np.asarray(x, dtype=float)
    return _out((x - lemac) / np.asarray(mac, dtype=float) * 100.0)


def station_from_percent_mac(percent, lemac, mac):
    """%MAC back to station(s) [m]: LEMAC + percent/100 × MAC."""
    _check(lemac, mac)
    p = np.asarray(percent, dtype=float)
    return _out(np.asarray(lemac, dtype=float) + p / 100.0 * np.asarray(mac, dtype=float))
