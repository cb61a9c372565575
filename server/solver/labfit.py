"""Evaluation of constant-pressure lab filtration tests: from (t, V) readings to alpha and R_m.

A small pressure filter or leaf test at constant dP gives t against V. With a start
offset (t0, V0) for tests where constant pressure starts after a filling period,

    (t - t0)/(V - V0) = (K_p/2)(V + V0) + B,   K_p = mu alpha c/(A^2 dP),  B = mu R_m/(A dP)

so a straight line through (V + V0, (t - t0)/(V - V0)) has slope K_p/2 and intercept B:

    alpha = 2 slope A^2 dP / (mu c),    R_m = intercept A dP / mu

Tests at several pressures give the compressibility s as the slope of ln alpha against
ln dP. References: Geankoplis, Transport Processes and Separation Process Principles
(3rd ed.), section 14.2 and Example 14.2-1; McCabe, Smith & Harriott, Unit Operations of
Chemical Engineering, chapter "Filtration"; VDI 2762 Part 2 (the lab test and its
evaluation).
"""

from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .errors import SolverInputError

#: An end point is left out when the line through the others predicts it so badly that a
#: residual this large would occur by chance less often than this (two-sided).
OUTLIER_PROBABILITY = 1e-3
MIN_POINTS = 3


@dataclass(frozen=True)
class LineFit:
    """Ordinary least squares y = intercept + slope x, with standard errors."""

    slope: float
    intercept: float
    slope_stderr: float | None
    intercept_stderr: float | None
    r_squared: float
    residuals: np.ndarray
    n: int


def fit_line(x, y) -> LineFit:
    """Least-squares straight line with the standard errors of slope and intercept.

    Standard errors need at least three points (one degree of freedom); with two they
    are None. Same results as scipy.stats.linregress (the tests check).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    xm, ym = x.mean(), y.mean()
    sxx = float(((x - xm) ** 2).sum())
    if n < 2 or sxx == 0.0:
        raise SolverInputError("points", "a line needs at least two readings at different volumes")
    slope = float(((x - xm) * (y - ym)).sum() / sxx)
    intercept = float(ym - slope * xm)
    residuals = y - (intercept + slope * x)
    sse = float(residuals @ residuals)
    syy = float(((y - ym) ** 2).sum())
    r2 = 1.0 - sse / syy if syy > 0 else 1.0
    if n > 2:
        s2 = sse / (n - 2)
        se_slope = float(np.sqrt(s2 / sxx))
        se_int = float(np.sqrt(s2 * (1.0 / n + xm * xm / sxx)))
    else:
        se_slope = se_int = None
    return LineFit(slope, intercept, se_slope, se_int, r2, residuals, n)


def _prediction_z(x, y, k: int, others: np.ndarray) -> tuple[float, float]:
    """How many standard errors of prediction point k lies off the line through ``others``,
    and the two-sided chance of that (Student t with n - 2 degrees of freedom)."""
    xo, yo = x[others], y[others]
    fit = fit_line(xo, yo)
    m = xo.size
    s = np.sqrt(float(fit.residuals @ fit.residuals) / (m - 2))
    xm = xo.mean()
    se = s * np.sqrt(1.0 + 1.0 / m + (x[k] - xm) ** 2 / float(((xo - xm) ** 2).sum()))
    if se == 0.0:
        return (np.inf, 0.0) if y[k] != fit.intercept + fit.slope * x[k] else (0.0, 1.0)
    z = abs(y[k] - (fit.intercept + fit.slope * x[k])) / se
    return float(z), float(2.0 * stats.t.sf(z, m - 2))


def _block_tests(x, y, sums, first: int, last: int, end: str, k_max: int):
    """For k = 1..k_max end readings left out at ``end``: how far the block's innermost
    reading lies off the line through the remaining readings, in standard errors of
    prediction, and the two-sided chance of that (Student t, m - 2 degrees of freedom).

    All k at once from prefix sums of the (centred) readings: linear in the number of
    readings, where fitting each line afresh would be quadratic.
    """
    k = np.arange(1, k_max + 1)
    if end == "first":
        inner, lo, hi = first + k - 1, first + k, np.full(k.size, last)
    else:
        inner, lo, hi = last - k + 1, np.full(k.size, first), last - k
    S1, Sx, Sy, Sxx, Sxy, Syy = (c[hi + 1] - c[lo] for c in sums)
    m = (hi - lo + 1).astype(float)
    xm, ym = Sx / m, Sy / m
    sxx = Sxx - m * xm * xm
    sxy = Sxy - m * xm * ym
    syy = Syy - m * ym * ym
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = sxy / sxx
        sse = np.maximum(syy - slope * sxy, 0.0)
        s_res = np.sqrt(sse / (m - 2))
        xk, yk = x[inner], y[inner]
        se = s_res * np.sqrt(1.0 + 1.0 / m + (xk - xm) ** 2 / sxx)
        off = np.abs(yk - (ym + slope * (xk - xm)))
        z = np.where(se > 0.0, off / se, np.where(off > 0.0, np.inf, 0.0))
    p = 2.0 * stats.t.sf(z, m - 2)
    return z, p


def choose_region(x, y) -> tuple[int, int, str]:
    """Propose the linear region of t/V against V: indices [first, last] and how it chose.

    Early readings before the line settles (filling, cloth wetting) and late readings where
    the cell is full or the slurry ran out lie off the line. At each end, blocks of 1, 2, ...
    end readings are tried: a block is left out when its innermost reading lies off the
    line through the remaining readings by more than chance allows (a prediction-interval
    test, Student t, chance below OUTLIER_PROBABILITY). Testing the innermost reading of a
    block keeps several bad readings from hiding each other. At least half the readings
    and at least four are kept, and at most a third are left out at either end.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    # prefix sums of the readings centred on their means (keeps the sums' cancellation small)
    xc, yc = x - x.mean(), y - y.mean()
    sums = [np.concatenate(([0.0], np.cumsum(v))) for v in (np.ones(n), xc, yc, xc * xc, xc * yc, yc * yc)]
    first, last = 0, n - 1
    keep_min = max(4, (n + 1) // 2)
    budget = {"first": n // 3, "last": n // 3}
    reasons = []
    while True:
        candidates = []  # per end: the largest significant block, as (p, end, k, z)
        for end in ("first", "last"):
            k_max = min(budget[end], last - first + 1 - keep_min)
            if k_max < 1:
                continue
            z, p = _block_tests(xc, yc, sums, first, last, end, k_max)
            significant = np.nonzero(p < OUTLIER_PROBABILITY)[0]
            if significant.size:
                i = int(significant[-1])
                candidates.append((float(p[i]), end, i + 1, float(z[i])))
        if not candidates:
            break
        best = min(candidates)
        _, end, k, z = best
        if end == "first":
            dropped = f"{first + 1}" if k == 1 else f"{first + 1} to {first + k}"
            first += k
        else:
            dropped = f"{last + 1}" if k == 1 else f"{last - k + 2} to {last + 1}"
            last -= k
        budget[end] -= k
        reasons.append(f"reading{'s' if k > 1 else ''} {dropped}, {z:.1f} standard errors off the line "
                       f"through the others")
    if reasons:
        note = (f"Automatic region: readings {first + 1} to {last + 1} of {n}; left out "
                + "; ".join(reasons) + f" (chance below {OUTLIER_PROBABILITY:.1%}).")
    else:
        note = f"Automatic region: all {n} readings; no end reading lies off the line."
    return first, last, note


@dataclass(frozen=True)
class LabTest:
    """One constant-pressure lab test (all SI).

    Attributes
    ----------
    pressure : float
        Pressure drop [Pa], > 0.
    area : float
        Filter area of the test cell [m^2], > 0.
    viscosity : float
        Filtrate viscosity [Pa*s], > 0.
    solids_per_filtrate : float
        c [kg/m^3], > 0.
    time, volume : sequence of float
        Readings [s], [m^3], both increasing.
    start_time, start_volume : float
        Start of constant pressure (t0 [s], V0 [m^3]); readings at or before it are not used.
    use : (int, int) or None
        Readings to fit, 0-based first and last (inclusive); None: choose automatically.
    """

    pressure: float
    area: float
    viscosity: float
    solids_per_filtrate: float
    time: tuple
    volume: tuple
    start_time: float = 0.0
    start_volume: float = 0.0
    use: tuple | None = None


@dataclass(frozen=True)
class TestFit:
    slope: float  # s/m^6, K_p/2
    intercept: float  # s/m^3, B
    slope_stderr: float | None
    intercept_stderr: float | None
    r_squared: float
    resistance: float  # alpha, m/kg
    resistance_stderr: float | None
    medium_resistance: float  # R_m, 1/m
    medium_resistance_stderr: float | None
    points_used: list[int]
    region: str
    x: np.ndarray  # V + V0 for every reading after the start [m^3]
    y: np.ndarray  # (t - t0)/(V - V0) [s/m^3]
    indices: list[int]  # reading index of each x, y
    residuals: np.ndarray  # of the used points [s/m^3]
    warnings: list[str] = field(default_factory=list)


def evaluate_test(test: LabTest) -> TestFit:
    """Fit one test: the t/V line, alpha and R_m with standard errors, and the region used."""
    t = np.asarray(test.time, dtype=float)
    V = np.asarray(test.volume, dtype=float)
    if t.size != V.size:
        raise SolverInputError("points", "each reading needs a time and a volume")
    for name, value in (("pressure", test.pressure), ("area", test.area), ("viscosity", test.viscosity),
                        ("c", test.solids_per_filtrate)):
        if not value > 0.0:
            raise SolverInputError(name, f"must be > 0; got {value:.6g}")
    if np.any(np.diff(t) <= 0):
        k = int(np.nonzero(np.diff(t) <= 0)[0][0])
        raise SolverInputError("points", f"times must increase: reading {k + 2} is not later than reading {k + 1}")
    if np.any(np.diff(V) <= 0):
        k = int(np.nonzero(np.diff(V) <= 0)[0][0])
        raise SolverInputError("points", f"volumes must increase: reading {k + 2} is not more than reading {k + 1}")

    after = np.nonzero((t > test.start_time) & (V > test.start_volume))[0]
    warnings = []
    if after.size < t.size:
        warnings.append(
            f"{t.size - after.size} reading(s) at or before the start of constant pressure "
            f"(t = {test.start_time:.6g} s, V = {test.start_volume:.6g} m³) are not used."
        )
    if after.size < MIN_POINTS:
        raise SolverInputError("points", f"need at least {MIN_POINTS} readings after the start; got {after.size}")
    x = V[after] + test.start_volume
    with np.errstate(over="ignore", divide="ignore"):
        y = (t[after] - test.start_time) / (V[after] - test.start_volume)
    if not np.all(np.isfinite(y)):
        k = int(after[np.nonzero(~np.isfinite(y))[0][0]])
        raise SolverInputError(
            "points", f"reading {k + 1} has too little filtrate after the start for t/V to be computed"
        )

    if test.use is None:
        first, last, region = choose_region(x, y)
    else:
        lo, hi = test.use
        if not (0 <= lo < hi < t.size):
            raise SolverInputError(
                "use", f"must be [first, last] with 0 <= first < last <= {t.size - 1}; got [{lo}, {hi}]"
            )
        chosen = np.nonzero((after >= lo) & (after <= hi))[0]
        if chosen.size < MIN_POINTS:
            raise SolverInputError("use", f"the chosen readings hold {chosen.size} usable points; need {MIN_POINTS}")
        first, last = int(chosen[0]), int(chosen[-1])
        region = f"Region chosen by the user: readings {lo + 1} to {hi + 1}."

    fit = fit_line(x[first:last + 1], y[first:last + 1])
    A, dP, mu, c = test.area, test.pressure, test.viscosity, test.solids_per_filtrate
    to_alpha = 2.0 * A * A * dP / (mu * c)
    to_Rm = A * dP / mu
    if fit.intercept < 0:
        warnings.append(
            "The line's intercept is negative, so the cloth resistance comes out negative: usually "
            "early readings taken before constant pressure was reached or before the cake formed evenly. "
            "Leave out early readings or give the start of constant pressure (start time and volume)."
        )
    if fit.slope <= 0:
        warnings.append(
            "The line does not rise: t/V should grow with V as the cake builds up. Check the readings "
            "(cumulative time and filtrate volume) and the region."
        )
    if fit.r_squared < 0.98:
        warnings.append(f"The readings lie poorly on a line (R² = {fit.r_squared:.3f}): check the region.")
    return TestFit(
        slope=fit.slope, intercept=fit.intercept, slope_stderr=fit.slope_stderr,
        intercept_stderr=fit.intercept_stderr, r_squared=fit.r_squared,
        resistance=fit.slope * to_alpha,
        resistance_stderr=None if fit.slope_stderr is None else fit.slope_stderr * to_alpha,
        medium_resistance=fit.intercept * to_Rm,
        medium_resistance_stderr=None if fit.intercept_stderr is None else fit.intercept_stderr * to_Rm,
        points_used=[int(i) for i in after[first:last + 1]], region=region, x=x, y=y,
        indices=[int(i) for i in after], residuals=fit.residuals, warnings=warnings,
    )


@dataclass(frozen=True)
class CompressibilityFit:
    compressibility: float | None
    compressibility_stderr: float | None
    resistance_ref: float  # m/kg at reference_pressure
    resistance_ref_stderr: float | None
    reference_pressure: float  # Pa
    medium_resistance: float  # mean of the tests [1/m]
    medium_resistance_spread: float | None  # sample standard deviation [1/m]
    warnings: list[str] = field(default_factory=list)


def combine_tests(pressures, resistances, medium_resistances, reference_pressure: float) -> CompressibilityFit:
    r"""alpha_ref and s from tests at several pressures, ln alpha = ln alpha_ref + s ln(dP/p_ref).

    Parameters
    ----------
    pressures, resistances, medium_resistances : sequence of float
        Per test: dP [Pa], alpha [m/kg], R_m [1/m].
    reference_pressure : float
        p_ref [Pa] at which alpha_ref is reported.

    Standard errors of s and alpha_ref (delta method on ln alpha_ref) need three or more
    pressures; with two they are None. The medium resistance is the tests' mean, with
    their sample standard deviation as the spread.
    """
    P = np.asarray(pressures, dtype=float)
    alpha = np.asarray(resistances, dtype=float)
    Rm = np.asarray(medium_resistances, dtype=float)
    warnings = []
    spread = float(np.std(Rm, ddof=1)) if Rm.size > 1 else None
    if P.size == 1:
        warnings.append(
            "One pressure only: the compressibility is unknown (test at two or more pressures); "
            "the resistance is given at the test pressure."
        )
        return CompressibilityFit(None, None, float(alpha[0]), None, float(P[0]), float(Rm[0]), None, warnings)
    if np.unique(P).size < 2:
        raise SolverInputError("pressure", "the compressibility needs tests at two or more different pressures")
    if np.any(alpha <= 0):
        raise SolverInputError(
            "resistance", "every test must give a positive cake resistance to fit the compressibility"
        )
    fit = fit_line(np.log(P / reference_pressure), np.log(alpha))
    s = fit.slope
    with np.errstate(over="ignore"):
        alpha_ref = float(np.exp(fit.intercept))  # inf is caught by the edge's finite check
    if s < 0:
        warnings.append(
            f"The compressibility comes out negative (s = {s:.3f}): resistance should not fall as pressure "
            "rises. Likely the tests differ in slurry batch, temperature or region chosen; check them."
        )
    elif s >= 1:
        warnings.append(
            f"The compressibility comes out at {s:.3f}, at or above 1: flow would fall as pressure rises. "
            "Check the pressures are the drop across cake and cloth, and the tests are comparable."
        )
    if not (P.min() <= reference_pressure <= P.max()):
        warnings.append(
            f"The reference pressure {reference_pressure:.6g} Pa lies outside the tested range "
            f"({P.min():.6g} to {P.max():.6g} Pa): alpha_ref is extrapolated."
        )
    return CompressibilityFit(
        compressibility=s, compressibility_stderr=fit.slope_stderr, resistance_ref=alpha_ref,
        resistance_ref_stderr=None if fit.intercept_stderr is None else alpha_ref * fit.intercept_stderr,
        reference_pressure=reference_pressure, medium_resistance=float(Rm.mean()),
        medium_resistance_spread=spread, warnings=warnings,
    )
