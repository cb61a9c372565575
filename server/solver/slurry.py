"""Slurry and cake mass balances (saturated cake, no dissolved solids).

Nomenclature (SI): x solids mass fraction of the slurry [-]; c_s solids per volume of
slurry [kg/m^3]; c dry solids deposited per volume of filtrate [kg/m^3]; m mass of wet
cake / mass of dry cake [-]; w cake moisture, liquid mass / wet cake mass [-];
epsilon cake porosity [-]; rho_s, rho_l solids and liquid density [kg/m^3];
v cake volume per filtrate volume [-].

References: Geankoplis, Transport Processes and Separation Process Principles,
section 14.2 (c = rho x / (1 - m x)); Coulson & Richardson's Chemical Engineering
Vol. 2, 5th ed., section 7.2 (cake volume per filtrate volume).
"""

from dataclasses import dataclass

from .errors import SolverInputError


def wet_to_dry_from_moisture(moisture: float) -> float:
    r"""Wet-to-dry cake mass ratio from moisture on a wet basis, :math:`m = 1/(1 - w)`.

    Parameters
    ----------
    moisture : float
        Liquid mass / wet cake mass [-], 0 < w < 1.

    Examples
    --------
    >>> wet_to_dry_from_moisture(0.5)
    2.0
    """
    if not (0.0 < moisture < 1.0):
        raise SolverInputError("moisture", f"must be between 0 and 1 (0 % and 100 %); got {moisture:.6g}")
    return 1.0 / (1.0 - moisture)


def moisture_from_wet_to_dry(wet_to_dry_ratio: float) -> float:
    r"""Moisture on a wet basis from the wet-to-dry mass ratio, :math:`w = 1 - 1/m`."""
    _check_ratio(wet_to_dry_ratio)
    return 1.0 - 1.0 / wet_to_dry_ratio


def wet_to_dry_from_porosity(porosity: float, solids_density: float, liquid_density: float) -> float:
    r"""Wet-to-dry mass ratio of a saturated cake,
    :math:`m = 1 + \varepsilon\rho_l / ((1 - \varepsilon)\rho_s)`.

    Parameters
    ----------
    porosity : float
        Cake void fraction [-], 0 < epsilon < 1.
    solids_density, liquid_density : float
        [kg/m^3].

    Examples
    --------
    >>> round(wet_to_dry_from_porosity(0.4, 3000.0, 1000.0), 6)
    1.222222
    """
    if not (0.0 < porosity < 1.0):
        raise SolverInputError("porosity", f"must be between 0 and 1 (exclusive); got {porosity:.6g}")
    return 1.0 + porosity * liquid_density / ((1.0 - porosity) * solids_density)


def porosity_from_wet_to_dry(wet_to_dry_ratio: float, solids_density: float, liquid_density: float) -> float:
    r"""Porosity of a saturated cake from its wet-to-dry mass ratio (inverse of
    :func:`wet_to_dry_from_porosity`),
    :math:`\varepsilon = (m - 1)\rho_s / ((m - 1)\rho_s + \rho_l)`."""
    _check_ratio(wet_to_dry_ratio)
    liquid_per_solid = (wet_to_dry_ratio - 1.0) * solids_density
    return liquid_per_solid / (liquid_per_solid + liquid_density)


def _check_ratio(wet_to_dry_ratio: float) -> None:
    if not wet_to_dry_ratio > 1.0:
        raise SolverInputError(
            "wet_to_dry_ratio", f"wet cake is heavier than dry cake: must be > 1; got {wet_to_dry_ratio:.6g}"
        )


def solids_per_filtrate_from_mass_fraction(
    solids_mass_fraction: float, wet_to_dry_ratio: float, liquid_density: float
) -> float:
    r"""Dry solids deposited per volume of filtrate from the slurry's solids mass fraction.

    .. math:: c = \frac{\rho_l x}{1 - m x}

    Parameters
    ----------
    solids_mass_fraction : float
        x [-], 0 < x < 1 and m x < 1.
    wet_to_dry_ratio : float
        m [-], > 1.
    liquid_density : float
        rho_l [kg/m^3].

    Returns
    -------
    c : float
        [kg/m^3].

    References
    ----------
    Geankoplis, Transport Processes and Separation Process Principles, section 14.2,
    and its Example 14.2-4.

    Examples
    --------
    >>> round(solids_per_filtrate_from_mass_fraction(0.191, 2.0, 996.9), 1)
    308.1
    """
    x, m = solids_mass_fraction, wet_to_dry_ratio
    if not (0.0 < x < 1.0):
        raise SolverInputError("solids_mass_fraction", f"must be between 0 and 1 (exclusive); got {x:.6g}")
    if m * x >= 1.0:
        raise SolverInputError(
            "solids_mass_fraction",
            f"the wet cake would hold all the liquid and leave no filtrate: needs solids mass fraction "
            f"x < 1/m = {1.0 / m:.4g} with wet-to-dry ratio m = {m:.4g}; got x = {x:.4g}",
        )
    return liquid_density * x / (1.0 - m * x)


def solids_per_filtrate_from_concentration(
    solids_concentration: float, wet_to_dry_ratio: float, solids_density: float, liquid_density: float
) -> float:
    r"""Dry solids deposited per volume of filtrate from solids per volume of slurry.

    One m^3 of slurry holds c_s kg of solids (volume c_s/rho_s); the cake keeps
    (m - 1) c_s kg of liquid; the rest of the liquid is filtrate:

    .. math:: c = \frac{c_s}{1 - c_s/\rho_s - (m - 1) c_s/\rho_l}

    Parameters
    ----------
    solids_concentration : float
        c_s [kg/m^3 of slurry], > 0.
    wet_to_dry_ratio : float
        m [-], > 1.
    solids_density, liquid_density : float
        [kg/m^3].

    Examples
    --------
    >>> round(solids_per_filtrate_from_concentration(100.0, 2.0, 2500.0, 1000.0), 4)
    116.2791
    """
    cs, m = solids_concentration, wet_to_dry_ratio
    if not cs > 0.0:
        raise SolverInputError("solids_concentration", f"must be > 0 kg/m^3; got {cs:.6g}")
    filtrate_fraction = 1.0 - cs / solids_density - (m - 1.0) * cs / liquid_density
    if filtrate_fraction <= 0.0:
        limit = 1.0 / (1.0 / solids_density + (m - 1.0) / liquid_density)
        raise SolverInputError(
            "solids_concentration",
            f"the cake would take up all the slurry and leave no filtrate: needs less than "
            f"{limit:.4g} kg/m^3 with wet-to-dry ratio {m:.4g}; got {cs:.4g} kg/m^3",
        )
    return cs / filtrate_fraction


def mass_fraction_from_solids_per_filtrate(c: float, wet_to_dry_ratio: float, liquid_density: float) -> float:
    r"""Inverse of :func:`solids_per_filtrate_from_mass_fraction`,
    :math:`x = c / (\rho_l + m c)`."""
    return c / (liquid_density + wet_to_dry_ratio * c)


def mass_fraction_from_solids_per_liquid(solids_per_liquid: float, liquid_density: float) -> float:
    r"""Solids mass fraction of a slurry given as dry solids per volume of its liquid,
    :math:`x = c_L / (c_L + \rho_l)`: one m^3 of slurry liquid (rho_l kg) carries c_L kg of solids.

    Examples
    --------
    >>> round(mass_fraction_from_solids_per_liquid(250.0, 1000.0), 6)
    0.2
    """
    if not solids_per_liquid > 0.0:
        raise SolverInputError("solids_per_liquid", f"must be > 0 kg/m^3; got {solids_per_liquid:.6g}")
    return solids_per_liquid / (solids_per_liquid + liquid_density)


def porosity_from_bulk_density(dry_bulk_density: float, solids_density: float) -> float:
    r"""Porosity from the cake's dry bulk density, :math:`\varepsilon = 1 - \rho_b/\rho_s`.

    A dry bulk density at or above the solids density leaves no pores: refused, naming both.

    Examples
    --------
    >>> round(porosity_from_bulk_density(1500.0, 3000.0), 6)
    0.5
    """
    eps = 1.0 - dry_bulk_density / solids_density
    if not eps > 0.0:
        raise SolverInputError(
            "dry_bulk_density",
            f"a cake of dry bulk density {dry_bulk_density:.4g} kg/m^3 made of solids of density "
            f"{solids_density:.4g} kg/m^3 would have porosity {eps:.4g}: no pores for liquid. The dry bulk "
            f"density (solids mass per cake volume) must be below the solids density",
            also=("solids_density",),
        )
    return eps


def saturated_cake_from_bulk_density(
    dry_bulk_density: float, wet_to_dry_ratio: float, liquid_density: float, liquid_input: str = "moisture"
) -> tuple[float, float]:
    r"""(porosity, solids density) of a saturated cake from its dry bulk density and liquid content.

    One m^3 of cake holds rho_b kg of solids and (m - 1) rho_b kg of liquid filling its pores:

    .. math:: \varepsilon = (m - 1)\rho_b/\rho_l, \qquad \rho_s = \rho_b / (1 - \varepsilon)

    ``liquid_input`` names the input that gave m ("moisture" or "wet_to_dry_ratio"), for the
    refusal of a combination no saturated cake can have (implied porosity >= 1).

    Examples
    --------
    >>> eps, rho_s = saturated_cake_from_bulk_density(1500.0, 1.2, 1000.0)
    >>> round(eps, 6), round(rho_s, 3)
    (0.3, 2142.857)
    """
    eps = (wet_to_dry_ratio - 1.0) * dry_bulk_density / liquid_density
    if not eps < 1.0:
        liquid = (wet_to_dry_ratio - 1.0) * dry_bulk_density
        raise SolverInputError(
            "dry_bulk_density",
            f"no saturated cake has both: a dry bulk density of {dry_bulk_density:.4g} kg/m^3 with "
            f"{100.0 * (1.0 - 1.0 / wet_to_dry_ratio):.4g} % moisture (wet-to-dry ratio {wet_to_dry_ratio:.4g}) "
            f"means {liquid:.4g} kg of liquid per m^3 of cake, more than the {liquid_density:.4g} kg/m^3 of "
            f"liquid that could fill it (implied porosity {eps:.4g}, must be below 1). Check the cake's "
            f"dry bulk density and its {liquid_input.replace('_', ' ')}",
            also=(liquid_input,),
        )
    return eps, dry_bulk_density / (1.0 - eps)


def cake_volume_ratio(c: float, porosity: float, solids_density: float) -> float:
    r"""Cake volume per filtrate volume, :math:`v = c / (\rho_s (1 - \varepsilon))` [-].

    Examples
    --------
    >>> round(cake_volume_ratio(102.27, 0.4, 3000.0), 4)
    0.0568
    """
    return c / (solids_density * (1.0 - porosity))


@dataclass(frozen=True)
class SlurryBalance:
    """The slurry and cake balance in one place (SI); porosity and v need the solids density."""

    solids_per_filtrate: float  # c [kg/m^3]
    wet_to_dry_ratio: float  # m [-]
    moisture: float  # w [-]
    porosity: float | None  # epsilon [-]
    cake_volume_ratio: float | None  # v [-]
    solids_mass_fraction: float  # x [-]
    solids_density: float | None = None  # rho_s [kg/m^3], as given or fixed by the cake


def balance(
    *, liquid_density: float, solids_density: float | None = None,
    solids_mass_fraction: float | None = None, solids_concentration: float | None = None,
    solids_per_liquid: float | None = None,
    moisture: float | None = None, wet_to_dry_ratio: float | None = None, porosity: float | None = None,
    dry_bulk_density: float | None = None,
) -> SlurryBalance:
    """c, m, moisture, porosity and v from one way of giving the solids and one of the cake.

    The solids: exactly one of ``solids_mass_fraction`` / ``solids_concentration`` (per slurry
    volume) / ``solids_per_liquid`` (per volume of slurry liquid). The cake: one of
    ``moisture`` / ``wet_to_dry_ratio`` / ``porosity`` / ``dry_bulk_density``, or the dry bulk
    density together with the moisture or wet-to-dry ratio, which fixes the porosity and the
    solids density of a saturated cake (``solids_density`` then not needed). Porosity, the dry
    bulk density alone and solids_concentration need ``solids_density``. Saturated cake (all
    pores full of filtrate).

    Examples
    --------
    >>> b = balance(liquid_density=996.9, solids_mass_fraction=0.191, wet_to_dry_ratio=2.0)
    >>> round(b.solids_per_filtrate, 1)
    308.1
    """
    rho_l, rho_s = liquid_density, solids_density
    eps = porosity
    if dry_bulk_density is not None and (moisture is not None or wet_to_dry_ratio is not None):
        given = "wet_to_dry_ratio" if wet_to_dry_ratio is not None else "moisture"
        m = wet_to_dry_ratio if wet_to_dry_ratio is not None else wet_to_dry_from_moisture(moisture)
        eps, derived_rho_s = saturated_cake_from_bulk_density(dry_bulk_density, m, rho_l, given)
        if rho_s is not None:
            raise SolverInputError(
                "solids_density",
                "the cake's dry bulk density with its moisture or wet-to-dry ratio already fixes the solids "
                f"density ({derived_rho_s:.4g} kg/m^3 here): leave the solids density out, or give the cake "
                "by one of them only",
                also=("dry_bulk_density",),
            )
        rho_s = derived_rho_s
    elif wet_to_dry_ratio is not None:
        m = wet_to_dry_ratio
    elif moisture is not None:
        m = wet_to_dry_from_moisture(moisture)
    elif porosity is not None or dry_bulk_density is not None:
        if rho_s is None:
            what = "porosity" if porosity is not None else "dry bulk density alone"
            raise SolverInputError("solids_density", f"the cake given by its {what} needs the solids density")
        if dry_bulk_density is not None:
            eps = porosity_from_bulk_density(dry_bulk_density, rho_s)
        m = wet_to_dry_from_porosity(eps, rho_s, rho_l)
    else:
        raise SolverInputError("moisture", "give the cake moisture, wet-to-dry ratio, porosity or dry bulk density")
    if solids_mass_fraction is not None:
        c = solids_per_filtrate_from_mass_fraction(solids_mass_fraction, m, rho_l)
    elif solids_per_liquid is not None:
        x = mass_fraction_from_solids_per_liquid(solids_per_liquid, rho_l)
        try:
            c = solids_per_filtrate_from_mass_fraction(x, m, rho_l)
        except SolverInputError:
            limit = rho_l / (m - 1.0)
            raise SolverInputError(
                "solids_per_liquid",
                f"the wet cake would hold all the liquid and leave no filtrate: needs less than {limit:.4g} kg "
                f"of solids per m^3 of liquid with wet-to-dry ratio {m:.4g}; got {solids_per_liquid:.4g} kg/m^3",
            ) from None
    elif solids_concentration is not None:
        if rho_s is None:
            raise SolverInputError("solids_density", "the solids concentration route needs the solids density")
        c = solids_per_filtrate_from_concentration(solids_concentration, m, rho_s, rho_l)
    else:
        raise SolverInputError("solids_mass_fraction", "give the solids mass fraction or concentration")
    if eps is None and rho_s is not None:
        eps = porosity_from_wet_to_dry(m, rho_s, rho_l)
    v = cake_volume_ratio(c, eps, rho_s) if rho_s is not None else None
    return SlurryBalance(c, m, 1.0 - 1.0 / m, eps, v, mass_fraction_from_solids_per_filtrate(c, m, rho_l),
                         rho_s)
