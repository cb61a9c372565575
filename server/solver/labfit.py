"""Evaluation of constant-pressure lab filtration tests: from (t, V) readings to alpha and R_m.

Two models of one test at constant dP (K_p = mu alpha c/(A^2 dP), B = mu R_m/(A dP)):

* classic, the t/V line (with a start offset (t0, V0) for tests where constant pressure
  starts after a filling period)::

      (t - t0)/(V - V0) = (K_p/2)(V + V0) + B

  a straight line through (V + V0, (t - t0)/(V - V0)) with slope K_p/2 and intercept B;
* three-parameter, exact after a constant-rate filling period of any length and after any
  start offset (t_d absorbs both)::

      t = t_d + B V + (K_p/2) V^2

  drawn as the same straight line through (V, (t - t_d)/V).

Then alpha = K_p A^2 dP/(mu c) and R_m = B A dP/mu. On the cake pressure basis (Tiller) the
cake sees dp_c = dP - mu R_m q/A, not dP: with alpha = alpha(dP) (dp_c/dP)^s the V^2 above
becomes 2 int_0^V v phi(v)^s dv, phi = dp_c/dP the cake's share at v, and alpha is the value
at dp_c = dP (the whole pressure on the cake); the split is iterated with the fit.

Tests at several pressures give the compressibility s as the slope of ln alpha against
ln dP. References: Geankoplis, Transport Processes and Separation Process Principles
(3rd ed.), section 14.2 and Example 14.2-1; McCabe, Smith & Harriott, Unit Operations of
Chemical Engineering, chapter "Filtration"; VDI 2762 Part 2 (the lab test and its
evaluation); Tiller & Leu (1980) for the cake pressure basis.
"""

from dataclasses import dataclass, field

import numpy as np
from scipy import stats
from scipy.integrate import cumulative_trapezoid

from .errors import SolverInputError

#: Chance that one whole automatic region search (every block at both ends) drops a reading
#: from clean data: each block's test runs at this share divided by the number of blocks
#: (Bonferroni), so the search as a whole, not each test, holds the rate.
SEARCH_FALSE_DROP = 0.002
#: Chance that ``auto`` calls a start offset significant in a test that has none.
OFFSET_FALSE_ALARM = 0.005
#: A reading is at the set pressure once its pressure is within this share of it.
PRESSURE_TOLERANCE = 0.02
MIN_POINTS = 3
MODELS = ("classic", "three_parameter", "auto")
PRESSURE_BASES = ("cake", "total")


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
    correlation: float | None = None  # of slope and intercept


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
    se_slope = se_int = corr = None
    if n > 2:
        s2 = sse / (n - 2)
        se_slope = float(np.sqrt(s2 / sxx))
        se_int = float(np.sqrt(s2 * (1.0 / n + xm * xm / sxx)))
        # cov(slope, intercept) = -xm s2/sxx
        corr = float(-xm / np.sqrt(xm * xm + sxx / n)) if s2 > 0 else None
    return LineFit(slope, intercept, se_slope, se_int, r2, residuals, n, corr)


@dataclass(frozen=True)
class LinearFit:
    """Weighted least squares y = X coef, with the covariance of coef (None without a
    degree of freedom)."""

    coef: np.ndarray
    cov: np.ndarray | None
    residuals: np.ndarray  # y - X coef (unweighted)


def fit_linear(X, y, weights) -> LinearFit:
    """Weighted least squares by QR on scaled columns; the covariance is s^2 (X'WX)^-1 with
    s^2 the weighted residual variance."""
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float)
    n, p = X.shape
    sw = np.sqrt(weights)
    Xw = X * sw[:, None]
    scale = np.abs(Xw).max(axis=0)
    scale[scale == 0.0] = 1.0
    Q, R = np.linalg.qr(Xw / scale)
    d = np.abs(np.diag(R))
    if n < p or d.min() <= 1e-12 * d.max():
        raise SolverInputError("points", "the readings cannot fix the model: give readings at more different volumes")
    coef = np.linalg.solve(R, Q.T @ (y * sw)) / scale
    residuals = y - X @ coef
    cov = None
    if n > p:
        rw = residuals * sw
        s2 = float(rw @ rw) / (n - p)
        Rinv = np.linalg.inv(R)
        cov = s2 * (Rinv @ Rinv.T) / np.outer(scale, scale)
    return LinearFit(coef, cov, residuals)


def _end_block_search(X, y, weights, budget_first: int, budget_last: int, keep_min: int):
    """Find end blocks of readings that lie off the model fitted to the others.

    At each end, blocks of 1, 2, ... end readings are tried: a block is left out when its
    innermost reading lies off the (weighted) fit through the remaining readings by more
    than chance allows (prediction-interval test, Student t). Testing the innermost reading
    keeps several bad readings from hiding each other. Each test runs at SEARCH_FALSE_DROP
    divided by the number of blocks tried (Bonferroni), so the search as a whole drops a
    reading from clean data at most that often. Prefix sums make every block's fit O(1).

    Returns first, last (inclusive, 0-based) and the drops as (end, first index, last index, z).
    """
    n, p = X.shape
    sw = np.sqrt(weights)
    R = X * sw[:, None]
    scale = np.abs(R).max(axis=0)
    scale[scale == 0.0] = 1.0
    R = R / scale
    z = y * sw
    z_scale = float(np.abs(z).max())
    # the test is scale-free; the 1e-12 below is then relative
    z = z / (z_scale if z_scale > 0.0 and np.isfinite(z_scale) else 1.0)
    zero = np.zeros((1,))
    Sxx = np.concatenate((np.zeros((1, p, p)), np.cumsum(R[:, :, None] * R[:, None, :], axis=0)))
    Sxy = np.concatenate((np.zeros((1, p)), np.cumsum(R * z[:, None], axis=0)))
    Syy = np.concatenate((zero, np.cumsum(z * z)))
    first, last = 0, n - 1
    budget = {"first": max(0, min(budget_first, n - keep_min)), "last": max(0, min(budget_last, n - keep_min))}
    level = SEARCH_FALSE_DROP / max(1, budget["first"] + budget["last"])
    drops = []
    while True:
        candidates = []
        for end in ("first", "last"):
            k_max = min(budget[end], last - first + 1 - keep_min)
            if k_max < 1:
                continue
            k = np.arange(1, k_max + 1)
            if end == "first":
                inner, lo, hi = first + k - 1, first + k, np.full(k.size, last)
            else:
                inner, lo, hi = last - k + 1, np.full(k.size, first), last - k
            M = Sxx[hi + 1] - Sxx[lo]
            b = Sxy[hi + 1] - Sxy[lo]
            yy = Syy[hi + 1] - Syy[lo]
            dof = (hi - lo + 1) - p
            try:
                Minv = np.linalg.inv(M)
            except np.linalg.LinAlgError:
                continue
            beta = np.einsum("kij,kj->ki", Minv, b)
            sse = np.maximum(yy - np.einsum("ki,ki->k", beta, b), 0.0)
            xk = R[inner]
            lev = np.einsum("ki,kij,kj->k", xk, Minv, xk)
            with np.errstate(divide="ignore", invalid="ignore"):
                se = np.sqrt(sse / dof * (1.0 + lev))
                off = np.abs(z[inner] - np.einsum("ki,ki->k", xk, beta))
                zs = np.where(se > 0.0, off / se, np.where(off > 1e-12, np.inf, 0.0))
            pv = 2.0 * stats.t.sf(zs, dof)
            significant = np.nonzero(pv < level)[0]
            if significant.size:
                i = int(significant[-1])
                candidates.append((float(pv[i]), end, i + 1, float(zs[i])))
        if not candidates:
            break
        _, end, k, zk = min(candidates)
        if end == "first":
            drops.append(("first", first, first + k - 1, zk))
            first += k
        else:
            drops.append(("last", last - k + 1, last, zk))
            last -= k
        budget[end] -= k
    return first, last, drops


def _region_note(first: int, last: int, n: int, drops, offset: int = 0) -> str:
    if not drops:
        return f"Automatic region: all {n} readings; no end reading lies off the fit."
    reasons = []
    for end, a, b, zk in drops:
        which = f"reading {a + 1 + offset}" if a == b else f"readings {a + 1 + offset} to {b + 1 + offset}"
        why = ("before the test settled (filling, cloth wetting)" if end == "first"
               else "after the cell filled or the slurry ran out")
        zt = "far" if not np.isfinite(zk) else f"{zk:.1f} standard errors"
        reasons.append(f"{which}, {zt} off the fit through the others, {why}")
    return (f"Automatic region: readings {first + 1 + offset} to {last + 1 + offset} of {n + offset}; left out "
            + "; ".join(reasons) + f" (the search over all end blocks drops a reading from clean data less than "
            f"{100 * SEARCH_FALSE_DROP:.1f} % of the time).")


def _positive_weights(y) -> np.ndarray:
    """1/y^2: readings with a relative scatter (a clock and a cylinder read to a share of the
    reading); plain weights when some y are not positive."""
    y = np.asarray(y, dtype=float)
    if np.all(y > 0.0):
        r = y / y.max()  # only the weights' ratios matter
        return 1.0 / np.maximum(r * r, 1e-300)
    return np.full(y.size, 1.0)


def choose_region(x, y) -> tuple[int, int, str]:
    """Propose the linear region of t/V against V: indices [first, last] and how it chose.

    Early readings before the line settles (filling, cloth wetting) and late readings where
    the cell is full or the slurry ran out lie off the line; see :func:`_end_block_search`.
    At least half the readings and at least four are kept, at most a third left out at
    either end.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    X = np.column_stack((np.ones(n), x))
    first, last, drops = _end_block_search(X, y, _positive_weights(y), n // 3, n // 3, max(4, (n + 1) // 2))
    return first, last, _region_note(first, last, n, drops)


def cake_share(cloth_ratio, compressibility: float, steps: int = 52):
    r"""The cake's share phi = dp_c/dP of the pressure at constant dP, power-law cake.

    Solves :math:`\phi + r \phi^{1-s} = 1` with r = B/(K_p V) = R_m A/(alpha(dP) c V) the
    cloth's resistance over the cake's at the full pressure (bisection, vectorised).
    r = inf (no cake yet) gives 0; r = 0 (no cloth) gives 1.
    """
    r = np.asarray(cloth_ratio, dtype=float)
    lo, hi = np.zeros_like(r), np.ones_like(r)
    e = 1.0 - compressibility
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        with np.errstate(invalid="ignore", over="ignore"):
            over = mid + r * mid**e >= 1.0
        hi = np.where(over, mid, hi)
        lo = np.where(over, lo, mid)
    return 0.5 * (lo + hi)


def cake_basis_square(V, K_p: float, B: float, compressibility: float, grid_points: int = 1600):
    r"""The V^2 of Ruth's equation on the cake pressure basis: :math:`2\int_0^V v\,\phi(v)^s dv`.

    Equal to V^2 when s = 0 or there is no cloth resistance (B <= 0). Trapezoid rule on a grid
    dense near the start.
    """
    V = np.asarray(V, dtype=float)
    if compressibility == 0.0 or B <= 0.0 or K_p <= 0.0 or V.size == 0:
        return V * V
    V_max = float(V.max())
    half = grid_points // 2
    grid = np.unique(np.concatenate(([0.0], np.geomspace(V_max * 1e-7, V_max, half), np.linspace(0.0, V_max, half))))
    with np.errstate(divide="ignore"):
        phi = cake_share(B / (K_p * grid), compressibility)
    J = cumulative_trapezoid(grid * phi**compressibility, grid, initial=0.0)
    return 2.0 * np.interp(V, grid, J)


@dataclass(frozen=True)
class LabTest:
    """One constant-pressure lab test (all SI).

    Attributes
    ----------
    pressure : float
        Pressure drop [Pa], > 0 (the set pressure when ``pressures`` are given).
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
    pressures : sequence of float or None
        Pressure at each reading [Pa]; readings before the set pressure is reached are the
        filling period.
    model : str
        "classic", "three_parameter" or "auto".
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
    pressures: tuple | None = None
    model: str = "auto"


@dataclass(frozen=True)
class TestFit:
    slope: float  # s/m^6, K_p/2
    intercept: float  # s/m^3, B
    slope_stderr: float | None
    intercept_stderr: float | None
    r_squared: float
    resistance: float  # alpha, m/kg (at a cake pressure equal to the test pressure)
    resistance_stderr: float | None
    medium_resistance: float  # R_m, 1/m
    medium_resistance_stderr: float | None
    points_used: list[int]
    region: str
    x: np.ndarray  # picture's abscissa for every reading after the start [m^3]
    y: np.ndarray  # picture's ordinate [s/m^3]
    indices: list[int]  # reading index of each x, y
    residuals: np.ndarray  # of the used points, in the picture [s/m^3]
    warnings: list[str] = field(default_factory=list)
    model: str = "classic"
    resistance_medium_correlation: float | None = None
    time_offset: float | None = None  # t_d [s] (three-parameter)
    time_offset_stderr: float | None = None
    filling: dict | None = None  # readings, volume [m^3], time [s], how
    fitted: np.ndarray | None = None  # fitted picture ordinate at each x
    model_note: str = ""
    compressibility: float = 0.0  # s used for the cake pressure basis (0: total basis)


def _check_readings(test: LabTest):
    t = np.asarray(test.time, dtype=float)
    V = np.asarray(test.volume, dtype=float)
    if t.size != V.size:
        raise SolverInputError("points", "each reading needs a time and a volume")
    for name, value in (("pressure", test.pressure), ("area", test.area), ("viscosity", test.viscosity),
                        ("c", test.solids_per_filtrate)):
        if not value > 0.0:
            raise SolverInputError(name, f"must be > 0; got {value:.6g}")
    if test.model not in MODELS:
        raise SolverInputError("model", f"must be one of {', '.join(MODELS)}; got {test.model!r}")
    if np.any(np.diff(t) <= 0):
        k = int(np.nonzero(np.diff(t) <= 0)[0][0])
        raise SolverInputError("points", f"times must increase: reading {k + 2} is not later than reading {k + 1}")
    if np.any(np.diff(V) <= 0):
        k = int(np.nonzero(np.diff(V) <= 0)[0][0])
        raise SolverInputError("points", f"volumes must increase: reading {k + 2} is not more than reading {k + 1}")
    return t, V


def _user_region(test: LabTest, after: np.ndarray, n_all: int) -> tuple[int, int, str]:
    lo, hi = test.use
    if not (0 <= lo < hi < n_all):
        raise SolverInputError("use", f"must be [first, last] with 0 <= first < last <= {n_all - 1}; got [{lo}, {hi}]")
    chosen = np.nonzero((after >= lo) & (after <= hi))[0]
    if chosen.size < MIN_POINTS:
        raise SolverInputError("use", f"the chosen readings hold {chosen.size} usable points; need {MIN_POINTS}")
    return int(chosen[0]), int(chosen[-1]), f"Region chosen by the user: readings {lo + 1} to {hi + 1}."


def _three_parameter(t, V, square, first: int, last: int):
    """t = t_d + B V + (K_p/2) square on readings first..last, weighted for a relative scatter
    (weights from a first unweighted fit's values: no bias from the noise itself)."""
    X = np.column_stack((np.ones(V.size), V, square))[first:last + 1]
    y = t[first:last + 1]
    fit = fit_linear(X, y, np.full(y.size, 1.0 / max(float(np.mean(y * y)), 1e-300)))
    fitted = X @ fit.coef
    if np.all(fitted > 0.0):
        fit = fit_linear(X, y, 1.0 / (fitted * fitted))
    return fit


def evaluate_test(test: LabTest, compressibility: float = 0.0) -> TestFit:
    """Fit one test: alpha and R_m with standard errors and correlation, the region and model.

    ``compressibility`` > 0 evaluates the test on the cake pressure basis with that s
    (alpha then belongs to a cake pressure equal to the test pressure); 0: total basis.
    The region and the model are chosen on the total basis, then kept.
    """
    t, V = _check_readings(test)
    n_all = t.size
    warnings = []
    start_t, start_V = test.start_time, test.start_volume
    fill_end = None  # index of the first reading at the set pressure
    if test.pressures is not None:
        p = np.asarray(test.pressures, dtype=float)
        if p.size != t.size:
            raise SolverInputError("points", "give a pressure with every reading, or with none")
        at = np.nonzero(p >= (1.0 - PRESSURE_TOLERANCE) * test.pressure)[0]
        if at.size == 0:
            raise SolverInputError(
                "points", f"no reading reaches the set pressure ({test.pressure:.6g} Pa, within "
                f"{100 * PRESSURE_TOLERANCE:.0f} %): give the set pressure the test held")
        fill_end = int(at[0])
        if test.model == "classic" and fill_end > 0 and start_t == 0.0 and start_V == 0.0:
            start_t, start_V = float(t[fill_end]), float(V[fill_end])
    after = np.nonzero((t > start_t) & (V > start_V))[0]
    if fill_end is not None and test.model != "classic":
        after = after[after >= fill_end]
    if after.size < n_all and fill_end is None:
        warnings.append(
            f"{n_all - after.size} reading(s) at or before the start of constant pressure "
            f"(t = {start_t:.6g} s, V = {start_V:.6g} m³) are not used."
        )
    if after.size < MIN_POINTS:
        raise SolverInputError("points", f"need at least {MIN_POINTS} readings after the start; got {after.size}")
    ta, Va = t[after], V[after]

    model, model_note, region_three = _choose_model(test, ta, Va, after, n_all, fill_end)
    if model == "three_parameter":
        return _finish_three(test, t, V, after, region_three, compressibility, warnings, model_note, fill_end)
    return _finish_classic(test, t, V, after, start_t, start_V, compressibility, warnings, model_note)


def _choose_model(test: LabTest, ta, Va, after, n_all, fill_end):
    """The model to use, a sentence saying why, and the three-parameter region (first, last,
    note, drops) when that model was searched."""
    if test.model == "classic":
        return "classic", "Model: the classic t/V line (as asked).", None
    region = None
    if test.use is not None:
        first, last, note = _user_region(test, after, n_all)
        region = (first, last, note, [])
    else:
        n = ta.size
        keep_min = max(5, (n + 1) // 2)
        X = np.column_stack((np.ones(n), Va, Va * Va))
        if n >= keep_min and n >= 4:
            first, last, drops = _end_block_search(X, ta, _positive_weights(ta), n // 2, n // 3, keep_min)
        else:
            first, last, drops = 0, n - 1, []
        region = (first, last, _region_note(first, last, n, drops, int(after[0])), drops)
    if test.model == "three_parameter":
        return "three_parameter", "Model: three parameters, t = t_d + B V + (K_p/2) V² (as asked).", region
    if fill_end is not None and fill_end > 0:
        return "three_parameter", ("Model: three parameters, t = t_d + B V + (K_p/2) V², because the pressure "
                                   f"readings show a filling period (readings 1 to {fill_end})."), region
    first, last = region[0], region[1]
    if any(d[0] == "first" for d in region[3]):
        return "three_parameter", ("Model: three parameters, t = t_d + B V + (K_p/2) V², because the first "
                                   "readings lie off the constant-pressure curve (a filling period)."), region
    if last - first + 1 >= 4:
        fit = _three_parameter(ta, Va, Va * Va, first, last)
        if fit.cov is not None and fit.cov[0, 0] > 0:
            z = abs(fit.coef[0]) / np.sqrt(fit.cov[0, 0])
            dof = last - first + 1 - 3
            if 2.0 * stats.t.sf(z, dof) < OFFSET_FALSE_ALARM:
                return "three_parameter", (
                    f"Model: three parameters, t = t_d + B V + (K_p/2) V², because the start offset "
                    f"t_d = {fit.coef[0]:.4g} s is {z:.1f} standard errors from zero."), region
    return "classic", ("Model: the classic t/V line; no filling period or start offset stands out "
                       "(the three-parameter fit's t_d is within chance of zero)."), None


def _to_alpha_rm(test: LabTest):
    A, dP, mu, c = test.area, test.pressure, test.viscosity, test.solids_per_filtrate
    return 2.0 * A * A * dP / (mu * c), A * dP / mu


def _common_warnings(slope: float, intercept: float, r2: float, warnings: list):
    if intercept < 0:
        warnings.append(
            "The line's intercept is negative, so the cloth resistance comes out negative: usually "
            "early readings taken before constant pressure was reached or before the cake formed evenly. "
            "Leave out early readings or give the start of constant pressure (start time and volume)."
        )
    if slope <= 0:
        warnings.append(
            "The line does not rise: t/V should grow with V as the cake builds up. Check the readings "
            "(cumulative time and filtrate volume) and the region."
        )
    if r2 < 0.98:
        warnings.append(f"The readings lie poorly on a line (R² = {r2:.3f}): check the region.")


def _relative_scatter_cov(J, fitted, residuals):
    """Covariance of least-squares coefficients (ordinary, unweighted) when each reading scatters
    in proportion to its value (a share of the reading, as a clock and a cylinder are read):
    the sandwich (J'J)^-1 J' diag(sigma^2 yhat^2) J (J'J)^-1, sigma^2 from the relative
    residuals. None without a degree of freedom or with a fitted value <= 0."""
    n, p = J.shape
    if n <= p or np.any(fitted <= 0.0):
        return None
    sigma2 = float(((residuals / fitted) ** 2).sum()) / (n - p)
    bread = np.linalg.pinv(J.T @ J)
    meat = J.T @ (J * (sigma2 * fitted**2)[:, None])
    return bread @ meat @ bread


def _cake_basis_refit(residuals, start: np.ndarray, n_used: int):
    """Least squares of a model whose V^2 term is on the cake pressure basis (it depends on the
    fitted K_p and B themselves), from the total-basis values ``start``. Returns the parameters
    and the Jacobian of the residuals at the optimum (for the covariance)."""
    from scipy.optimize import least_squares

    scale = np.where(np.abs(start) > 0.0, np.abs(start), 1.0)
    sol = least_squares(lambda z: residuals(z * scale), np.sign(start) + (start == 0.0), method="lm",
                        xtol=1e-12, ftol=1e-12, diff_step=1e-7)
    if not (sol.success and np.all(np.isfinite(sol.x)) and np.all(np.isfinite(sol.jac))):
        raise SolverInputError("points", "the fit on the cake pressure basis does not settle for these readings")
    theta = sol.x * scale
    return theta, sol.jac / scale[None, :]


def _finish_classic(test, t, V, after, t0, V0, s, warnings, model_note) -> TestFit:
    x = V[after] + V0
    with np.errstate(over="ignore", divide="ignore"):
        y = (t[after] - t0) / (V[after] - V0)
    if not np.all(np.isfinite(y) & (np.abs(y) < 1e100)):
        k = int(after[np.nonzero(~(np.isfinite(y) & (np.abs(y) < 1e100)))[0][0]])
        raise SolverInputError(
            "points", f"reading {k + 1} has too little filtrate after the start for t/V to be computed")
    if test.use is None:
        first, last, region = choose_region(x, y)
    else:
        first, last, region = _user_region(test, after, t.size)
    Va = V[after]
    used = slice(first, last + 1)
    fit = fit_line(x[used], y[used])
    slope, intercept, se_slope, se_int, corr, r2 = (fit.slope, fit.intercept, fit.slope_stderr,
                                                     fit.intercept_stderr, fit.correlation, fit.r_squared)
    xe = x
    J = -np.column_stack((x[used], np.ones(last - first + 1)))  # d residual / d (slope, intercept)
    if s > 0.0 and slope > 0.0 and intercept > 0.0:
        def abscissa(theta):
            sq = cake_basis_square(np.append(Va, V0), 2.0 * theta[0], theta[1], s)
            return (sq[:-1] - sq[-1]) / (Va - V0)

        theta, J = _cake_basis_refit(lambda th: (y - th[1] - th[0] * abscissa(th))[used],
                                     np.array([slope, intercept]), last - first + 1)
        slope, intercept = float(theta[0]), float(theta[1])
        xe = abscissa(theta)
    fitted = intercept + slope * xe
    residuals = y[used] - fitted[used]
    # standard errors for a scatter in proportion to the reading (the line itself stays the
    # ordinary least-squares line of the textbooks)
    cov = _relative_scatter_cov(J, fitted[used], residuals)
    if cov is not None:
        se_slope, se_int = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
        corr = float(cov[0, 1] / (se_slope * se_int)) if se_slope > 0 and se_int > 0 else None
    elif s > 0.0:
        se_slope = se_int = corr = None
    dev = y[used] - y[used].mean()
    if s > 0.0:
        r2 = 1.0 - float(residuals @ residuals) / float(dev @ dev) if float(dev @ dev) > 0 else 1.0
    to_alpha, to_Rm = _to_alpha_rm(test)
    _common_warnings(slope, intercept, r2, warnings)
    return TestFit(
        slope=slope, intercept=intercept, slope_stderr=se_slope, intercept_stderr=se_int, r_squared=r2,
        resistance=slope * to_alpha, resistance_stderr=None if se_slope is None else se_slope * to_alpha,
        medium_resistance=intercept * to_Rm, medium_resistance_stderr=None if se_int is None else se_int * to_Rm,
        points_used=[int(i) for i in after[used]], region=region, x=x, y=y,
        indices=[int(i) for i in after], residuals=residuals, warnings=warnings, model="classic",
        resistance_medium_correlation=corr, fitted=fitted, model_note=model_note, compressibility=s,
    )


def _finish_three(test, t, V, after, region, s, warnings, model_note, fill_end) -> TestFit:
    first, last, note, drops = region
    ta, Va = t[after], V[after]
    if last - first + 1 < 4:
        raise SolverInputError("points", "the three-parameter model needs at least 4 readings in the region")
    used = slice(first, last + 1)
    fit = _three_parameter(ta, Va, Va * Va, first, last)
    coef, cov = np.asarray(fit.coef, dtype=float), fit.cov
    sq = Va * Va
    if s > 0.0 and coef[1] > 0.0 and coef[2] > 0.0:
        weight = 1.0 / np.maximum(np.abs(ta[used]), 1e-300)  # the relative scatter of the total-basis fit

        def square(theta):
            return cake_basis_square(Va, 2.0 * theta[2], theta[1], s)

        coef, J = _cake_basis_refit(lambda th: ((ta - th[0] - th[1] * Va - th[2] * square(th))[used]) * weight,
                                    coef, last - first + 1)
        sq = square(coef)
        r = ((ta - coef[0] - coef[1] * Va - coef[2] * sq)[used]) * weight
        dof = last - first + 1 - 3
        cov = float(r @ r) / dof * np.linalg.pinv(J.T @ J) if dof > 0 else None
    t_d, B, half_K = (float(c) for c in coef)
    se = None if cov is None else np.sqrt(np.maximum(np.diag(cov), 0.0))
    to_alpha, to_Rm = _to_alpha_rm(test)
    # the picture: (t - t_d)/V against V is the straight line B + (K_p/2) V (total basis)
    y = (ta - t_d) / Va
    fitted = B + half_K * sq / Va
    res = y[used] - fitted[used]
    dev = y[used] - y[used].mean()
    r2 = 1.0 - float(res @ res) / float(dev @ dev) if float(dev @ dev) > 0 else 1.0
    corr = None
    if se is not None and se[1] > 0 and se[2] > 0:
        corr = float(cov[1, 2] / (se[1] * se[2]))
    filling = _filling(t, V, after, first, drops, fill_end, t_d, B, half_K, se)
    _common_warnings(half_K, B, r2, warnings)
    return TestFit(
        slope=half_K, intercept=B, slope_stderr=None if se is None else float(se[2]),
        intercept_stderr=None if se is None else float(se[1]), r_squared=r2,
        resistance=half_K * to_alpha, resistance_stderr=None if se is None else float(se[2]) * to_alpha,
        medium_resistance=B * to_Rm, medium_resistance_stderr=None if se is None else float(se[1]) * to_Rm,
        points_used=[int(i) for i in after[used]], region=note, x=Va, y=y, indices=[int(i) for i in after],
        residuals=res, warnings=warnings, model="three_parameter", resistance_medium_correlation=corr,
        time_offset=t_d, time_offset_stderr=None if se is None else float(se[0]), filling=filling,
        fitted=fitted, model_note=model_note, compressibility=s,
    )


def _filling(t, V, after, first, drops, fill_end, t_d, B, half_K, se) -> dict | None:
    """The filling period: from pressure readings, from readings left out at the start, or
    (a constant-rate fill from t = 0) from a positive start offset: t_d = (K_p/2) V_1^2."""
    K_p = 2.0 * half_K
    if fill_end is not None and fill_end > 0:
        return {"readings": fill_end, "volume": float(V[fill_end]), "time": float(t[fill_end]),
                "how": f"pressure readings: the set pressure is reached by reading {fill_end + 1}"}
    start_drops = [d for d in drops if d[0] == "first"]
    if start_drops and K_p > 0:
        k = int(after[first])  # readings before this are the filling period
        tf, Vf = t[:k], V[:k]
        inv_q = float(tf @ Vf) / float(Vf @ Vf)  # constant rate from the start: t = V/Q_0
        V1 = (inv_q - B) / K_p  # where the constant-pressure curve slows to Q_0
        V1 = float(np.clip(V1, V[k - 1], V[k]))
        return {"readings": k, "volume": V1, "time": float(t_d + B * V1 + half_K * V1 * V1),
                "how": ("reading 1 lies" if k == 1 else f"readings 1 to {k} lie") + " off the constant-pressure curve"}
    if se is not None and t_d > 0 and K_p > 0 and t_d > 2.0 * se[0]:
        V1 = float(np.sqrt(t_d / half_K))
        return {"readings": 0, "volume": V1, "time": float(V1 * (K_p * V1 + B)),
                "how": "the start offset t_d, read as a constant-rate fill from the start"}
    return None


@dataclass(frozen=True)
class CompressibilityFit:
    compressibility: float | None
    compressibility_stderr: float | None
    resistance_ref: float  # m/kg at reference_pressure
    resistance_ref_stderr: float | None
    reference_pressure: float  # Pa
    medium_resistance: float  # pooled over the tests, or its trend's value at reference_pressure [1/m]
    medium_resistance_spread: float | None  # sample standard deviation [1/m]
    warnings: list[str] = field(default_factory=list)
    medium_resistance_stderr: float | None = None
    resistance_compressibility_correlation: float | None = None
    resistance_medium_correlation: float | None = None
    medium_resistance_trend: dict | None = None
    tested_pressures: tuple = ()


def _weighted_line(x, y, var):
    """Straight line with known variances: (coef, cov, chi2, intercept weights)."""
    X = np.column_stack((np.ones(x.size), x))
    W = 1.0 / var
    M = X.T @ (X * W[:, None])
    Minv = np.linalg.inv(M)
    coef = Minv @ (X.T @ (W * y))
    r = y - X @ coef
    return coef, Minv, float((r * r * W).sum()), (Minv @ (X * W[:, None]).T)[0]


def combine_tests(pressures, resistances, medium_resistances, reference_pressure: float | None = None,
                  resistance_stderrs=None, medium_resistance_stderrs=None, correlations=None) -> CompressibilityFit:
    r"""alpha_ref and s from tests at several pressures, ln alpha = ln alpha_ref + s ln(dP/p_ref).

    Parameters
    ----------
    pressures, resistances, medium_resistances : sequence of float
        Per test: dP [Pa], alpha [m/kg], R_m [1/m].
    reference_pressure : float or None
        p_ref [Pa] at which alpha_ref is reported; None: the geometric mean of the tested
        pressures (where alpha_ref and s are uncorrelated).
    resistance_stderrs, medium_resistance_stderrs, correlations : sequence or None
        Per test: standard errors of alpha and R_m [m/kg], [1/m] and their correlation.

    Standard errors of s and alpha_ref come from the scatter of ln alpha about the line, and
    never below what the tests' own standard errors give (the only source with two pressures).
    R_m is pooled (inverse-variance mean, its error widened by the Birge ratio when the tests
    disagree), or, with three or more pressures and a significant trend against ln dP, given
    by that trend at p_ref.
    """
    P = np.asarray(pressures, dtype=float)
    alpha = np.asarray(resistances, dtype=float)
    Rm = np.asarray(medium_resistances, dtype=float)
    n = P.size
    se_a = _optional(resistance_stderrs, n)
    se_r = _optional(medium_resistance_stderrs, n)
    rho = _optional(correlations, n)
    warnings = []
    spread = float(np.std(Rm, ddof=1)) if n > 1 else None
    p_ref = float(np.exp(np.log(P).mean())) if reference_pressure is None else float(reference_pressure)
    tested = (float(P.min()), float(P.max()))
    if n == 1:
        warnings.append(
            "One pressure only: the compressibility is unknown (test at two or more pressures); "
            "the resistance is given at the test pressure."
        )
        return CompressibilityFit(
            None, None, float(alpha[0]), _at(se_a, 0), float(P[0]), float(Rm[0]), None, warnings,
            medium_resistance_stderr=_at(se_r, 0), resistance_medium_correlation=_at(rho, 0), tested_pressures=tested)
    if np.unique(P).size < 2:
        raise SolverInputError("pressure", "the compressibility needs tests at two or more different pressures")
    if np.any(alpha <= 0):
        raise SolverInputError(
            "resistance", "every test must give a positive cake resistance to fit the compressibility")
    x = np.log(P / p_ref)
    fit = fit_line(x, np.log(alpha))
    s = fit.slope
    with np.errstate(over="ignore"):
        alpha_ref = float(np.exp(fit.intercept))  # inf is caught by the edge's finite check
    X = np.column_stack((np.ones(n), x))
    XtX_inv = np.linalg.inv(X.T @ X)
    cov = None
    if fit.slope_stderr is not None:
        s2 = float(fit.residuals @ fit.residuals) / (n - 2)
        cov = s2 * XtX_inv
    if se_a is not None and np.all(se_a > 0):
        var_ln = (se_a / alpha) ** 2
        H = XtX_inv @ X.T  # OLS coefficients as weights of the ln alpha
        own = H @ np.diag(var_ln) @ H.T
        if cov is None:
            cov = own
        else:  # the larger variance of each, with the scatter's correlation
            sd_old = np.sqrt(np.diag(cov))
            sd = np.sqrt(np.maximum(np.diag(cov), np.diag(own)))
            with np.errstate(invalid="ignore", divide="ignore"):
                corr = np.where(np.outer(sd_old, sd_old) > 0, cov / np.outer(sd_old, sd_old), 0.0)
            np.fill_diagonal(corr, 1.0)
            cov = corr * np.outer(sd, sd)
    se_s = se_lnref = corr_as = None
    if cov is not None:
        se_lnref, se_s = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
        if se_lnref > 0 and se_s > 0:
            corr_as = float(cov[0, 1] / (se_lnref * se_s))
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
    if not (P.min() <= p_ref <= P.max()):
        warnings.append(
            f"The reference pressure {p_ref / 1e5:.4g} bar lies outside the tested range "
            f"({P.min() / 1e5:.4g} to {P.max() / 1e5:.4g} bar): the resistance there is extrapolated."
        )
    Rm_value, Rm_se, weights_Rm, trend = _pool_medium(P, x, Rm, se_r, warnings)
    corr_ar = None
    if rho is not None and se_a is not None and se_r is not None and se_lnref and Rm_se:
        H0 = (XtX_inv @ X.T)[0]
        c = float((H0 * weights_Rm * rho * (se_a / alpha) * se_r).sum())
        corr_ar = float(np.clip(c / (se_lnref * Rm_se), -1.0, 1.0))
    return CompressibilityFit(
        compressibility=s, compressibility_stderr=se_s, resistance_ref=alpha_ref,
        resistance_ref_stderr=None if se_lnref is None else alpha_ref * se_lnref,
        reference_pressure=p_ref, medium_resistance=Rm_value, medium_resistance_spread=spread, warnings=warnings,
        medium_resistance_stderr=Rm_se, resistance_compressibility_correlation=corr_as,
        resistance_medium_correlation=corr_ar, medium_resistance_trend=trend, tested_pressures=tested,
    )


def _optional(values, n):
    if values is None:
        return None
    arr = np.array([np.nan if v is None else v for v in values], dtype=float)
    return None if arr.size != n or not np.all(np.isfinite(arr)) else arr


def _at(arr, i):
    return None if arr is None else float(arr[i])


def _pool_medium(P, x, Rm, se_r, warnings):
    """R_m over the tests: (value, standard error, weight of each test, trend or None)."""
    n = P.size
    if se_r is None or not np.all(se_r > 0):
        w = np.full(n, 1.0 / n)
        se = float(np.std(Rm, ddof=1) / np.sqrt(n)) if n > 1 else None
        return float(Rm.mean()), se, w, None
    var = se_r**2
    if n >= 3:
        coef, cov, chi2, h0 = _weighted_line(x, Rm, var)
        birge = max(1.0, np.sqrt(chi2 / (n - 2)))
        se_b = float(np.sqrt(cov[1, 1])) * birge
        if se_b > 0 and abs(coef[1]) / se_b > stats.t.ppf(0.975, n - 2):
            at = coef[0] + coef[1] * x
            warnings.append(
                f"The cloth resistance changes with pressure (from {at[np.argmin(P)]:.3g} 1/m at "
                f"{P.min() / 1e5:.4g} bar to {at[np.argmax(P)]:.3g} 1/m at {P.max() / 1e5:.4g} bar, beyond the "
                f"tests' scatter): it is given at the reference pressure, from its trend against ln(pressure).")
            trend = {"at_reference": float(coef[0]), "per_log_pressure": float(coef[1]),
                     "at_reference_stderr": float(np.sqrt(cov[0, 0])) * birge, "per_log_pressure_stderr": se_b}
            return float(coef[0]), float(np.sqrt(cov[0, 0])) * birge, h0, trend
    w = (1.0 / var) / (1.0 / var).sum()
    mean = float((w * Rm).sum())
    chi2 = float((((Rm - mean) ** 2) / var).sum())
    birge = max(1.0, np.sqrt(chi2 / (n - 1))) if n > 1 else 1.0
    return mean, float(np.sqrt(1.0 / (1.0 / var).sum())) * birge, w, None


def fit_for_basis(tests, basis: str, reference_pressure: float | None = None):
    """Evaluate tests and combine them; on the cake basis, find the s that the per-test fits on
    that basis give back.

    Each test's alpha on the cake basis depends on s, and s on the alphas: s solves
    s = combine(evaluate(tests, s)).s, found by Brent's method on [0, S_MAX] (plain iteration
    oscillates: the map's slope is below -1 when the cloth holds much of the pressure), from the
    first sign change on a 0.15 grid. With
    one pressure (s unknown), s <= 0 on the total basis, or no root below S_MAX, the total
    basis is kept, and the caller says so.

    Returns (per-test fits, CompressibilityFit).
    """
    from scipy.optimize import brentq

    if basis not in PRESSURE_BASES:
        raise SolverInputError("pressure_basis", f"must be 'cake' or 'total'; got {basis!r}")
    fits = [evaluate_test(t) for t in tests]
    comb = _combine(tests, fits, reference_pressure)
    if basis != "cake" or comb.compressibility is None or not comb.compressibility > 0.0:
        return fits, comb
    cache = {}

    def gap(s):
        f = [evaluate_test(t, s) for t in tests]
        c = _combine(tests, f, reference_pressure)
        cache[s] = (f, c)
        return c.compressibility - s

    # from s = 0 upwards (near s = 1 the fits lose their footing, so the first root counts)
    brackets = [float(x) for x in np.arange(0.15, S_MAX + 1e-9, 0.15)]
    lo, found = 0.0, None
    try:
        for hi in brackets:
            if gap(hi) < 0.0:
                found = hi
                break
            lo = hi
        if found is None:
            return fits, comb
        s_star = brentq(gap, lo, found, xtol=1e-6)
        if s_star not in cache:
            gap(s_star)
    except (SolverInputError, np.linalg.LinAlgError, ValueError):
        return fits, comb
    return cache[s_star]


#: The highest compressibility the cake basis search tries.
S_MAX = 0.9


def _combine(tests, fits, reference_pressure):
    return combine_tests(
        [t.pressure for t in tests], [f.resistance for f in fits], [f.medium_resistance for f in fits],
        reference_pressure, [f.resistance_stderr for f in fits], [f.medium_resistance_stderr for f in fits],
        [f.resistance_medium_correlation for f in fits])
