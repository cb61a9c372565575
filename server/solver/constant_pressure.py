"""Constant-pressure cake filtration (Ruth's equation) in closed form.

Rate equation (Ruth; Carman):

    dV/dt = A dP / (mu (alpha c V / A + R_m))

integrated at constant dP from V = 0 at t = 0:

    t = (K_p / 2) V^2 + B V,   K_p = mu alpha c / (A^2 dP),   B = mu R_m / (A dP)

References: McCabe, Smith & Harriott, Unit Operations of Chemical Engineering, chapter
"Filtration"; Geankoplis, Transport Processes and Separation Process Principles, 3rd ed.,
section 14.2 (eqs. 14.2-11 to 14.2-13).
"""

import math

import numpy as np


def cake_constant(viscosity, specific_resistance, solids_per_filtrate, filter_area, pressure):
    r"""Cake term of the constant-pressure equation, :math:`K_p = \mu\alpha c / (A^2 \Delta P)`.

    Parameters
    ----------
    viscosity : float
        Filtrate viscosity [Pa*s].
    specific_resistance : float
        Average specific cake resistance alpha at this pressure [m/kg].
    solids_per_filtrate : float
        c [kg/m^3].
    filter_area : float
        A [m^2].
    pressure : float
        Pressure drop dP [Pa].

    Returns
    -------
    K_p : float
        [s/m^6].

    Examples
    --------
    Geankoplis Example 14.2-1 gives K_p = 6.00e6 s/m^6 with alpha = 1.863e11 m/kg:

    >>> round(cake_constant(8.937e-4, 1.863e11, 23.47, 0.0439, 338e3) / 1e6, 2)
    6.0
    """
    return viscosity * specific_resistance * solids_per_filtrate / (filter_area**2 * pressure)


def medium_constant(viscosity, medium_resistance, filter_area, pressure):
    r"""Medium term of the constant-pressure equation, :math:`B = \mu R_m / (A \Delta P)` [s/m^3].

    Examples
    --------
    >>> round(medium_constant(8.937e-4, 10.63e10, 0.0439, 338e3))
    6402
    """
    return viscosity * medium_resistance / (filter_area * pressure)


def time_for_volume(V, K_p, B):
    r"""Filtration time to collect V at constant pressure, :math:`t = (K_p/2) V^2 + B V` [s].

    Parameters
    ----------
    V : float or ndarray
        Filtrate volume [m^3].
    K_p : float
        [s/m^6].
    B : float
        [s/m^3].
    """
    return 0.5 * K_p * V * V + B * V


def volume_at_time(t, K_p, B):
    r"""Filtrate collected after time t at constant pressure (inverse of :func:`time_for_volume`).

    .. math:: V = \frac{\sqrt{B^2 + 2 K_p t} - B}{K_p} = \frac{2t}{\sqrt{B^2 + 2K_p t} + B}

    The second form is used: it has no cancellation when B^2 >> K_p t.

    Examples
    --------
    >>> round(float(volume_at_time(time_for_volume(2.5, 40.0, 16.0), 40.0, 16.0)), 12)
    2.5
    """
    t = np.asarray(t, dtype=float)
    root = np.sqrt(B * B + 2.0 * K_p * t)
    with np.errstate(invalid="ignore", divide="ignore"):
        V = np.where(t > 0.0, 2.0 * t / (root + B), 0.0)
    return V if V.ndim else float(V)


def rate_at_volume(V, K_p, B):
    r"""Filtrate flow when V has been collected, :math:`dV/dt = 1/(K_p V + B)` [m^3/s].

    Infinite at V = 0 when B = 0 (no cloth resistance): the first instant's flow is unbounded.
    """
    if isinstance(V, float | int):  # one volume: plain floats (numpy's overhead is most of it)
        return reciprocal(K_p * V + B)
    return reciprocal(K_p * np.asarray(V, dtype=float) + B)


def reciprocal(x):
    """1/x for floats or arrays, inf where x = 0 (no warning)."""
    if isinstance(x, float | int):
        return 1.0 / x if x != 0 else math.inf
    with np.errstate(divide="ignore"):
        out = np.divide(1.0, np.asarray(x, dtype=float))
    return out if out.ndim else float(out)
