"""Specific cake resistance and its pressure dependence."""

from .errors import SolverInputError


def specific_resistance(
    resistance_ref: float, pressure: float, reference_pressure: float, compressibility: float
):
    r"""Average specific cake resistance at a pressure drop, power law in reference form.

    .. math:: \alpha = \alpha_{ref} (\Delta P / \Delta P_{ref})^s

    The reference form keeps alpha_ref in m/kg whatever the pressure unit, unlike the
    alpha_0 * dP^s form whose alpha_0 changes with the pressure unit.

    Parameters
    ----------
    resistance_ref : float
        alpha_ref, specific cake resistance at the reference pressure [m/kg], > 0.
    pressure : float or ndarray
        Pressure drop across the cake [Pa], > 0.
    reference_pressure : float
        [Pa], > 0.
    compressibility : float
        s [-], 0 <= s < 1 (0: incompressible cake).

    References
    ----------
    Tiller and co-workers; McCabe, Smith & Harriott, Unit Operations of Chemical
    Engineering, chapter "Filtration"; Wakeman & Tarleton, Solid/Liquid Separation.

    Examples
    --------
    >>> specific_resistance(1e11, 4e5, 1e5, 0.5)
    200000000000.0
    """
    if not (0.0 <= compressibility < 1.0):
        raise SolverInputError(
            "compressibility", f"must be at least 0 and below 1; got {compressibility:.6g}"
        )
    return resistance_ref * (pressure / reference_pressure) ** compressibility
