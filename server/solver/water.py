"""Properties of liquid water at atmospheric pressure, for water-like filtrates.

Both correlations are valid for liquid water at about 0.1 MPa between 0 and 100 degC.
The tests compare them with the IAPWS formulations through the ``iapws`` package.
"""

from .errors import SolverInputError

T_MIN_K = 273.15
T_MAX_K = 373.15


def _check_temperature(T: float) -> None:
    if not (T_MIN_K < T < T_MAX_K):
        raise SolverInputError(
            "temperature",
            f"water-like filtrate needs 0 to 100 °C (273.15 to 373.15 K); got {T - 273.15:.6g} °C",
        )


def water_viscosity(T: float) -> float:
    r"""Dynamic viscosity of liquid water at atmospheric pressure.

    .. math::
        \log_{10}\frac{\mu(\theta)}{\mu_{20}} =
        \frac{1.2378\,d - 1.303\times10^{-3} d^2 + 3.06\times10^{-6} d^3
              + 2.55\times10^{-8} d^4}{96 + \theta},\qquad d = 20 - \theta

    with theta in degC and mu_20 = 1.0016 mPa*s (the IAPWS 2008 value at 20 degC).

    Parameters
    ----------
    T : float
        Temperature [K], 273.15 < T < 373.15.

    Returns
    -------
    mu : float
        Viscosity [Pa*s].

    References
    ----------
    Kestin, Sokolov and Wakeham, J. Phys. Chem. Ref. Data 7 (1978) 941, the
    correlation as reproduced in the CRC Handbook of Chemistry and Physics
    ("Viscosity of liquid water"), from memory; checked against IAPWS 2008 in the tests.

    Examples
    --------
    >>> round(water_viscosity(293.15) * 1e3, 4)
    1.0016
    """
    _check_temperature(T)
    theta = T - 273.15
    d = 20.0 - theta
    exponent = (1.2378 * d - 1.303e-3 * d**2 + 3.06e-6 * d**3 + 2.55e-8 * d**4) / (96.0 + theta)
    return 1.0016e-3 * 10.0**exponent


def water_density(T: float) -> float:
    r"""Density of air-free liquid water at 101.325 kPa.

    .. math::
        \rho = a_5\left[1 - \frac{(\theta + a_1)^2 (\theta + a_2)}{a_3 (\theta + a_4)}\right]

    a1 = -3.983035 degC, a2 = 301.797 degC, a3 = 522528.9 degC^2, a4 = 69.34881 degC,
    a5 = 999.974950 kg/m^3, theta in degC.

    Parameters
    ----------
    T : float
        Temperature [K], 273.15 < T < 373.15 (the fit is made for 0-40 degC and
        stays within about 0.1 % of IAPWS-95 up to 100 degC; see the tests).

    Returns
    -------
    rho : float
        Density [kg/m^3].

    References
    ----------
    Tanaka, Girard, Davis, Peuto and Bignell, Metrologia 38 (2001) 301, eq. 1
    (from memory; checked against IAPWS-95 in the tests).

    Examples
    --------
    >>> round(water_density(293.15), 2)
    998.21
    """
    _check_temperature(T)
    theta = T - 273.15
    a1, a2, a3, a4, a5 = -3.983035, 301.797, 522528.9, 69.34881, 999.974950
    return a5 * (1.0 - (theta + a1) ** 2 * (theta + a2) / (a3 * (theta + a4)))

