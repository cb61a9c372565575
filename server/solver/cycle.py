"""The press cycle: filtration, washing and downtime, its optimum and the chamber limit.

Cycle time T = t_f + t_w + t_d; filtrate throughput Q = V / T; dry solids throughput
c Q. Q(V) is unimodal; the unconstrained optimum is the tangent to V(t) from (-t_d, 0)
(the classic graphical construction), the chambers cap V at V_full, and the best
feasible cycle is at min(V*, V_full).

References: McCabe, Smith & Harriott, Unit Operations of Chemical Engineering, chapter
"Filtration" (cycle time of batch filters); Coulson & Richardson's Chemical Engineering
Vol. 2, 5th ed., section 7.3 and Example 7.2.
"""

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize_scalar

from .errors import SolverInputError
from .feeds import Filtration
from .press import Press
from .washing import wash_rate_divisor, wash_time

LIMITED_BY_OPTIMUM = "optimum"
LIMITED_BY_CHAMBERS = "chambers_full"

#: Below this chamber fill at the best cycle a warning says the cakes may discharge badly
#: (common practice, no source).
LOW_FILL_WARNING = 0.5


@dataclass(frozen=True)
class CycleSettings:
    """Everything in a cycle that is not filtration (all SI).

    Attributes
    ----------
    downtime : float
        Open, discharge, clean, close and other fixed steps per cycle [s], > 0.
    wash_ratio : float
        Wash volume / filtrate volume [-], >= 0.
    washing : str
        "through" (wash rate 1/4 of the final filtration rate) or "simple" (equal).
    wash_pressure : float or None
        [Pa]; None: the pressure at the end of filtration.
    wash_viscosity : float or None
        [Pa*s]; None: the filtrate viscosity.
    """

    downtime: float
    wash_ratio: float = 0.0
    washing: str = "through"
    wash_pressure: float | None = None
    wash_viscosity: float | None = None

    def __post_init__(self):
        if not self.downtime > 0.0:
            raise SolverInputError(
                "downtime", f"every press cycle has some downtime: must be > 0 s; got {self.downtime:.6g}"
            )
        if not self.wash_ratio >= 0.0:
            raise SolverInputError("wash_ratio", f"must be >= 0; got {self.wash_ratio:.6g}")
        wash_rate_divisor(self.washing)
        for name in ("wash_pressure", "wash_viscosity"):
            value = getattr(self, name)
            if value is not None and not value > 0.0:
                raise SolverInputError(name, f"must be > 0; got {value:.6g}")


@dataclass(frozen=True)
class CycleResult:
    """One press cycle ended after ``filtrate_volume`` of filtrate (all SI)."""

    filtrate_volume: float  # m^3 per cycle
    filtration_time: float  # s
    wash_volume: float  # m^3
    wash_time: float  # s
    downtime: float  # s
    cycle_time: float  # s
    filtrate_throughput: float  # m^3/s
    solids_throughput: float  # kg/s dry solids
    cake_thickness: float  # m, per face
    chamber_fill: float  # cake volume / chamber volume
    dry_cake_mass: float  # kg per cycle
    wet_cake_mass: float  # kg per cycle
    final_rate: float  # m^3/s at the end of filtration
    final_pressure: float  # Pa at the end of filtration
    limited_by: str
    feasible: bool  # the cake fits the chambers (within the fill fraction)


@dataclass(frozen=True)
class PressCase:
    """A whole scenario: cake and cloth, press, feed and cycle."""

    filtration: Filtration
    press: Press
    feed: object  # a feed mode from feeds.py
    cycle: CycleSettings


@dataclass(frozen=True)
class CycleSolution:
    best: CycleResult
    unconstrained_optimum: CycleResult
    chambers_full: CycleResult
    chambers_full_volume: float  # m^3
    matched_chamber_thickness: float  # m: the chambers just fill at the optimum
    throughput_gain_unconstrained: float  # Q*/Q_best - 1: what the chamber limit costs
    K_p: float | None = None
    B: float | None = None
    warnings: list[str] = field(default_factory=list)


class _CycleModel:
    """The curve of one case, with the wash and downtime that turn it into cycles."""

    def __init__(self, case: PressCase):
        self.case = case
        self.curve = case.feed.curve(case.filtration, case.press.filter_area)
        self.v = case.filtration.cake_volume_ratio

    def wash_time(self, V):
        c = self.case.cycle
        if c.wash_ratio == 0.0:
            return np.zeros_like(np.asarray(V, dtype=float)) if np.ndim(V) else 0.0
        final_pressure = self.curve.pressure_at(V)
        return wash_time(
            c.wash_ratio * V,
            self.curve.rate(V),
            c.washing,
            self.case.filtration.viscosity,
            c.wash_viscosity or self.case.filtration.viscosity,
            final_pressure,
            c.wash_pressure if c.wash_pressure is not None else final_pressure,
        )

    def throughput(self, V):
        """Filtrate throughput V / (t_f + t_w + t_d) [m^3/s], vectorised."""
        return V / (self.curve.time(V) + self.wash_time(V) + self.case.cycle.downtime)

    def wash_coefficient(self) -> float | None:
        """a in t_w = a V / rate(V), when the wash pressure ratio is constant."""
        c = self.case.cycle
        mu = self.case.filtration.viscosity
        mu_w = c.wash_viscosity or mu
        p = getattr(self.curve, "pressure", None)
        if p is None or not np.isscalar(p):
            return None
        p_w = c.wash_pressure if c.wash_pressure is not None else p
        return wash_rate_divisor(c.washing) * c.wash_ratio * (mu_w / mu) * (p / p_w)

    def optimum_volume(self, V_scale: float) -> float:
        closed_form = getattr(self.curve, "optimum_volume", None)
        a = self.wash_coefficient()
        if closed_form is not None and a is not None:
            return closed_form(self.case.cycle.downtime, a)
        return numeric_optimum_volume(self.throughput, V_scale)

    def result(self, V: float, limited_by: str) -> CycleResult:
        press, filtration = self.case.press, self.case.filtration
        t_f = float(self.curve.time(V))
        t_w = float(self.wash_time(V))
        t_d = self.case.cycle.downtime
        T = t_f + t_w + t_d
        c = filtration.solids_per_filtrate
        fill = float(press.chamber_fill(V, self.v))
        return CycleResult(
            filtrate_volume=float(V),
            filtration_time=t_f,
            wash_volume=self.case.cycle.wash_ratio * float(V),
            wash_time=t_w,
            downtime=t_d,
            cycle_time=T,
            filtrate_throughput=float(V) / T,
            solids_throughput=c * float(V) / T,
            cake_thickness=float(press.cake_thickness(V, self.v)),
            chamber_fill=fill,
            dry_cake_mass=c * float(V),
            wet_cake_mass=filtration.wet_to_dry_ratio * c * float(V),
            final_rate=float(self.curve.rate(V)),
            final_pressure=float(self.curve.pressure_at(V)),
            limited_by=limited_by,
            feasible=fill <= press.fill_fraction * (1.0 + 1e-12),
        )


def numeric_optimum_volume(throughput, V_scale: float) -> float:
    """Volume that maximises a unimodal throughput function, by search and refinement.

    Brackets the maximum by doubling from ``V_scale``, scans a log-spaced grid, then
    refines with a bounded scalar optimiser (Brent's method) around the best grid point.

    Parameters
    ----------
    throughput : callable
        Q(V) [m^3/s], vectorised over V [m^3].
    V_scale : float
        A volume of the right order, such as the chambers-full volume [m^3].
    """
    hi = V_scale
    for _ in range(200):
        if throughput(2.0 * hi) <= throughput(hi):
            break
        hi *= 2.0
    hi *= 2.0
    grid = np.geomspace(hi * 1e-9, hi, 2001)
    k = int(np.argmax(throughput(grid)))
    lo_b = grid[max(k - 1, 0)]
    hi_b = grid[min(k + 1, grid.size - 1)]
    res = minimize_scalar(
        lambda V: -throughput(V), bounds=(lo_b, hi_b), method="bounded",
        options={"xatol": hi_b * 1e-12},
    )
    return float(res.x)


def solve_cycle(case: PressCase) -> CycleSolution:
    """Unconstrained optimum, chambers-full cycle and best feasible cycle of a case."""
    model = _CycleModel(case)
    press = case.press
    V_full = press.chambers_full_volume(model.v)
    V_star = model.optimum_volume(V_full)

    unconstrained = model.result(V_star, LIMITED_BY_OPTIMUM)
    full = model.result(V_full, LIMITED_BY_CHAMBERS)
    best = unconstrained if V_star <= V_full else full
    matched = 2.0 * model.v * V_star / (press.fill_fraction * press.filter_area)

    warnings = []
    if best.chamber_fill < LOW_FILL_WARNING * press.fill_fraction:
        warnings.append(
            f"At the best cycle the cake fills only {100 * best.chamber_fill:.0f} % of the "
            f"chambers: soft, partly filled cakes may discharge badly. Chambers of about "
            f"{1000 * matched:.0f} mm would fill at the optimum."
        )
    return CycleSolution(
        best=best,
        unconstrained_optimum=unconstrained,
        chambers_full=full,
        chambers_full_volume=V_full,
        matched_chamber_thickness=matched,
        throughput_gain_unconstrained=unconstrained.filtrate_throughput / best.filtrate_throughput - 1.0,
        K_p=getattr(model.curve, "K_p", None),
        B=getattr(model.curve, "B", None),
        warnings=warnings,
    )


def compare_thicknesses(case: PressCase, thicknesses) -> list[tuple[float, CycleSolution]]:
    """The same press and slurry at each chamber thickness [m]: its cycle solution."""
    out = []
    for L in thicknesses:
        variant = PressCase(case.filtration, case.press.with_thickness(float(L)), case.feed, case.cycle)
        out.append((float(L), solve_cycle(variant)))
    return out
