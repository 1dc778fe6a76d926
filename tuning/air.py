"""The air an engine breathes: standard atmosphere, pressure reduction, humidity, density.

Plain vectorised functions over floats and numpy arrays (numpy and :mod:`tuning.constants`
only), SI inside: m, K, Pa, kg/m³; relative humidity as a fraction 0..1.

Altitudes: *elevation* is the geometric height of a site above mean sea level, as maps give
it. The standard-atmosphere functions, :func:`pressure_altitude` and
:func:`density_altitude` work in *geopotential* metres, as USSA-1976 and aviation do; the
two differ by 0.05 % at 3000 m (3001.4 m geometric = 3000 m geopotential).

Physically impossible input (a negative absolute temperature or pressure, relative humidity
outside 0..1) raises :class:`ValueError`; input outside a formula's published or checked
range emits :class:`OutOfRangeWarning` (one per call) and is computed all the same. NaN
passes through as missing data.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from tuning import constants as c

__all__ = [
    "OutOfRangeWarning",
    "geopotential_altitude",
    "isa_temperature",
    "isa_pressure",
    "isa_density",
    "pressure_altitude",
    "density_altitude",
    "station_pressure_from_qnh",
    "station_pressure_from_sea_level_pressure",
    "station_pressure",
    "PRESSURE_KINDS",
    "saturation_vapour_pressure",
    "enhancement_factor",
    "vapour_pressure_from_relative_humidity",
    "vapour_pressure_from_dew_point",
    "dew_point_from_vapour_pressure",
    "temperature_at_height",
    "pressure_at_height",
    "vapour_pressure_at_height",
    "relative_humidity_from_vapour_pressure",
    "vapour_mole_fraction",
    "compressibility_factor",
    "moist_air_density",
    "dry_air_partial_density",
    "sae_j1349_correction_factor",
    "carburetor_icing_risk",
    "AirState",
    "air_state",
]

PRESSURE_KINDS = ("station", "qnh", "sea_level")

#: Air temperatures over which the CIPM-2007 density (and its p_sv) is used without a
#: warning [K]. CIPM-2007 states 15–27 °C for mass metrology; this module extends it to
#: -40..+50 °C, where tests/test_air.py checks it against CoolProp (Hyland–Wexler / Herrmann
#: et al. humid-air model) and psychrolib (ASHRAE formulas).
DENSITY_TEMPERATURE_RANGE = (c.ZERO_CELSIUS - 40.0, c.ZERO_CELSIUS + 50.0)
#: Station pressures over which CIPM-2007 is used without a warning [Pa] (its published
#: 600–1100 hPa).
DENSITY_PRESSURE_RANGE = (60_000.0, 110_000.0)
#: How far a dew point may lie above the air temperature and still count as rounding [K].
DEW_POINT_ROUNDING_TOLERANCE = 0.5


class OutOfRangeWarning(UserWarning):
    """Input outside the range in which a formula was published or checked."""


# --- helpers -------------------------------------------------------------------------------
def _array(value, name):
    if value is None:
        raise ValueError(f"{name} is required, got None")
    return np.asarray(value, dtype=float)


def _require_positive(value, name, unit):
    if np.any(value <= 0.0):
        bad = np.min(value[value <= 0.0]) if value.ndim else float(value)
        raise ValueError(f"{name} must be positive [{unit}], got {bad:g}")


def _require_non_negative(value, name, unit):
    if np.any(value < 0.0):
        bad = np.min(value[value < 0.0]) if value.ndim else float(value)
        raise ValueError(f"{name} must not be negative [{unit}], got {bad:g}")


def _warn_outside(value, low, high, what, unit, scale=1.0, offset=0.0, stacklevel=3):
    outside = (value < low) | (value > high)
    if np.any(outside):
        count = int(np.count_nonzero(outside))
        lo_v, hi_v = (np.nanmin(value[outside]) - offset) / scale, (np.nanmax(value[outside]) - offset) / scale
        given = f"{lo_v:.4g} {unit} is" if count == 1 else f"{count} values from {lo_v:.4g} to {hi_v:.4g} {unit} are"
        warnings.warn(
            f"{what}: {given} outside the range {(low - offset) / scale:g} to {(high - offset) / scale:g} {unit}; "
            "computed all the same (an extrapolation)",
            OutOfRangeWarning,
            stacklevel=stacklevel,
        )


def _result(value):
    """Return a Python-friendly numpy scalar for 0-d results, the array otherwise."""
    return value[()] if isinstance(value, np.ndarray) and value.ndim == 0 else value


# --- US Standard Atmosphere 1976, layer 0 ---------------------------------------------------
def geopotential_altitude(elevation):
    r"""Geopotential altitude of a geometric height.

    Parameters
    ----------
    elevation : array_like
        Geometric height above mean sea level [m].

    Returns
    -------
    numpy.ndarray
        Geopotential altitude [m].

    Notes
    -----
    :math:`H = r_0 h / (r_0 + h)` with :math:`r_0 = 6\,356\,766` m.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 18.
    """
    elevation = _array(elevation, "elevation")
    return _result(c.EARTH_RADIUS_USSA * elevation / (c.EARTH_RADIUS_USSA + elevation))


def _check_isa_altitude(geopotential_altitude, stacklevel=4):
    _warn_outside(
        geopotential_altitude,
        c.ISA_LOWEST_ALTITUDE,
        c.ISA_TROPOPAUSE,
        "US Standard Atmosphere 1976, first layer",
        "m geopotential",
        stacklevel=stacklevel,
    )


def isa_temperature(geopotential_altitude):
    r"""Air temperature of the standard atmosphere (troposphere).

    Parameters
    ----------
    geopotential_altitude : array_like
        Geopotential altitude [m], -5000 to 11 000.

    Returns
    -------
    numpy.ndarray
        Air temperature [K].

    Notes
    -----
    :math:`T = T_0 + L H`, :math:`T_0 = 288.15` K, :math:`L = -6.5` K/km, valid in the first
    layer (up to 11 km geopotential); outside it a warning is emitted and the same line is
    extended.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 23 and table 4.
    """
    altitude = _array(geopotential_altitude, "geopotential_altitude")
    _check_isa_altitude(altitude)
    return _result(c.ISA_SEA_LEVEL_TEMPERATURE + c.ISA_LAPSE_RATE * altitude)


def isa_pressure(geopotential_altitude):
    r"""Pressure of the standard atmosphere (troposphere).

    Parameters
    ----------
    geopotential_altitude : array_like
        Geopotential altitude [m], -5000 to 11 000.

    Returns
    -------
    numpy.ndarray
        Pressure [Pa].

    Notes
    -----
    :math:`p = P_0 (T/T_0)^{-g_0 M_0 / (R^* L)}` (hydrostatic, ideal gas, constant lapse).

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 33a.
    """
    altitude = _array(geopotential_altitude, "geopotential_altitude")
    _check_isa_altitude(altitude)
    ratio = 1.0 + c.ISA_LAPSE_RATE * altitude / c.ISA_SEA_LEVEL_TEMPERATURE
    return _result(c.ISA_SEA_LEVEL_PRESSURE * ratio**c.ISA_PRESSURE_EXPONENT)


def isa_density(geopotential_altitude):
    r"""Density of the standard atmosphere (troposphere, ideal gas).

    Parameters
    ----------
    geopotential_altitude : array_like
        Geopotential altitude [m], -5000 to 11 000.

    Returns
    -------
    numpy.ndarray
        Density [kg/m³].

    Notes
    -----
    :math:`\rho = p M_0 / (R^* T) = \rho_0 (T/T_0)^{-g_0 M_0/(R^* L) - 1}`, with
    :math:`\rho_0 = 1.2250` kg/m³ derived from :math:`P_0, T_0, M_0, R^*`.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 42.
    """
    altitude = _array(geopotential_altitude, "geopotential_altitude")
    _check_isa_altitude(altitude)
    ratio = 1.0 + c.ISA_LAPSE_RATE * altitude / c.ISA_SEA_LEVEL_TEMPERATURE
    return _result(c.ISA_SEA_LEVEL_DENSITY * ratio ** (c.ISA_PRESSURE_EXPONENT - 1.0))


def pressure_altitude(station_pressure):
    r"""Altitude of the standard atmosphere at which the pressure equals ``station_pressure``.

    Parameters
    ----------
    station_pressure : array_like
        Pressure [Pa].

    Returns
    -------
    numpy.ndarray
        Pressure altitude [m, geopotential].

    Notes
    -----
    The inverse of :func:`isa_pressure`:
    :math:`H = (T_0/L)\,[(p/P_0)^{1/k} - 1]`, :math:`k = -g_0 M_0 / (R^* L)`.
    Warns outside -5 to 11 km.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 33a (inverted).
    """
    pressure = _array(station_pressure, "station_pressure")
    _require_positive(pressure, "station_pressure", "Pa")
    altitude = (c.ISA_SEA_LEVEL_TEMPERATURE / c.ISA_LAPSE_RATE) * (
        (pressure / c.ISA_SEA_LEVEL_PRESSURE) ** (1.0 / c.ISA_PRESSURE_EXPONENT) - 1.0
    )
    _check_isa_altitude(altitude, stacklevel=3)
    return _result(altitude)


def density_altitude(air_density):
    r"""Altitude of the standard atmosphere at which the density equals ``air_density``.

    Parameters
    ----------
    air_density : array_like
        Air density [kg/m³]; pass the moist-air density for the usual density altitude.

    Returns
    -------
    numpy.ndarray
        Density altitude [m, geopotential], consistent with :func:`pressure_altitude`.

    Notes
    -----
    The inverse of :func:`isa_density` (ideal-gas ISA density):
    :math:`H = (T_0/L)\,[(\rho/\rho_0)^{1/(k-1)} - 1]`, :math:`k = -g_0 M_0/(R^* L)`.
    Warns outside -5 to 11 km.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 42 (inverted).
    """
    density = _array(air_density, "air_density")
    _require_positive(density, "air_density", "kg/m³")
    altitude = (c.ISA_SEA_LEVEL_TEMPERATURE / c.ISA_LAPSE_RATE) * (
        (density / c.ISA_SEA_LEVEL_DENSITY) ** (1.0 / (c.ISA_PRESSURE_EXPONENT - 1.0)) - 1.0
    )
    _check_isa_altitude(altitude, stacklevel=3)
    return _result(altitude)


# --- pressure reduction ----------------------------------------------------------------------
def station_pressure_from_qnh(qnh, elevation):
    r"""Station pressure from the altimeter setting (QNH) and the station elevation.

    Parameters
    ----------
    qnh : array_like
        Altimeter setting, QNH [Pa].
    elevation : array_like
        Station elevation above mean sea level [m], as given (geometric; the weather
        services' relation uses the field elevation directly).

    Returns
    -------
    numpy.ndarray
        Station pressure [Pa].

    Notes
    -----
    The altimeter-setting relation of the Smithsonian Meteorological Tables (1951), as the
    US National Weather Service applies it:

    .. math::

        p = \left(A^n - \frac{P_0^n\,a\,H}{T_0}\right)^{1/n} + 0.3\ \mathrm{hPa}

    with the relation's own constants n = 0.190284, :math:`P_0` = 1013.25 hPa,
    :math:`T_0` = 288 K, a = 6.5 K/km (Smithsonian 1951, p. 269). It assumes the standard
    atmosphere below the station, whatever the actual temperature; that is what QNH means.

    References
    ----------
    .. [1] R. J. List (ed.), Smithsonian Meteorological Tables, 6th ed., Smithsonian
       Institution, 1951, p. 269 (altimeter setting; page as MetPy cites it).
    .. [2] MetPy, ``metpy.calc.altimeter_to_station_pressure`` (independent implementation).
    """
    qnh = _array(qnh, "qnh")
    elevation = _array(elevation, "elevation")
    _require_positive(qnh, "qnh", "Pa")
    n = c.ALTIMETER_EXPONENT
    base = (qnh / c.ALTIMETER_PRESSURE) ** n - c.ALTIMETER_LAPSE_RATE * elevation / c.ALTIMETER_TEMPERATURE
    return _result(c.ALTIMETER_PRESSURE * base ** (1.0 / n) + c.ALTIMETER_OFFSET)


def station_pressure_from_sea_level_pressure(sea_level_pressure, elevation, air_temperature):
    r"""Station pressure from a pressure reduced to mean sea level (hypsometric equation).

    Parameters
    ----------
    sea_level_pressure : array_like
        Pressure reduced to mean sea level [Pa] (what forecasts usually give).
    elevation : array_like
        Station elevation above mean sea level [m, geometric]; converted to geopotential.
    air_temperature : array_like
        Air temperature at the station [K].

    Returns
    -------
    numpy.ndarray
        Station pressure [Pa].

    Notes
    -----
    Temperature assumption: a fictitious column of dry air below the station whose
    temperature is the station's air temperature and rises with the standard lapse rate
    (6.5 K/km) down to sea level. Integrating the hydrostatic equation over that column:

    .. math::

        p = p_{sl} \left(\frac{T}{T + |L| H}\right)^{g_0 M_0 / (R^* |L|)}

    with :math:`H` the geopotential height of the station. National weather services
    reduce with their own variants (a mean of current and 12-hour-old temperature, a
    humidity term); the difference is a few hPa at 1500 m in extreme cold or heat, so the
    QNH or the station pressure are better inputs when a forecast offers them.

    References
    ----------
    .. [1] WMO, Guide to Meteorological Instruments and Methods of Observation (WMO-No. 8),
       chapter 3, reduction of pressure to sea level (the hypsometric equation).
    .. [2] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 33a (the same integral).
    """
    sea_level_pressure = _array(sea_level_pressure, "sea_level_pressure")
    air_temperature = _array(air_temperature, "air_temperature")
    _require_positive(sea_level_pressure, "sea_level_pressure", "Pa")
    _require_positive(air_temperature, "air_temperature", "K")
    height = np.asarray(geopotential_altitude(elevation), float)
    ratio = air_temperature / (air_temperature - c.ISA_LAPSE_RATE * height)
    return _result(sea_level_pressure * ratio**c.ISA_PRESSURE_EXPONENT)


def station_pressure(pressure, pressure_kind, elevation, air_temperature=None):
    """Station pressure from a pressure of the kind a forecast gives.

    Parameters
    ----------
    pressure : array_like
        The pressure as given [Pa].
    pressure_kind : {"station", "qnh", "sea_level"}
        ``station``: already at the station; ``qnh``: altimeter setting
        (:func:`station_pressure_from_qnh`); ``sea_level``: reduced to mean sea level
        (:func:`station_pressure_from_sea_level_pressure`).
    elevation : array_like
        Station elevation above mean sea level [m].
    air_temperature : array_like, optional
        Air temperature at the station [K]; required for ``sea_level``.

    Returns
    -------
    numpy.ndarray
        Station pressure [Pa].
    """
    if pressure_kind == "station":
        pressure = _array(pressure, "pressure")
        _require_positive(pressure, "station pressure", "Pa")
        return _result(pressure)
    if pressure_kind == "qnh":
        return station_pressure_from_qnh(pressure, elevation)
    if pressure_kind == "sea_level":
        return station_pressure_from_sea_level_pressure(pressure, elevation, air_temperature)
    raise ValueError(f"pressure_kind must be one of {', '.join(PRESSURE_KINDS)}, got {pressure_kind!r}")


# --- water vapour -------------------------------------------------------------------------
def _psv(temperature):
    return np.exp(c.PSV_A * temperature**2 + c.PSV_B * temperature + c.PSV_C + c.PSV_D / temperature)


def saturation_vapour_pressure(air_temperature):
    r"""Saturation vapour pressure over liquid water (CIPM-2007 :math:`p_{sv}`).

    Parameters
    ----------
    air_temperature : array_like
        Temperature [K]. Below 0 °C the result is over supercooled water, as weather
        reports define relative humidity and dew point.

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure of pure water vapour [Pa] (no enhancement factor).

    Notes
    -----
    :math:`p_{sv} = 1\,\mathrm{Pa}\,\exp(A T^2 + B T + C + D/T)`, CIPM-2007 eq. A1.2
    (after Davis 1992). Published for the CIPM range (15–27 °C); tests/test_air.py checks
    it against psychrolib (ASHRAE Handbook, Hyland–Wexler over water, 0–50 °C) to 3e-4
    relative, and below 0 °C against MetPy's over-water formula (Ambaum 2020) to 3e-3.
    Warns outside -40..+50 °C.

    References
    ----------
    .. [1] A. Picard, R. S. Davis, M. Gläser, K. Fujii, "Revised formula for the density
       of moist air (CIPM-2007)", Metrologia 45 (2008) 149–155,
       doi:10.1088/0026-1394/45/2/004, eq. A1.2.
    """
    temperature = _array(air_temperature, "air_temperature")
    _require_positive(temperature, "air_temperature", "K")
    _warn_outside(
        temperature, *DENSITY_TEMPERATURE_RANGE, "saturation vapour pressure (CIPM-2007)", "degC", offset=c.ZERO_CELSIUS
    )
    return _result(_psv(temperature))


def enhancement_factor(station_pressure, air_temperature):
    r"""Enhancement factor of water vapour in air (CIPM-2007).

    Parameters
    ----------
    station_pressure : array_like
        Total pressure [Pa].
    air_temperature : array_like
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        :math:`f` [1], about 1.004 at sea level and 20 °C.

    Notes
    -----
    :math:`f = \alpha + \beta p + \gamma t^2`, t in °C (CIPM-2007 eq. A1.3).

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.3.
    """
    pressure = _array(station_pressure, "station_pressure")
    temperature = _array(air_temperature, "air_temperature")
    _require_positive(pressure, "station_pressure", "Pa")
    _require_positive(temperature, "air_temperature", "K")
    celsius = temperature - c.ZERO_CELSIUS
    return _result(c.ENHANCEMENT_ALPHA + c.ENHANCEMENT_BETA * pressure + c.ENHANCEMENT_GAMMA * celsius**2)


def vapour_pressure_from_relative_humidity(relative_humidity, air_temperature):
    """Water-vapour pressure from relative humidity (over water).

    Parameters
    ----------
    relative_humidity : array_like
        Relative humidity over water [1], 0..1.
    air_temperature : array_like
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        Vapour pressure :math:`e = h\\,p_{sv}(T)` [Pa] (WMO definition; the enhancement
        factor enters in :func:`vapour_mole_fraction`).

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.4.
    """
    relative_humidity = _array(relative_humidity, "relative_humidity")
    if np.any((relative_humidity < 0.0) | (relative_humidity > 1.0)):
        bad = relative_humidity[(relative_humidity < 0.0) | (relative_humidity > 1.0)]
        raise ValueError(f"relative_humidity must be a fraction 0..1, got {np.ravel(bad)[0]:g} (give 40 % as 0.40)")
    return _result(relative_humidity * saturation_vapour_pressure(air_temperature))


def vapour_pressure_from_dew_point(dew_point):
    """Water-vapour pressure from the dew point (over water).

    Parameters
    ----------
    dew_point : array_like
        Dew point over water [K].

    Returns
    -------
    numpy.ndarray
        Vapour pressure :math:`e = p_{sv}(T_d)` [Pa].

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.2.
    """
    return saturation_vapour_pressure(dew_point)


def dew_point_from_vapour_pressure(vapour_pressure):
    """Dew point over water at which :math:`p_{sv}` equals the vapour pressure.

    Parameters
    ----------
    vapour_pressure : array_like
        Vapour pressure [Pa], >= 0.

    Returns
    -------
    numpy.ndarray
        Dew point [K]; ``-inf`` for a vapour pressure of 0 (perfectly dry air).

    Notes
    -----
    The inverse of :func:`saturation_vapour_pressure`, by five Newton steps on
    :math:`\\ln p_{sv}(T)` from a Magnus first guess (vectorised, converged to better than
    1e-9 K over -60..+60 °C).

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.2.
    """
    pressure = _array(vapour_pressure, "vapour_pressure")
    _require_non_negative(pressure, "vapour_pressure", "Pa")
    with np.errstate(divide="ignore", invalid="ignore"):
        log_pressure = np.log(pressure)
        x = np.log(pressure / 611.2)
        temperature = c.ZERO_CELSIUS + 243.12 * x / (17.62 - x)  # Magnus (WMO-No. 8), first guess
        for _ in range(5):
            residual = c.PSV_A * temperature**2 + c.PSV_B * temperature + c.PSV_C + c.PSV_D / temperature - log_pressure
            slope = 2.0 * c.PSV_A * temperature + c.PSV_B - c.PSV_D / temperature**2
            temperature = temperature - residual / slope
        temperature = np.where(pressure == 0.0, -np.inf, temperature)
    _warn_outside(
        temperature[np.isfinite(temperature)],
        *DENSITY_TEMPERATURE_RANGE,
        "dew point (CIPM-2007 p_sv)",
        "degC",
        offset=c.ZERO_CELSIUS,
    )
    return _result(temperature)


def relative_humidity_from_vapour_pressure(vapour_pressure, air_temperature):
    """Relative humidity over water from the vapour pressure.

    Parameters
    ----------
    vapour_pressure : array_like
        Vapour pressure [Pa].
    air_temperature : array_like
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        Relative humidity :math:`e / p_{sv}(T)` [1] (not clipped: a dew point rounded
        above the air temperature gives slightly more than 1).
    """
    pressure = _array(vapour_pressure, "vapour_pressure")
    _require_non_negative(pressure, "vapour_pressure", "Pa")
    return _result(pressure / saturation_vapour_pressure(air_temperature))


def vapour_mole_fraction(vapour_pressure, station_pressure, air_temperature):
    r"""Mole fraction of water vapour in moist air (CIPM-2007).

    Parameters
    ----------
    vapour_pressure : array_like
        Vapour pressure :math:`e` [Pa] (relative humidity times :math:`p_{sv}`).
    station_pressure : array_like
        Total pressure [Pa].
    air_temperature : array_like
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        :math:`x_v = f(p, t)\, e / p` [1].

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.4.
    """
    pressure = _array(vapour_pressure, "vapour_pressure")
    total = _array(station_pressure, "station_pressure")
    _require_non_negative(pressure, "vapour_pressure", "Pa")
    return _result(enhancement_factor(total, air_temperature) * pressure / total)


def compressibility_factor(station_pressure, air_temperature, vapour_mole_fraction):
    r"""Compressibility factor of moist air (CIPM-2007).

    Parameters
    ----------
    station_pressure : array_like
        Total pressure [Pa].
    air_temperature : array_like
        Air temperature [K].
    vapour_mole_fraction : array_like
        Mole fraction of water vapour [1].

    Returns
    -------
    numpy.ndarray
        :math:`Z` [1], about 0.9996 at sea level and 20 °C.

    Notes
    -----
    .. math::

        Z = 1 - \frac{p}{T}\left[a_0 + a_1 t + a_2 t^2 + (b_0 + b_1 t) x_v
            + (c_0 + c_1 t) x_v^2\right] + \frac{p^2}{T^2}(d + e x_v^2)

    with t in °C (CIPM-2007 eq. A1.5).

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. A1.5.
    """
    pressure = _array(station_pressure, "station_pressure")
    temperature = _array(air_temperature, "air_temperature")
    x_v = _array(vapour_mole_fraction, "vapour_mole_fraction")
    _require_positive(pressure, "station_pressure", "Pa")
    _require_positive(temperature, "air_temperature", "K")
    return _result(_compressibility(pressure, temperature, x_v))


def _compressibility(pressure, temperature, x_v):
    t = temperature - c.ZERO_CELSIUS
    bracket = (
        c.COMPRESSIBILITY_A0
        + c.COMPRESSIBILITY_A1 * t
        + c.COMPRESSIBILITY_A2 * t**2
        + (c.COMPRESSIBILITY_B0 + c.COMPRESSIBILITY_B1 * t) * x_v
        + (c.COMPRESSIBILITY_C0 + c.COMPRESSIBILITY_C1 * t) * x_v**2
    )
    p_over_t = pressure / temperature
    return 1.0 - p_over_t * bracket + p_over_t**2 * (c.COMPRESSIBILITY_D + c.COMPRESSIBILITY_E * x_v**2)


def _density_parts(station_pressure, air_temperature, vapour_pressure, stacklevel=4):
    """(moist-air density, dry-air partial density) [kg/m³] by CIPM-2007, one range check."""
    pressure = _array(station_pressure, "station_pressure")
    temperature = _array(air_temperature, "air_temperature")
    vapour = _array(vapour_pressure, "vapour_pressure")
    _require_positive(pressure, "station_pressure", "Pa")
    _require_positive(temperature, "air_temperature", "K")
    _require_non_negative(vapour, "vapour_pressure", "Pa")
    _warn_outside(
        temperature,
        *DENSITY_TEMPERATURE_RANGE,
        "moist-air density (CIPM-2007)",
        "degC",
        offset=c.ZERO_CELSIUS,
        stacklevel=stacklevel,
    )
    _warn_outside(
        pressure, *DENSITY_PRESSURE_RANGE, "moist-air density (CIPM-2007)", "hPa", scale=100.0, stacklevel=stacklevel
    )
    celsius = temperature - c.ZERO_CELSIUS
    enhancement = c.ENHANCEMENT_ALPHA + c.ENHANCEMENT_BETA * pressure + c.ENHANCEMENT_GAMMA * celsius**2
    x_v = enhancement * vapour / pressure
    if np.any(x_v >= 1.0):
        raise ValueError("vapour_pressure must be below the station pressure")
    molar_density = pressure / (_compressibility(pressure, temperature, x_v) * c.CIPM_GAS_CONSTANT * temperature)
    dry = molar_density * c.DRY_AIR_MOLAR_MASS * (1.0 - x_v)
    moist = dry + molar_density * c.WATER_MOLAR_MASS * x_v
    return moist, dry


def moist_air_density(station_pressure, air_temperature, vapour_pressure):
    r"""Density of moist air (CIPM-2007).

    Parameters
    ----------
    station_pressure : array_like
        Total pressure [Pa].
    air_temperature : array_like
        Air temperature [K].
    vapour_pressure : array_like
        Vapour pressure [Pa] (relative humidity times :math:`p_{sv}`, or :math:`p_{sv}` at
        the dew point).

    Returns
    -------
    numpy.ndarray
        Density of the moist air [kg/m³].

    Notes
    -----
    .. math::

        \rho_a = \frac{p M_a}{Z R T}\left[1 - x_v\left(1 - \frac{M_v}{M_a}\right)\right]

    with :math:`M_a` for :math:`x_{CO_2} = 0.0004`, :math:`R = 8.314\,472` J/(mol K),
    :math:`x_v` from :func:`vapour_mole_fraction` and :math:`Z` from
    :func:`compressibility_factor` (CIPM-2007 eq. 1). Published for 600–1100 hPa and
    15–27 °C; agrees with CoolProp's humid-air model to 3e-4 from -10 to 40 °C, 600–1050 hPa
    and 0–100 % relative humidity (tests/test_air.py). Warns outside 600–1100 hPa and
    -40..+50 °C.

    References
    ----------
    .. [1] A. Picard, R. S. Davis, M. Gläser, K. Fujii, "Revised formula for the density of
       moist air (CIPM-2007)", Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004.
    """
    return _result(_density_parts(station_pressure, air_temperature, vapour_pressure)[0])


def dry_air_partial_density(station_pressure, air_temperature, vapour_pressure):
    r"""Partial density of the dry air in moist air: the oxygen-carrying part (CIPM-2007).

    Parameters
    ----------
    station_pressure : array_like
        Total pressure [Pa].
    air_temperature : array_like
        Air temperature [K].
    vapour_pressure : array_like
        Vapour pressure [Pa].

    Returns
    -------
    numpy.ndarray
        Mass of dry air per volume of the mixture [kg/m³].

    Notes
    -----
    The dry-air term of CIPM-2007 eq. 1: :math:`\rho_d = p M_a (1 - x_v) / (Z R T)`;
    :math:`\rho_a = \rho_d + p M_v x_v / (Z R T)`. Same validity as
    :func:`moist_air_density`.

    References
    ----------
    .. [1] Picard et al., Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, eq. 1.
    """
    return _result(_density_parts(station_pressure, air_temperature, vapour_pressure)[1])


# --- engine power -------------------------------------------------------------------------
def sae_j1349_correction_factor(dry_air_pressure, air_temperature):
    r"""SAE J1349 power correction factor to the standard reference conditions.

    Parameters
    ----------
    dry_air_pressure : array_like
        Dry-air partial pressure of the inlet air, station pressure minus vapour
        pressure [Pa].
    air_temperature : array_like
        Inlet air temperature [K].

    Returns
    -------
    numpy.ndarray
        CF [1]: observed power times CF is the power at 99 kPa dry air and 25 °C.
        Above 1: the engine makes less power than at the reference.

    Notes
    -----
    SAE J1349 (August 2004), spark ignition:

    .. math::

        CF = 1.18\,\frac{99}{p_d}\sqrt{\frac{T}{298}} - 0.18

    with :math:`p_d` in kPa and :math:`T` in K (mechanical efficiency 85 % built in). The
    standard applies it to inlet air of 15–35 °C and 90–105 kPa dry-air pressure (from
    memory); outside it, as at most mountain sites, the figure is an extrapolation and a
    warning is emitted. Ratios of CF between two states (event against reference) are
    the more useful number.

    References
    ----------
    .. [1] SAE J1349, Engine Power Test Code — Spark Ignition and Compression Ignition —
       Net Power Rating, SAE International, revised August 2004, section 5.
    """
    pressure = _array(dry_air_pressure, "dry_air_pressure")
    temperature = _array(air_temperature, "air_temperature")
    _require_positive(pressure, "dry_air_pressure", "Pa")
    _require_positive(temperature, "air_temperature", "K")
    _warn_outside(
        temperature, *c.SAE_J1349_AIR_TEMPERATURE_RANGE, "SAE J1349 correction factor", "degC", offset=c.ZERO_CELSIUS
    )
    _warn_outside(
        pressure, *c.SAE_J1349_DRY_AIR_PRESSURE_RANGE, "SAE J1349 correction factor", "kPa dry air", scale=1000.0
    )
    return _result(
        c.SAE_J1349_SLOPE
        * (c.SAE_J1349_DRY_AIR_PRESSURE / pressure)
        * np.sqrt(temperature / c.SAE_J1349_FORMULA_TEMPERATURE)
        - c.SAE_J1349_OFFSET
    )


# --- carburetor icing ---------------------------------------------------------------------
#: Band limits, most serious first: (lowest air temperature [°C], highest air temperature
#: [°C], largest dew-point spread [K]). Our own limits, drawn from memory after the shape of
#: the carburettor-icing probability charts published for light aircraft (e.g. UK CAA
#: Safety Sense leaflet 14); approximate, for a caution on the sheet, not a forecast.
ICING_BANDS = (
    (3, -5.0, 20.0, 5.0),
    (2, -8.0, 28.0, 10.0),
    (1, -10.0, 35.0, 16.0),
)


def carburetor_icing_risk(air_temperature, dew_point):
    """Carburetor icing risk band from the air temperature and the dew point.

    Parameters
    ----------
    air_temperature : array_like
        Air temperature [K].
    dew_point : array_like
        Dew point [K].

    Returns
    -------
    numpy.ndarray of int
        0 none, 1 light, 2 moderate, 3 serious.

    Notes
    -----
    The venturi's pressure drop and the fuel's evaporation cool the mixture by up to about
    20–30 K, so ice forms in cool, humid air well above 0 °C. Bands by air temperature and
    dew-point spread :math:`T - T_d` (:data:`ICING_BANDS`): serious for -5..20 °C within
    5 K, moderate for -8..28 °C within 10 K, light for -10..35 °C within 16 K. The limits
    are our own, from memory after the shape of the published light-aircraft charts;
    NaN input gives band 0.

    References
    ----------
    .. [1] UK Civil Aviation Authority, Safety Sense Leaflet 14, "Piston Engine Icing"
       (carburettor icing probability chart), cited from memory.
    """
    temperature = _array(air_temperature, "air_temperature") - c.ZERO_CELSIUS
    spread = temperature - (_array(dew_point, "dew_point") - c.ZERO_CELSIUS)
    band = np.zeros(np.broadcast(temperature, spread).shape, dtype=int)
    for level, low, high, largest_spread in reversed(ICING_BANDS):
        inside = (temperature >= low) & (temperature <= high) & (spread <= largest_spread)
        band = np.where(inside, level, band)
    return _result(band)


# --- everything at once ---------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class AirState:
    """The air at one or many samples; every field a numpy array of the broadcast shape.

    Units: K, Pa, kg/m³, m (geopotential altitudes), fractions; ``icing_risk`` an int band.
    """

    air_temperature: np.ndarray  # [K]
    station_pressure: np.ndarray  # [Pa]
    vapour_pressure: np.ndarray  # [Pa]
    dew_point: np.ndarray  # [K], over water
    relative_humidity: np.ndarray  # [1], over water
    moist_air_density: np.ndarray  # [kg/m³]
    dry_air_density: np.ndarray  # [kg/m³], partial density of the dry air
    pressure_altitude: np.ndarray  # [m, geopotential]
    density_altitude: np.ndarray  # [m, geopotential], from the moist-air density
    sae_j1349_cf: np.ndarray  # [1]
    icing_risk: np.ndarray  # int, 0..3: none, light, moderate, serious


# --- the air at another height -------------------------------------------------------------
def temperature_at_height(air_temperature, from_elevation, to_elevation, lapse_rate=c.STANDARD_LAPSE_RATE):
    r"""Air temperature carried from one height to another along a constant lapse rate.

    Parameters
    ----------
    air_temperature : array_like
        Air temperature at ``from_elevation`` [K].
    from_elevation, to_elevation : array_like
        Geometric heights above mean sea level [m] (converted to geopotential inside).
    lapse_rate : array_like
        Decrease of temperature with height :math:`\Gamma = -dT/dz` [K/m]; positive cools
        upwards (the standard atmosphere's 0.0065), 0 isothermal, negative an inversion.

    Returns
    -------
    numpy.ndarray
        Air temperature at ``to_elevation`` [K].

    Notes
    -----
    :math:`T = T_b - \Gamma (H - H_b)` in geopotential metres; the standard atmosphere's
    linear temperature profile with :math:`L_{M,b} = -\Gamma`. The sign is the meteorologists':
    a route below the weather's height is warmer by :math:`\Gamma` per metre.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 23 (linear temperature in a
       layer) and eq. 18 (geopotential altitude).
    """
    temperature = _array(air_temperature, "air_temperature")
    _require_positive(temperature, "air_temperature", "K")
    rise = _geopotential_rise(from_elevation, to_elevation)
    result = temperature - np.asarray(lapse_rate, float) * rise
    _require_positive(result, "air_temperature at the new height", "K")
    return _result(result)


def pressure_at_height(
    station_pressure, air_temperature, from_elevation, to_elevation, lapse_rate=c.STANDARD_LAPSE_RATE
):
    r"""Pressure carried from one height to another (hypsometric equation, linear temperature).

    Parameters
    ----------
    station_pressure : array_like
        Pressure at ``from_elevation`` [Pa].
    air_temperature : array_like
        Air temperature at ``from_elevation`` [K].
    from_elevation, to_elevation : array_like
        Geometric heights above mean sea level [m].
    lapse_rate : array_like
        Decrease of temperature with height [K/m] (see :func:`temperature_at_height`).

    Returns
    -------
    numpy.ndarray
        Pressure at ``to_elevation`` [Pa].

    Notes
    -----
    Hydrostatic balance of an ideal gas whose temperature is linear in geopotential height:
    :math:`p = p_b \, (T / T_b)^{g_0 M_0 / (R^* \Gamma)}` with :math:`T` from
    :func:`temperature_at_height` (USSA-1976 eq. 33a with :math:`L_{M,b} = -\Gamma`), and for
    :math:`\Gamma = 0` :math:`p = p_b \exp(-g_0 M_0 (H - H_b) / (R^* T_b))` (eq. 33b). Dry air's
    molar mass is used for the column; the vapour in it lowers its mean molar mass by under
    0.5 %, which changes 1000 m of pressure difference by under 0.1 % (estimate).

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eq. 33a and 33b.
    """
    pressure = _array(station_pressure, "station_pressure")
    temperature = _array(air_temperature, "air_temperature")
    _require_positive(pressure, "station_pressure", "Pa")
    _require_positive(temperature, "air_temperature", "K")
    gamma = np.asarray(lapse_rate, float)
    rise = _geopotential_rise(from_elevation, to_elevation)
    g_m_r = c.STANDARD_GRAVITY * c.USSA_AIR_MOLAR_MASS / c.USSA_GAS_CONSTANT  # [K/m]
    top = temperature - gamma * rise
    _require_positive(top, "air_temperature at the new height", "K")
    flat = np.abs(gamma) < 1e-9
    with np.errstate(divide="ignore", invalid="ignore"):
        linear = pressure * (top / temperature) ** (g_m_r / np.where(flat, 1.0, gamma))
    isothermal = pressure * np.exp(-g_m_r * rise / temperature)
    return _result(np.where(flat, isothermal, linear))


def vapour_pressure_at_height(vapour_pressure, station_pressure, pressure_at_new_height, temperature_at_new_height):
    r"""Vapour pressure at another height, keeping the mixing ratio, never above saturation.

    Parameters
    ----------
    vapour_pressure : array_like
        Vapour pressure where the weather was given [Pa].
    station_pressure : array_like
        Pressure where the weather was given [Pa].
    pressure_at_new_height : array_like
        Pressure at the new height [Pa] (:func:`pressure_at_height`).
    temperature_at_new_height : array_like
        Air temperature at the new height [K] (:func:`temperature_at_height`).

    Returns
    -------
    numpy.ndarray
        Vapour pressure [Pa], at most :math:`p_{sv}(T)` (relative humidity at most 1).

    Notes
    -----
    The mixing ratio :math:`w = \varepsilon e / (p - e)` is what an air parcel keeps when it
    moves up or down without condensing; constant :math:`w` means constant :math:`e/p`, so
    :math:`e = e_b \, p / p_b`. Where that exceeds saturation at the new temperature the
    surplus is taken as condensed (cloud, fog) and :math:`e = p_{sv}(T)`. Keeping the dew point
    instead would keep :math:`e`; the two differ by :math:`e_b (1 - p/p_b)`, under 1 hPa for
    1000 m and 15 hPa of vapour, which moves the dry-air density by under 0.1 %.

    References
    ----------
    .. [1] WMO, Guide to Instruments and Methods of Observation (WMO-No. 8), annex 4.B
       (mixing ratio, from memory); Picard et al., Metrologia 45 (2008) 149, eq. A1.2 (p_sv).
    """
    vapour = _array(vapour_pressure, "vapour_pressure")
    _require_non_negative(vapour, "vapour_pressure", "Pa")
    carried = (
        vapour * _array(pressure_at_new_height, "pressure_at_new_height") / _array(station_pressure, "station_pressure")
    )
    return _result(np.minimum(carried, saturation_vapour_pressure(temperature_at_new_height)))


def _geopotential_rise(from_elevation, to_elevation):
    """Geopotential height of ``to_elevation`` above ``from_elevation`` [m] (negative below)."""
    below = _array(from_elevation, "from_elevation")
    above = _array(to_elevation, "to_elevation")
    return np.asarray(geopotential_altitude(above), float) - np.asarray(geopotential_altitude(below), float)


def air_state(air_temperature, station_pressure, *, relative_humidity=None, dew_point=None):
    """Compute the whole air state from temperature, station pressure and one humidity value.

    Parameters
    ----------
    air_temperature : array_like
        Air temperature [K].
    station_pressure : array_like
        Pressure at the site [Pa] (see :func:`station_pressure` to convert QNH or
        sea-level pressure).
    relative_humidity : array_like, optional
        Relative humidity over water [1], 0..1.
    dew_point : array_like, optional
        Dew point over water [K]. Give exactly one of ``relative_humidity`` and ``dew_point``.

    Returns
    -------
    AirState
        All fields broadcast to the common shape.

    Raises
    ------
    ValueError
        Both or neither humidity given; non-positive temperature or pressure; relative
        humidity outside 0..1; dew point more than 0.5 K above the air temperature.
    """
    if (relative_humidity is None) == (dew_point is None):
        raise ValueError("give exactly one of relative_humidity and dew_point")
    temperature = _array(air_temperature, "air_temperature")
    pressure = _array(station_pressure, "station_pressure")
    _require_positive(temperature, "air_temperature", "K")
    _require_positive(pressure, "station_pressure", "Pa")
    if relative_humidity is not None:
        relative_humidity = _array(relative_humidity, "relative_humidity")
        vapour = np.asarray(vapour_pressure_from_relative_humidity(relative_humidity, temperature))
        dew = np.asarray(dew_point_from_vapour_pressure(vapour))
    else:
        dew = _array(dew_point, "dew_point")
        _require_positive(dew, "dew_point", "K")
        if np.any(dew > temperature + DEW_POINT_ROUNDING_TOLERANCE):
            excess = np.max(np.broadcast_to(dew - temperature, np.broadcast(dew, temperature).shape))
            raise ValueError(
                f"dew_point is {excess:.2f} K above the air temperature; a dew point cannot exceed "
                f"the air temperature (more than {DEW_POINT_ROUNDING_TOLERANCE} K of rounding)"
            )
        vapour = np.asarray(vapour_pressure_from_dew_point(dew))
        relative_humidity = np.asarray(relative_humidity_from_vapour_pressure(vapour, temperature))
    moist, dry = _density_parts(pressure, temperature, vapour, stacklevel=3)
    shape = np.broadcast(temperature, pressure, vapour, dew, relative_humidity).shape

    def full(value, dtype=float):
        return np.array(np.broadcast_to(value, shape), dtype=dtype)

    return AirState(
        air_temperature=full(temperature),
        station_pressure=full(pressure),
        vapour_pressure=full(vapour),
        dew_point=full(dew),
        relative_humidity=full(relative_humidity),
        moist_air_density=full(moist),
        dry_air_density=full(dry),
        pressure_altitude=full(pressure_altitude(pressure)),
        density_altitude=full(density_altitude(moist)),
        sae_j1349_cf=full(sae_j1349_correction_factor(pressure - vapour, temperature)),
        icing_risk=full(carburetor_icing_risk(temperature, dew), dtype=int),
    )
