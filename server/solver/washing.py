"""Cake washing time in a filter press.

Through-washing ("thorough washing", washing plates): the wash crosses the whole cake,
twice the cake thickness at half the area, so the wash rate is 1/4 of the final
filtration rate. Simple washing (the wash follows the filtrate's path): the wash rate
equals the final filtration rate. With wash viscosity mu_w and wash pressure dP_w the
rate scales with (mu/mu_w) (dP_w/dP).

References: McCabe, Smith & Harriott, Unit Operations of Chemical Engineering, chapter
"Filtration" (washing filter cakes); Geankoplis, Transport Processes and Separation
Process Principles, 3rd ed., section 14.2 and Example 14.2-3.
"""

from .errors import SolverInputError

WASH_RATE_DIVISOR = {"through": 4.0, "simple": 1.0}


def wash_rate_divisor(washing: str) -> float:
    """phi: final filtration rate / wash rate at equal pressure and viscosity [-]."""
    try:
        return WASH_RATE_DIVISOR[washing]
    except KeyError:
        raise SolverInputError("washing", f"must be 'through' or 'simple'; got {washing!r}") from None


def wash_time(
    wash_volume, final_rate, washing, filtration_viscosity, wash_viscosity,
    filtration_pressure, wash_pressure,
):
    r"""Time to pass the wash liquid through the cake.

    .. math:: t_w = \varphi \frac{V_w}{(dV/dt)_{final}} \frac{\mu_w}{\mu}\frac{\Delta P}{\Delta P_w}

    Parameters
    ----------
    wash_volume : float or ndarray
        V_w [m^3].
    final_rate : float or ndarray
        Filtrate flow at the end of filtration [m^3/s].
    washing : str
        "through" (phi = 4) or "simple" (phi = 1).
    filtration_viscosity, wash_viscosity : float
        [Pa*s].
    filtration_pressure, wash_pressure : float or ndarray
        Pressure drop at the end of filtration and during washing [Pa].

    Returns
    -------
    t_w : float or ndarray
        [s].

    Examples
    --------
    Geankoplis Example 14.2-3 (through-washing, wash = 10 % of 3.37 m^3 filtrate, final
    rate 6.94e-3 m^3/s) gives about 194 s:

    >>> round(float(wash_time(0.337, 6.94e-3, "through", 1.0, 1.0, 1.0, 1.0)))
    194
    """
    phi = wash_rate_divisor(washing)
    return phi * wash_volume / final_rate * (wash_viscosity / filtration_viscosity) * (
        filtration_pressure / wash_pressure
    )
