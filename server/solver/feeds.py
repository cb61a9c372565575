"""Feed modes: how the press is fed, and the filtration curve t(V) that results.

A feed mode turns the cake and cloth (a :class:`Filtration`) and a filter area into a
filtration curve with time(V), volume(t), rate(V) and pressure(V), all vectorised.
A curve may also offer ``optimum_volume`` in closed form; the cycle optimiser falls
back to a numeric search for curves that do not.

To add a feed mode, write a dataclass with a ``curve(filtration, filter_area)`` method
returning an object with those four methods (see DEVELOPERS.md).
"""

from dataclasses import dataclass

import numpy as np

from . import constant_pressure as cp
from .errors import SolverInputError
from .resistance import specific_resistance


@dataclass(frozen=True)
class Filtration:
    """The slurry's cake and the cloth, as they meet any press (all SI).

    Attributes
    ----------
    solids_per_filtrate : float
        c, dry solids deposited per filtrate volume [kg/m^3].
    cake_volume_ratio : float
        v, cake volume per filtrate volume [-].
    wet_to_dry_ratio : float
        m, wet cake mass / dry cake mass [-].
    viscosity : float
        Filtrate viscosity [Pa*s].
    resistance_ref : float
        Specific cake resistance at the reference pressure [m/kg].
    reference_pressure : float
        [Pa].
    compressibility : float
        s [-], 0 <= s < 1.
    medium_resistance : float
        Cloth resistance R_m [1/m], >= 0.
    """

    solids_per_filtrate: float
    cake_volume_ratio: float
    wet_to_dry_ratio: float
    viscosity: float
    resistance_ref: float
    reference_pressure: float
    compressibility: float
    medium_resistance: float

    def __post_init__(self):
        checks = {
            "viscosity": (self.viscosity, "Pa*s"),
            "resistance": (self.resistance_ref, "m/kg"),
            "reference_pressure": (self.reference_pressure, "Pa"),
        }
        for name, (value, unit) in checks.items():
            if not value > 0.0:
                raise SolverInputError(name, f"must be > 0 {unit}; got {value:.6g}")
        if not self.medium_resistance >= 0.0:
            raise SolverInputError(
                "medium_resistance", f"must be >= 0 1/m; got {self.medium_resistance:.6g}"
            )
        specific_resistance(1.0, 1.0, 1.0, self.compressibility)  # validates s

    def specific_resistance(self, pressure):
        """alpha at a pressure drop [m/kg]."""
        return specific_resistance(
            self.resistance_ref, pressure, self.reference_pressure, self.compressibility
        )


@dataclass(frozen=True)
class ConstantPressureCurve:
    """t = (K_p/2) V^2 + B V at a fixed pressure drop."""

    pressure: float
    K_p: float
    B: float

    def time(self, V):
        return cp.time_for_volume(V, self.K_p, self.B)

    def volume(self, t):
        return cp.volume_at_time(t, self.K_p, self.B)

    def rate(self, V):
        return cp.rate_at_volume(V, self.K_p, self.B)

    def pressure_at(self, V):
        return np.full_like(np.asarray(V, dtype=float), self.pressure) if np.ndim(V) else self.pressure

    def optimum_volume(self, downtime: float, wash_coefficient: float) -> float:
        r"""Closed-form optimum filtrate volume per cycle.

        With wash time t_w = a V (K_p V + B), the throughput V / (t + t_w + t_d) is
        greatest at

        .. math:: V^* = \sqrt{t_d / (K_p (1/2 + a))}

        where the filtration and wash time together equal t_d + B (1 + a) V^*.

        References: McCabe, Smith & Harriott, chapter "Filtration" (optimum cycle
        time); Coulson & Richardson's Chemical Engineering Vol. 2, 5th ed., section 7.3.
        """
        return float(np.sqrt(downtime / (self.K_p * (0.5 + wash_coefficient))))


@dataclass(frozen=True)
class ConstantPressure:
    """Feed at a constant pressure drop across cake and cloth.

    Attributes
    ----------
    pressure : float
        [Pa], > 0.
    """

    pressure: float
    mode = "constant_pressure"

    def __post_init__(self):
        if not self.pressure > 0.0:
            raise SolverInputError("pressure", f"must be > 0 Pa; got {self.pressure:.6g}")

    def curve(self, filtration: Filtration, filter_area: float) -> ConstantPressureCurve:
        alpha = filtration.specific_resistance(self.pressure)
        K_p = cp.cake_constant(
            filtration.viscosity, alpha, filtration.solids_per_filtrate, filter_area, self.pressure
        )
        B = cp.medium_constant(
            filtration.viscosity, filtration.medium_resistance, filter_area, self.pressure
        )
        return ConstantPressureCurve(self.pressure, K_p, B)
