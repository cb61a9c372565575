"""Production planning: from the best cycle to presses, chambers, shifts, cloth washes and
the spread of the answer.

Pure science in SI (numpy, scipy): every function takes and returns floats or arrays. The
web edge (server/plan.py) builds the systems and samples from a plan request; everything
numeric is here, next to the cycle it starts from (solver/cycle.py).

Notation: Q a press's best throughput while cycling [kg/s or m^3/s], T the cycle time [s],
t_d the downtime per cycle [s], S a shift [s], N a cloth-wash interval [cycles].
"""

import math
from dataclasses import dataclass, replace

import numpy as np

from . import constant_pressure as cp
from .curves import unit_steps
from .cycle import CycleFamily, PressSystem, solve_cycle
from .errors import SolverInputError
from .washing import wash_rate_divisor, wash_time

SECONDS_PER_DAY = 86400.0
#: The longest cloth-wash interval searched [cycles].
MAX_WASH_INTERVAL = 100_000


# ---- downtime from its parts -------------------------------------------------------


@dataclass(frozen=True)
class DowntimeParts:
    """Downtime of a cycle from its parts (all SI).

    t_d = fixed + per_chamber x chambers + cloth_wash_time / cloth_wash_every

    Attributes
    ----------
    fixed : float
        Open, close and the start of discharge, every cycle [s], > 0.
    per_chamber : float
        Plate shifting and discharge per chamber [s], >= 0.
    cloth_wash_time : float
        One cloth wash [s], >= 0 (0: cloths not washed on a schedule).
    cloth_wash_every : int or None
        Cycles between cloth washes; None: the interval of highest average throughput,
        from the cloth's resistance growth (:func:`best_wash_interval`).
    """

    fixed: float
    per_chamber: float = 0.0
    cloth_wash_time: float = 0.0
    cloth_wash_every: int | None = 1

    def __post_init__(self):
        if not self.fixed > 0.0:
            raise SolverInputError("fixed", f"every press cycle has some fixed downtime: must be > 0 s; "
                                   f"got {self.fixed:.6g}")
        for name in ("per_chamber", "cloth_wash_time"):
            if not getattr(self, name) >= 0.0:
                raise SolverInputError(name, f"must be >= 0 s; got {getattr(self, name):.6g}")
        if self.cloth_wash_every is not None and self.cloth_wash_every < 1:
            raise SolverInputError("cloth_wash.every_cycles", f"must be at least 1; got {self.cloth_wash_every}")

    def without_wash(self, chambers: int | None) -> float:
        """Downtime of every cycle, the cloth washes left out [s]."""
        if self.per_chamber > 0.0 and chambers is None:
            raise SolverInputError("per_chamber", "downtime per chamber needs the number of chambers: give the "
                                   "press by plate_face_area and chambers")
        return self.fixed + self.per_chamber * (chambers or 0)

    def per_cycle(self, chambers: int | None, wash_every: int | None = None) -> float:
        """Average downtime per cycle [s], the cloth wash shared over its interval."""
        every = wash_every or self.cloth_wash_every
        wash = self.cloth_wash_time / every if (self.cloth_wash_time and every) else 0.0
        return self.without_wash(chambers) + wash


# ---- the production requirement -----------------------------------------------------


def required_rate(per_calendar_day, hours_per_day=24.0, days_per_week=7.0, availability=1.0, margin=0.0):
    """The throughput a plant must reach while its presses cycle [per s].

    .. math:: Q_{req} = \\frac{D \\cdot 7/d_w}{h \\cdot 3600 \\cdot a} (1 + m)

    Parameters
    ----------
    per_calendar_day : float or ndarray
        Target averaged over every calendar day, as a rate [kg/s or m^3/s].
    hours_per_day : float
        Hours a working day the presses run [h].
    days_per_week : float
        Working days a week [-]; each must process 7/days_per_week of a calendar day's target.
    availability : float
        Fraction of running hours the presses actually cycle [-], (0, 1].
    margin : float
        Extra capacity asked for [-], >= 0.

    Reference: common practice, no source.

    Examples
    --------
    100 t a calendar day, 5 days a week, 16 h a day, 85 % available, 10 % margin:

    >>> round(required_rate(100e3 / 86400, 16, 5, 0.85, 0.10) * 3600, 1)  # kg/h
    11323.5
    """
    per_working_day = per_calendar_day * SECONDS_PER_DAY * 7.0 / days_per_week
    return per_working_day / (hours_per_day * 3600.0 * availability) * (1.0 + margin)


def presses_needed(required, per_press):
    """Whole presses that meet ``required`` when each gives ``per_press`` [-], vectorised.

    A ratio within 1e-12 above a whole number is that number (rounding, not a shortfall).

    >>> presses_needed(10.0, 4.0), presses_needed(8.0, 4.0)
    (3, 2)
    """
    n = np.maximum(1, np.ceil(np.asarray(required, dtype=float) / per_press * (1.0 - 1e-12)))
    return n.astype(int) if n.ndim else int(n)


# ---- whole cycles in a shift ---------------------------------------------------------


@dataclass(frozen=True)
class ShiftSchedule:
    cycles_per_shift: int  # whole cycles of the best schedule
    filtrate_volume: float  # m^3 per cycle
    cycle_time: float  # s, each cycle (n T <= S)
    filtrate_throughput: float  # m^3/s averaged over the shift
    cycles_at_best: int  # whole cycles of the unrestricted best cycle that fit the shift


def whole_cycle_schedule(family: CycleFamily, V_full: float, V_best: float, shift: float) -> ShiftSchedule:
    """The most filtrate a shift of ``shift`` [s] gives in whole cycles (none crossing its end).

    For n cycles a shift, the longest cycle that fits is S/n: its volume V_n solves
    T(V_n) = S/n (T rises with V), capped by full chambers; the shift gives n V_n. Every n
    from 1 to the most cycles that fit (T > t_d) is tried, by bisection on all of them at
    once, and the best kept.
    """
    t_d = family.cycle.downtime
    if not shift > t_d:
        raise SolverInputError("shift.length", f"a shift of {shift / 3600:.4g} h is not longer than the downtime "
                               f"of one cycle ({t_d / 60:.4g} min): no cycle fits")
    n = np.arange(1, min(int(math.ceil(shift / t_d)), 100_000) + 1)
    T_allowed = shift / n
    lo, hi = np.zeros(n.size), np.full(n.size, float(V_full))
    fits_full = family.cycle_time(hi) <= T_allowed
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        ok = family.cycle_time(mid) <= T_allowed
        lo, hi = np.where(ok, mid, lo), np.where(ok, hi, mid)
        if np.all(hi - lo <= 1e-13 * V_full):
            break
    V = np.where(fits_full, V_full, lo)
    # a count of cycles none of which fits (even the smallest cycle, with its filling, stages and
    # downtime, is longer than S/n) is no schedule: a 30-min shift was said to hold one 33-min cycle
    fits = fits_full | (lo > 0.0)
    if not fits.any():
        V_grid = float(V_full) * unit_steps(201)[1:]
        shortest = float(np.min(family.cycle_time(V_grid)))
        raise SolverInputError("shift.length", f"no cycle fits a shift of {shift / 60:.4g} min: the shortest "
                               f"cycle this press runs takes about {shortest / 60:.3g} min (its filling, the "
                               "stages after filtration and the downtime with it)")
    per_shift = np.where(fits, n * V, -np.inf)
    k = int(np.argmax(per_shift))
    T_best = float(family.cycle_time(V_best))
    return ShiftSchedule(int(n[k]), float(V[k]), float(family.cycle_time(V[k])), float(per_shift[k] / shift),
                         int(shift // T_best))


# ---- cloth wear and the cloth-wash interval --------------------------------------------


def best_interval(cycle_times, wash_time_: float) -> tuple[int, np.ndarray]:
    """The cloth-wash interval N of highest average throughput, by brute force over N.

    Over a period of N cycles (cycle k taking ``cycle_times[k]``, k = 0 after a wash) and
    one wash, the average throughput is N V / (sum_k<N T_k + t_w) for a fixed cycle volume V.

    Returns N and the relative throughput N / (sum T_k + t_w) for every N (N = 1, 2, ...).

    >>> best_interval(np.full(10, 100.0) + 2.0 * np.arange(10), 100.0)[0]  # sqrt(2 t_w / delta) = 10
    10
    """
    T = np.asarray(cycle_times, dtype=float)
    N = np.arange(1, T.size + 1)
    rate = N / (np.cumsum(T) + wash_time_)
    return int(np.argmax(rate)) + 1, rate


def classic_wash_interval(wash_time_: float, delta: float) -> float:
    """N* = sqrt(2 t_w / delta): the interval minimising (N t_0 + delta N (N-1)/2 + t_w) / N [cycles].

    Holds when each cycle takes delta [s] longer than the one before (cloth resistance
    rising linearly, filtration at constant pressure) and a wash takes t_w [s]. Common
    practice (a renewal argument like the economic order quantity), derived here.

    >>> classic_wash_interval(1800.0, 36.0)
    10.0
    """
    return math.sqrt(2.0 * wash_time_ / delta)


def worn_system(system: PressSystem, growth: float, k) -> PressSystem:
    """The system at the k-th cycle after a cloth wash: R_m + k x growth."""
    f = system.filtration
    return replace(system, filtration=replace(f, medium_resistance=f.medium_resistance + k * growth))


def worn_cycle_times(system: PressSystem, V: float, growth: float, wash_share: float, count: int) -> np.ndarray:
    """Cycle time of cycles k = 0 .. count-1 after a cloth wash at a fixed end volume V [s].

    The cloth's resistance grows by ``growth`` [1/m] a cycle; ``wash_share`` [s], the cloth
    wash's share of the downtime, is taken off (the wash is counted once per interval).
    Exact at a few dozen k (geometric), linear in between: exact at constant pressure,
    where the time is linear in R_m.
    """
    ks = np.unique(np.round(np.concatenate(([0.0, 1.0], np.geomspace(1.0, max(count - 1, 1), 40)))).astype(int))
    ks = ks[ks < count] if count > 1 else ks[:1]
    times = []
    for k in ks:
        s = worn_system(system, growth, float(k))
        fam = CycleFamily(s.filtration, s.press.filter_area, s.feed, s.cycle, V)
        times.append(float(fam.cycle_time(V)) - wash_share)
    if ks.size == 1:
        return np.full(count, times[0])
    return np.interp(np.arange(count), ks, times)


@dataclass(frozen=True)
class ClothWear:
    growth: float  # 1/m a cycle
    filtrate_volume: float  # m^3, the cycle held from wash to wash
    first_increase: float  # s, T_1 - T_0
    best_interval: int  # cycles, by brute force
    classic_interval: float  # cycles, sqrt(2 t_w / delta)
    cycle_times: np.ndarray  # s, k = 0, 1, ...
    average_throughput: np.ndarray  # m^3/s averaged over an interval of N = 1, 2, ... cycles


def cloth_wear(system: PressSystem, V: float, growth: float, wash_time_: float, wash_share: float = 0.0) -> ClothWear:
    """Cycle times as the cloth blinds, and the cloth-wash interval of highest throughput."""
    if not growth > 0.0:
        raise SolverInputError("cloth.resistance_growth_per_cycle", "must be > 0 1/m to find a cloth-wash interval")
    if not wash_time_ > 0.0:
        raise SolverInputError("cycle.downtime_parts.cloth_wash.time", "give the cloth wash time")
    T01 = worn_cycle_times(system, V, growth, wash_share, 2)
    delta = max(float(T01[1] - T01[0]), 1e-300)
    classic = classic_wash_interval(wash_time_, delta)
    count = int(min(MAX_WASH_INTERVAL, max(50, math.ceil(4.0 * classic))))
    T = worn_cycle_times(system, V, growth, wash_share, count)
    N, rate = best_interval(T, wash_time_)
    return ClothWear(growth, V, delta, N, classic, T, rate * V)


def best_wash_interval(system: PressSystem, growth: float, wash_time_: float) -> int:
    """The cloth-wash interval [cycles] for the best cycle of a system whose downtime leaves
    the wash out (the wash share then changes the best cycle: settled in a few rounds)."""
    base = system.cycle.downtime
    N = None
    for _ in range(6):
        share = wash_time_ / N if N else 0.0
        trial = replace(system, cycle=replace(system.cycle, downtime=base + share))
        V = solve_cycle(trial, with_curves=False).best.filtrate_volume
        new = cloth_wear(trial, V, growth, wash_time_, share).best_interval
        if new == N:
            break
        N = new
    return N


# ---- hydraulic feed energy -------------------------------------------------------------


def feed_energy(family: CycleFamily, V: float, pump_efficiency: float = 0.5) -> float:
    """Hydraulic energy the feed pump delivers in one cycle, over its efficiency [J].

    .. math:: E = \\frac{1}{\\eta}\\left(\\int_0^V \\Delta P\\,dV' + \\Delta P_w V_w\\right)

    the filtration's integral by the trapezoid rule on 2,001 volumes (exact at constant
    pressure), the wash at its pressure. The slurry's cake volume is not counted (the
    filtrate's path only). Reference: derived here (work of a pump = pressure x volume).
    """
    if not 0.0 < pump_efficiency <= 1.0:
        raise SolverInputError("target.pump_efficiency", f"must be above 0 and at most 1; got {pump_efficiency:.6g}")
    grid = np.linspace(0.0, V, 2001)
    P = np.asarray(family.curve.pressure_at(grid), dtype=float) * np.ones_like(grid)
    fill = float(np.sum(0.5 * (P[1:] + P[:-1]) * np.diff(grid)))
    c = family.cycle
    wash_pressure = c.wash_pressure if c.wash_pressure is not None else float(P[-1])
    return (fill + wash_pressure * family.wash_per_filtrate * V) / pump_efficiency


# ---- the best cycle of many samples at once (constant pressure) -------------------------


@dataclass(frozen=True)
class SampledSystems:
    """Arrays (one value per sample, or scalars) of what the best cycle depends on (SI).

    Field names as in Filtration, Press, ConstantPressure and CycleSettings.
    """

    viscosity: np.ndarray
    resistance_ref: np.ndarray
    reference_pressure: np.ndarray
    compressibility: np.ndarray
    medium_resistance: np.ndarray
    solids_per_filtrate: np.ndarray
    cake_volume_ratio: np.ndarray
    wash_per_filtrate: np.ndarray
    pressure: np.ndarray
    downtime: np.ndarray
    filter_area: float
    chamber_thickness: float
    fill_fraction: float
    washing: str
    wash_pressure: float | None
    wash_viscosity: float | None


def best_cycles_constant_pressure(s: SampledSystems) -> dict:
    """Best feasible cycle of every sample at constant pressure, in closed form (vectorised).

    V* = sqrt(t_d / (K_p (1/2 + a))), V = min(V*, V_full), T = t_f(V) + t_w(V) + t_d: the
    same relations the cycle family uses (ConstantPressureCurve.optimum_volume, wash_time),
    on arrays. Returns filtrate volume, cycle time and both throughputs [SI arrays].
    """
    alpha = s.resistance_ref * (s.pressure / s.reference_pressure) ** s.compressibility
    K_p = cp.cake_constant(s.viscosity, alpha, s.solids_per_filtrate, s.filter_area, s.pressure)
    B = cp.medium_constant(s.viscosity, s.medium_resistance, s.filter_area, s.pressure)
    mu_w = s.viscosity if s.wash_viscosity is None else s.wash_viscosity
    p_w = s.pressure if s.wash_pressure is None else s.wash_pressure
    a = wash_rate_divisor(s.washing) * s.wash_per_filtrate * (mu_w / s.viscosity) * (s.pressure / p_w)
    V_star = np.sqrt(s.downtime / (K_p * (0.5 + a)))
    V_full = s.fill_fraction * 0.5 * s.filter_area * s.chamber_thickness / s.cake_volume_ratio
    V = np.minimum(V_star, V_full)
    t_w = wash_time(s.wash_per_filtrate * V, cp.rate_at_volume(V, K_p, B), s.washing, s.viscosity, mu_w,
                    s.pressure, p_w)
    T = cp.time_for_volume(V, K_p, B) + t_w + s.downtime
    return {"filtrate_volume": V, "cycle_time": T, "filtrate_throughput": V / T,
            "solids_throughput": s.solids_per_filtrate * V / T}


# ---- sampling and what drives the spread ----------------------------------------------


def correlated_normals(rng: np.random.Generator, n: int, correlation: float) -> tuple[np.ndarray, np.ndarray]:
    """Two standard normal samples with the given correlation (z2 = rho z1 + sqrt(1-rho^2) e)."""
    if not -1.0 <= correlation <= 1.0:
        raise SolverInputError("resistance_medium_correlation", f"must be between -1 and 1; got {correlation:.6g}")
    z1 = rng.standard_normal(n)
    z2 = correlation * z1 + math.sqrt(max(0.0, 1.0 - correlation * correlation)) * rng.standard_normal(n)
    return z1, z2


def sample_range(rng: np.random.Generator, n: int, low: float, high: float, shape: str = "uniform") -> np.ndarray:
    """n values between low and high: uniform, or triangular with its mode in the middle."""
    if shape == "triangular":
        return rng.triangular(low, 0.5 * (low + high), high, n) if high > low else np.full(n, low)
    return rng.uniform(low, high, n)


def variance_shares(inputs: dict, y: np.ndarray, bins: int = 20) -> dict:
    """First-order variance shares Var(E[y | x_i]) / Var(y) of each input, by equal-count bins.

    A bin estimator of the first-order (main effect) sensitivity index: sort the samples by
    x_i, cut them into ``bins`` groups of equal count and take the variance of the group
    means. Saltelli et al., Global Sensitivity Analysis: The Primer (2008), ch. 1 (the
    main effect); the binned estimate is common practice, no source. Inputs with no spread
    get 0; shares of correlated inputs overlap (they may add up to more than 1).
    """
    y = np.asarray(y, dtype=float)
    total = float(np.var(y))
    out = {}
    for name, x in inputs.items():
        x = np.asarray(x, dtype=float)
        if total <= 0.0 or np.ptp(x) == 0.0:
            out[name] = 0.0
            continue
        groups = np.array_split(y[np.argsort(x, kind="stable")], bins)
        means = np.array([g.mean() for g in groups])
        sizes = np.array([g.size for g in groups])
        out[name] = float(min(1.0, np.sum(sizes * (means - y.mean()) ** 2) / y.size / total))
    return out


def solids_per_slurry(solids_mass_fraction, solids_density, liquid_density):
    """Dry solids per volume of slurry, c_s = x / (x/rho_s + (1 - x)/rho_l) [kg/m^3].

    Volumes of solids and liquid add (no dissolution). Follows from the definitions.

    >>> round(solids_per_slurry(0.2, 2600.0, 1000.0), 2)
    228.07
    """
    x = solids_mass_fraction
    return x / (x / solids_density + (1.0 - x) / liquid_density)
