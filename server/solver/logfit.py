r"""Learning from the press's own cycles: cake and cloth resistance fitted to plant logs.

Pure science in SI (numpy, scipy): a plant log is arrays of time [s], feed pressure [Pa]
and cumulative filtrate volume [m^3] (a flow or a mass is turned into a volume at the edge,
server/presslog.py). Every step works on all cycles at once; nothing loops over rows.

The rate equation (Ruth; Carman), dV/dt = A dP / (mu (alpha c V / A + R_m)), integrated
against the logged pressure from the start of a cycle (V = 0):

.. math::  \int_0^t \Delta P\,dt' = \frac{\mu \alpha c}{A^2} \int_0^V v\,dv
           + \frac{\mu R_m}{A} V

is linear in alpha and R_m whatever the pressure history (constant pressure, constant
rate then pressure, a pump curve), and robust to noisy flow signals because nothing is
differentiated (the primer's "lab tests that start with a filling period"; McCabe, Smith &
Harriott, 7th ed., ch. 29 give the rate equation). For a compressible cake with known s,
alpha = alpha_ref (dp/p_ref)^s and the cake term becomes
:math:`\int_0^V (\Delta p/p_{ref})^s v\,dv`; on the cake pressure basis (Tiller) dp is the
pressure across the cake, dp_c = phi dP, phi from :func:`labfit.cake_share` at the fitted
values (a fixed point reached in a few rounds).

Notation: k a cycle (0-based position in the log), n its rows; the feed pressure logged is
the drop across cake and cloth (gauge pressure, the filtrate side open).
"""

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from .errors import SolverInputError
from .labfit import cake_share

#: A cycle's filtration runs while the pressure is above this share of its highest.
PRESSURE_ON_SHARE = 0.05
#: Fewest rows of a filtration phase a fit is made from.
MIN_ROWS = 8
#: Smallest share of the end volume a weight is worked out at (the first rows read ~0).
RELATIVE_FLOOR = 0.01
#: Rounds of the cake-pressure-basis fixed point (each shrinks the change about tenfold).
CAKE_BASIS_ROUNDS = 8


# ---- cycles ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Cycles:
    """Where each cycle and its filtration phase lie in the log (row indices).

    ``start[k]``..``stop[k]`` (stop exclusive) are the rows of cycle k; its filtration runs
    from row ``first[k]`` (the first row above the on level: the first rise of pressure) to
    ``last[k]`` (the last row above it: the end of feeding), inclusive. Volume and pressure
    integral count from the first row: a feed that starts between two rows of the log is
    taken to start at the later one (a trapezoid across the step would add half a step's
    flow to the volume and bias R_m by the cake resistance of that volume).
    """

    start: np.ndarray
    stop: np.ndarray
    first: np.ndarray
    last: np.ndarray
    how: str  # "cycle column" or what split the log

    @property
    def count(self) -> int:
        return int(self.start.size)


def _segments_from_boundaries(n: int, boundaries) -> tuple[np.ndarray, np.ndarray]:
    b = np.unique(np.concatenate(([0], np.asarray(boundaries, dtype=np.int64), [n])))
    return b[:-1], b[1:]


def find_cycles(time, pressure, volume=None, cycle_numbers=None, gap: float | None = None,
                on_share: float = PRESSURE_ON_SHARE) -> Cycles:
    """Split a log into cycles and find each cycle's filtration phase.

    Parameters
    ----------
    time : array [s], non-decreasing.
    pressure : array [Pa], feed pressure.
    volume : array [m^3] or None, cumulative filtrate: a drop to less than half of the
        previous reading (a reset) starts a cycle.
    cycle_numbers : array or None, a cycle column: a change of value starts a cycle, and
        nothing else does.
    gap : float [s] or None, a pause in the log longer than this starts a cycle unless the
        pressure is on at both sides (default: 20 times the median step, at least 60 s).
    on_share : the pressure is "on" above this share of the cycle's highest pressure.

    Pressure back to near zero (below ``on_share`` of the log's 99th percentile) then rising
    again starts a cycle at the last low row. Segments with too few rows under pressure are
    idle time between cycles, not cycles.
    """
    t = np.asarray(time, dtype=float)
    p = np.asarray(pressure, dtype=float)
    n = t.size
    if cycle_numbers is not None:
        c = np.asarray(cycle_numbers)
        bounds = np.flatnonzero(c[1:] != c[:-1]) + 1
        how = "cycle column"
    else:
        dt = np.diff(t)
        step = float(np.median(dt)) if dt.size else 0.0
        limit = gap if gap is not None else max(60.0, 20.0 * step)
        level = on_share * float(np.percentile(p, 99)) if n else 0.0
        on = p > level
        # a pause with the press under pressure on both sides is missing data, not a new cycle
        gaps = np.flatnonzero((dt > limit) & ~(on[1:] & on[:-1])) + 1
        rises = np.flatnonzero(on[1:] & ~on[:-1])  # the last low row before each rise
        resets = np.empty(0, dtype=np.int64)
        if volume is not None:
            V = np.asarray(volume, dtype=float)
            resets = np.flatnonzero(V[1:] < 0.5 * V[:-1]) + 1
        bounds = np.concatenate((gaps, rises, resets))
        how = "pressure back to near zero, gaps in time" + (" and resets of the volume" if volume is not None else "")
    start, stop = _segments_from_boundaries(n, bounds)
    first, last, keep = _phases(p, start, stop, on_share)
    return Cycles(start[keep], stop[keep], first[keep], last[keep], how)


def _phases(p, start, stop, on_share):
    """First and last row of each segment's filtration (vectorised over segments)."""
    seg_max = np.maximum.reduceat(p, start) if start.size else np.empty(0)
    seg_id = np.repeat(np.arange(start.size), stop - start)
    on = p > on_share * seg_max[seg_id]
    on &= seg_max[seg_id] > 0.0
    idx = np.arange(p.size)
    big = np.iinfo(np.int64).max
    first_on = np.minimum.reduceat(np.where(on, idx, big), start) if start.size else np.empty(0, dtype=np.int64)
    last_on = np.maximum.reduceat(np.where(on, idx, -1), start) if start.size else np.empty(0, dtype=np.int64)
    on_rows = np.add.reduceat(on.astype(np.int64), start) if start.size else np.empty(0, dtype=np.int64)
    keep = (on_rows >= MIN_ROWS) & (last_on >= 0)
    first = np.where(keep, first_on, start)
    last = np.where(keep, last_on, start)
    return first, last, keep


# ---- the per-cycle fit ----------------------------------------------------------------------


@dataclass(frozen=True)
class CycleFits:
    """Per-cycle fits of the integrated rate equation; arrays over the cycles fitted (SI).

    ``resistance`` is alpha (at ``reference_pressure`` for a compressible cake) [m/kg];
    ``medium_resistance`` R_m [1/m]; their standard errors (allowing for residuals that
    follow each other, through the effective number of rows) and correlation; R^2 of the
    integrated form; ``residual_rms`` [Pa*s]; the filtrate volume [m^3], filtration time [s],
    start time [s] and mean and highest pressure [Pa] of each filtration phase.

    ``start_bound`` [1/m]: the fit counts filtration from the first row under pressure; a feed
    that started up to one log step before it filtered a volume V_0 the log did not see, and
    the fitted R_m is then too high by alpha c V_0 / A (the linear term of the integrated form
    takes up 2 a V_0; derived here); the bound is :func:`_start_bound`. ``patterned``: fewer
    sign changes in the residuals' steps than noise gives (see
    :func:`_pattern`); those cycles' standard errors are widened by it.
    """

    resistance: np.ndarray
    resistance_stderr: np.ndarray
    medium_resistance: np.ndarray
    medium_resistance_stderr: np.ndarray
    correlation: np.ndarray
    r_squared: np.ndarray
    residual_rms: np.ndarray
    rows: np.ndarray
    filtrate_volume: np.ndarray
    filtration_time: np.ndarray
    start_time: np.ndarray
    mean_pressure: np.ndarray
    max_pressure: np.ndarray
    reference_pressure: float
    compressibility: float
    pressure_basis: str
    offset: np.ndarray  # d of the integrated form [Pa*s]
    first_step: np.ndarray  # the log's step at the start of filtration [s]
    start_bound: np.ndarray  # R_m's possible excess from a feed started before the first row [1/m]
    patterned: np.ndarray  # residuals that follow a pattern, not noise (errors widened)


def _phase_rows(cycles: Cycles, keep):
    """Row indices of every kept cycle's filtration phase, concatenated, with offsets."""
    first, last = cycles.first[keep], cycles.last[keep]
    lengths = last - first + 1
    offsets = np.concatenate(([0], np.cumsum(lengths)))
    rows = np.repeat(first - offsets[:-1], lengths) + np.arange(offsets[-1])
    return rows, offsets[:-1], lengths


def _segment_cumtrapz(x, y, offsets, lengths):
    """Cumulative trapezoid of y dx restarting at zero at each segment start."""
    inc = 0.5 * (y[1:] + y[:-1]) * np.diff(x)
    inc = np.concatenate(([0.0], inc))
    inc[offsets] = 0.0
    total = np.cumsum(inc)
    return total - np.repeat(total[offsets], lengths)


def _segment_sum(values, offsets):
    return np.add.reduceat(values, offsets)


def cake_weight(V, pressure, alpha, R_m, area: float, solids_per_filtrate: float, compressibility: float,
                reference_pressure: float, pressure_basis: str):
    r"""(dp/p_ref)^s at each row: the factor of v dv in the cake term of the integrated equation.

    Total basis: dp = dP, the logged pressure. Cake basis: dp = phi dP, phi the cake's share of
    the pressure (:func:`labfit.cake_share`: phi + r phi^(1-s) = 1, r = R_m A / (alpha(dP) c V))
    at the given alpha [m/kg] and R_m [1/m] (arrays per row, or None: phi = 1, a first guess).
    """
    s = compressibility
    shape = np.clip(np.asarray(pressure, dtype=float) / reference_pressure, 0.0, None)
    if s == 0.0:
        return np.ones_like(shape)
    phi = 1.0
    if pressure_basis == "cake" and alpha is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(V > 0.0, R_m * area / (alpha * shape**s * solids_per_filtrate * V), np.inf)
        phi = cake_share(np.where(np.isfinite(ratio) & (ratio >= 0), ratio, np.inf), s)
    return (shape * phi) ** s


def fit_cycles(time, pressure, volume, cycles: Cycles, area: float, viscosity: float, solids_per_filtrate: float,
               use=None, compressibility: float = 0.0, reference_pressure: float = 1e5,
               pressure_basis: str = "total", volume_scatter: str = "integrated") -> CycleFits:
    r"""alpha and R_m of each cycle by least squares on the integrated rate equation.

    y = int dP dt [Pa*s] against V [m^3] per cycle, both from zero at the phase's first row:
    y = d + a Z + b V with Z = int (dp/p_ref)^s v dv (V^2/2 for an incompressible cake),
    alpha = a A^2/(mu c), R_m = b A/mu. The offset d takes up what happens before the log
    sees the filtration start (a pressure step between two rows, filtrate lines filling), as
    the lab's three-parameter model does after a filling period. Each cycle's columns are scaled by its end values
    before the 2x2 normal equations are solved for all cycles at once.

    Parameters
    ----------
    area : filter area A [m^2] > 0; viscosity mu [Pa*s] > 0; solids_per_filtrate c [kg/m^3] > 0.
    use : boolean array over cycles, or None (all).
    compressibility : s in [0, 1); reference_pressure p_ref [Pa] > 0.
    pressure_basis : "total" (alpha at dP) or "cake" (alpha at dp_c = dP - mu R_m q / A).
    volume_scatter : "integrated" (volume from a flow signal: its noise averages out, rows
        weigh the same) or "reading" (a volume or mass read each row with a scatter in
        proportion to the reading: weighted least squares, the weights from a first pass).
    """
    for name, value in (("filter_area", area), ("viscosity", viscosity), ("c", solids_per_filtrate),
                        ("reference_pressure", reference_pressure)):
        if not (value > 0.0 and math.isfinite(value)):
            raise SolverInputError(name, f"must be > 0; got {value:.6g}")
    if not 0.0 <= compressibility < 1.0:
        raise SolverInputError("compressibility", f"must be in [0, 1); got {compressibility:.6g}")
    t = np.asarray(time, dtype=float)
    p = np.asarray(pressure, dtype=float)
    Vall = np.asarray(volume, dtype=float)
    keep = np.ones(cycles.count, dtype=bool) if use is None else np.asarray(use, dtype=bool)
    if not keep.any():
        raise SolverInputError("cycles", "no cycle is left to fit: include at least one")
    rows, offsets, lengths = _phase_rows(cycles, keep)
    tt, pp = t[rows], p[rows]
    V = Vall[rows] - np.repeat(Vall[rows[offsets]], lengths)
    y = _segment_cumtrapz(tt, pp, offsets, lengths)
    V_end = V[offsets + lengths - 1]
    y_end = y[offsets + lengths - 1]
    bad = ~(V_end > 0.0) | ~(y_end > 0.0)
    if bad.any():
        k = int(np.flatnonzero(keep)[np.flatnonzero(bad)[0]])
        raise SolverInputError("cycles", f"cycle {k + 1} collects no filtrate under pressure: exclude it or check "
                                         "the flow or volume column")
    seg = np.repeat(np.arange(lengths.size), lengths)
    u = V / V_end[seg]
    yn = y / y_end[seg]
    mu, A, c = viscosity, area, solids_per_filtrate
    s = compressibility
    alpha = R_m = None
    for _round in range(CAKE_BASIS_ROUNDS if (s > 0.0 and pressure_basis == "cake") else 1):
        if s > 0.0:
            weight = cake_weight(V, pp, None if alpha is None else alpha[seg], None if R_m is None else R_m[seg],
                                 A, c, s, reference_pressure, pressure_basis)
            Z = _segment_cumtrapz(V, weight * V, offsets, lengths)
        else:
            Z = 0.5 * V * V
        Z_end = Z[offsets + lengths - 1]
        z = Z / Z_end[seg]
        errors = "random_walk" if volume_scatter == "integrated" else "serial"
        beta, cov, resid = _stacked_fit((np.ones_like(u), u, z), yn, offsets, lengths, errors=errors)
        if volume_scatter == "reading":
            # a volume read with a scatter in proportion to it: y scatters by dy/dV times that
            slope = np.clip(beta[seg, 1] + 2.0 * beta[seg, 2] * u, 1e-3, None)
            spread = slope * np.maximum(u, RELATIVE_FLOOR)
            beta, cov, resid = _stacked_fit((np.ones_like(u), u, z), yn, offsets, lengths, 1.0 / spread**2)
        a, b = beta[:, 2], beta[:, 1]
        alpha = a * y_end * A * A / (mu * c * Z_end)
        R_m = b * y_end * A / (mu * V_end)
    share, widen = _pattern(resid, offsets, lengths, errors)
    cov = cov * (widen * widen)[:, None, None]
    se_a, se_b = np.sqrt(cov[:, 2, 2]), np.sqrt(cov[:, 1, 1])
    alpha_se = se_a * y_end * A * A / (mu * c * Z_end)
    R_se = se_b * y_end * A / (mu * V_end)
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = np.where(se_a * se_b > 0, cov[:, 1, 2] / (se_a * se_b), 0.0)
    ss_res = _segment_sum(resid * resid, offsets)
    mean = _segment_sum(yn, offsets) / lengths
    ss_tot = _segment_sum((yn - mean[seg]) ** 2, offsets)
    r2 = 1.0 - ss_res / np.where(ss_tot > 0, ss_tot, 1.0)
    rms = np.sqrt(ss_res / lengths) * y_end
    t_first = tt[offsets]
    duration = tt[offsets + lengths - 1] - t_first
    mean_p = y_end / np.where(duration > 0, duration, 1.0)
    max_p = np.maximum.reduceat(pp, offsets)
    second = offsets + np.minimum(1, lengths - 1)
    first_step = tt[second] - t_first
    start_bound = _start_bound(V[second], pp[second], first_step, alpha, mu, A, c, s, reference_pressure)
    return CycleFits(alpha, alpha_se, R_m, R_se, np.clip(corr, -1.0, 1.0), r2, rms, lengths, V_end, duration,
                     t_first, mean_p, max_p, reference_pressure, s, pressure_basis, beta[:, 0] * y_end,
                     first_step, start_bound, widen > 1.0)


#: V_0 <= V_1 / (sqrt(2) - 1): the filtrate before the first row against that of the first step,
#: at most when the feed started a whole step early and the cake alone resists (V ~ sqrt(t)).
START_VOLUME_FACTOR = 1.0 / (math.sqrt(2.0) - 1.0)


def _start_bound(V1, p1, step, alpha, mu, A, c, s, reference_pressure):
    """The most R_m can be too high from a feed started up to one step before the first row:
    alpha c w V_0 / A with V_0 the smaller of V_1 / (sqrt(2) - 1) (V(t) is concave from the
    start, between sqrt(t) for a cake alone and t for a cloth alone: V(l)/(V(l+h) - V(l)) is
    largest at l = h for sqrt(t); derived here) and the filtrate of one step through the cake
    alone, sqrt(2 A^2 dP h / (mu alpha c w)) (Ruth's equation with no cloth). w = (dP/p_ref)^s,
    the whole pressure across the cake: an upper bound on either basis that does not lean on
    the fitted R_m (a cloth fitted too high would shrink the cake's share)."""
    w = cake_weight(V1, p1, None, None, A, c, s, reference_pressure, "total") if s > 0.0 else 1.0
    k = np.abs(alpha) * c * w
    with np.errstate(divide="ignore", invalid="ignore"):
        cake_only = np.where(k > 0, np.sqrt(2.0 * A * A * np.maximum(p1, 0.0) * step / (mu * k)), np.inf)
    V0 = np.minimum(START_VOLUME_FACTOR * np.abs(V1), cake_only)
    return k * V0 / A


#: Share of sign changes in the residuals' steps below which they follow a pattern: noise gives
#: arccos(rho)/pi for steps with lag-one correlation rho (the orthant probability of two
#: correlated normal variables), at least 1/3 for the trapezoid's rho = 1/2 and 1/2 or more
#: for readings; a smooth misfit gives a few changes in a whole cycle.
PATTERN_SHARE = 0.1


def _pattern(resid, offsets, lengths, errors):
    """Share of sign changes of each cycle's residual steps (or residuals, for readings) and
    the factor its standard errors are widened by: sqrt(expected / observed share) when the
    share is below PATTERN_SHARE (the rows counted as that many fewer independent ones; a
    heuristic derived here, no source), else 1."""
    x = np.concatenate(([0.0], np.diff(resid))) if errors == "random_walk" else resid.copy()
    positive = x > 0.0
    change = np.concatenate(([False], positive[1:] != positive[:-1]))
    change[offsets] = False
    if errors == "random_walk":
        change[np.minimum(offsets + 1, resid.size - 1)] = False  # the first step is set to zero
    pairs = np.maximum(lengths - (2 if errors == "random_walk" else 1), 1).astype(float)
    share = np.add.reduceat(change.astype(float), offsets) / pairs
    expected = 1.0 / 3.0 if errors == "random_walk" else 0.5
    low = (share < PATTERN_SHARE) & (lengths >= 2 * MIN_ROWS)
    widen = np.where(low, np.sqrt(expected / np.maximum(share, 1.0 / pairs)), 1.0)
    return share, widen


def _stacked_fit(columns, y, offsets, lengths, weights=None, errors: str = "serial"):
    """y = sum_j beta_j X_j per segment, by the normal equations of all segments at once
    (stacked small matrices). Returns beta (segments x columns), their covariances
    (segments x columns x columns) and the residuals per row.

    Residuals of an integrated form follow each other, so counting every row as independent
    would give errors far too small. ``errors``:

    - "random_walk" (a volume integrated from a noisy flow, a pressure integral): the error of
      row i is a sum of independent steps, covariance s^2 min(i, j); the sandwich
      (X'X)^-1 X' S X (X'X)^-1 with X' S X = s^2 sum_k G_k G_k', G_k the sum of the rows from k
      on, and s^2 the long-run variance of the residuals' steps (generalised least squares
      theory; derived here);
    - "serial": the residual scatter with the number of rows shrunk by their lag-one
      autocorrelation r to n (1 - r)/(1 + r) (common practice for serially correlated
      residuals, no source).
    """
    m = len(columns)
    if weights is not None:
        root = np.sqrt(weights)
        beta, cov, resid = _stacked_fit([x * root for x in columns], y * root, offsets, lengths, errors=errors)
        return beta, cov, resid / root
    XtX = np.empty((lengths.size, m, m))
    Xty = np.empty((lengths.size, m))
    for i in range(m):
        Xty[:, i] = _segment_sum(columns[i] * y, offsets)
        for j in range(i, m):
            XtX[:, i, j] = XtX[:, j, i] = _segment_sum(columns[i] * columns[j], offsets)
    inv = np.linalg.inv(XtX)
    beta = np.einsum("kij,kj->ki", inv, Xty)
    seg = np.repeat(np.arange(lengths.size), lengths)
    resid = y - sum(beta[seg, i] * columns[i] for i in range(m))
    n = lengths.astype(float)
    last = offsets + lengths - 1
    if errors == "random_walk":
        steps = np.concatenate(([0.0], np.diff(resid)))
        steps[offsets] = 0.0  # no step across two cycles
        # the steps' long-run variance (lag one, Newey and West): a trapezoid shares each
        # reading between two steps, which halves their variance but not their sum's
        lag = np.concatenate(([0.0], steps[1:] * steps[:-1]))
        lag[offsets] = 0.0
        gamma0 = _segment_sum(steps * steps, offsets)
        s2 = np.maximum(gamma0 + 2.0 * _segment_sum(lag, offsets), 0.0) / np.maximum(n - 1.0 - m, 1.0)
        G = []
        for x in columns:  # the sum of the rows from k to the segment's end, k >= 1 in a segment
            total = np.cumsum(x)
            g = total[last][seg] - total + x
            g[offsets] = 0.0
            G.append(g)
        meat = np.empty((lengths.size, m, m))
        for i in range(m):
            for j in range(i, m):
                meat[:, i, j] = meat[:, j, i] = _segment_sum(G[i] * G[j], offsets)
        cov = s2[:, None, None] * np.einsum("kij,kjl,klm->kim", inv, meat, inv)
        return beta, cov, resid
    ss = _segment_sum(resid * resid, offsets)
    lagged = np.concatenate((resid[1:] * resid[:-1], [0.0]))
    lagged[last] = 0.0  # no product across two cycles
    with np.errstate(divide="ignore", invalid="ignore"):
        r1 = np.where(ss > 0, _segment_sum(lagged, offsets) / np.where(ss > 0, ss, 1.0), 0.0)
    r1 = np.clip(r1, 0.0, 0.99)
    n_eff = np.maximum(n * (1.0 - r1) / (1.0 + r1), m + 1.0)
    sigma2 = ss / np.maximum(n - m, 1.0) * (n / n_eff)
    return beta, sigma2[:, None, None] * inv, resid


def cycle_curves(time, pressure, volume, cycles: Cycles, k: int, fits: CycleFits, index: int, area: float,
                 viscosity: float, solids_per_filtrate: float) -> dict:
    """One cycle's filtration phase with the fitted model over it (SI arrays).

    The fitted integral d + (mu alpha c / A^2) Z(V) + (mu R_m / A) V along the logged volume
    (the same Z as the fit: compressibility and pressure basis included); the model's volume
    at each row is where that integral reaches the logged one, and its flow the rate equation
    there. ``index`` is the cycle's position among the fitted cycles; ``k`` among all cycles.
    """
    i0, i1 = int(cycles.first[k]), int(cycles.last[k]) + 1
    t = np.asarray(time[i0:i1], dtype=float)
    p = np.asarray(pressure[i0:i1], dtype=float)
    V = np.asarray(volume[i0:i1], dtype=float) - float(volume[i0])
    y = np.concatenate(([0.0], np.cumsum(0.5 * (p[1:] + p[:-1]) * np.diff(t))))
    mu, A, c = viscosity, area, solids_per_filtrate
    alpha, R_m, d = (float(x[index]) for x in (fits.resistance, fits.medium_resistance, fits.offset))
    w = cake_weight(V, p, alpha, R_m, A, c, fits.compressibility, fits.reference_pressure, fits.pressure_basis)
    Z = np.concatenate(([0.0], np.cumsum(0.5 * (w[1:] * V[1:] + w[:-1] * V[:-1]) * np.diff(V))))
    ka, kb = mu * alpha * c / (A * A), mu * R_m / A
    fitted = d + ka * Z + kb * V
    # the model's volume: where the fitted integral reaches the logged one (monotone while
    # the resistances are positive); its flow from the rate equation at that volume
    order = np.argsort(fitted, kind="stable")
    V_model = np.interp(y, fitted[order], V[order])
    w_model = np.interp(V_model, V[order], w[order])
    flow_model = p / np.maximum(ka * w_model * V_model + kb, 1e-300)
    return {"time": t - t[0], "pressure": p, "volume": V, "volume_model": V_model, "flow_model": flow_model,
            "integral": y, "integral_fitted": fitted, "residuals": y - fitted}


# ---- trends, cloth blinding and washes -------------------------------------------------------


@dataclass(frozen=True)
class Trend:
    """A robust straight line y = intercept + slope x (Theil and Sen) and the scatter about it."""

    slope: float
    slope_low: float
    slope_high: float
    intercept: float
    scatter: float  # 1.4826 x the median absolute deviation about the line
    outliers: np.ndarray  # positions whose distance from the line exceeds 3 scatters


def robust_trend(x, y) -> Trend:
    """Theil-Sen line with its 95 % slope interval (scipy.stats.theilslopes; Sen, 1968) and a
    MAD scatter (1.4826 MAD: the standard deviation for normal scatter; common practice)."""
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if x.size < 3:
        mid = float(np.median(y)) if y.size else 0.0
        return Trend(0.0, 0.0, 0.0, mid, 0.0, np.empty(0, dtype=np.int64))
    slope, intercept, low, high = stats.theilslopes(y, x, 0.95)
    resid = y - (intercept + slope * x)
    scatter = 1.4826 * float(np.median(np.abs(resid - np.median(resid))))
    outliers = np.flatnonzero(np.abs(resid) > 3.0 * scatter) if scatter > 0 else np.empty(0, dtype=np.int64)
    return Trend(float(slope), float(low), float(high), float(intercept), scatter, outliers)


@dataclass(frozen=True)
class Drift:
    """Whether alpha moved beyond its scatter over the log (a feed change)."""

    flagged: bool
    trend: Trend
    change: float  # trend's change from the first to the last cycle [m/kg]
    note: str


#: Smallest change of alpha over the log, as a share of it, that is flagged as drift: a few per
#: cent is within what a feed's day-to-day variation does (common practice, no source).
DRIFT_SHARE = 0.05


def alpha_drift(cycle_number, alpha, min_share: float = DRIFT_SHARE) -> Drift:
    """alpha's trend over the log, flagged as a feed change only when the change is both well
    beyond its scatter and of practical size: the 95 % slope interval excludes zero, the trend
    moves by more than three times the cycle-to-cycle scatter and by more than ``min_share``
    of alpha; or at least two cycles (and 5 %) lie beyond three scatters of the trend and
    beyond ``min_share`` of it (a step). Common practice, no source."""
    x = np.asarray(cycle_number, dtype=float)
    a = np.asarray(alpha, dtype=float)
    tr = robust_trend(x, a)
    change = tr.slope * float(x.max() - x.min()) if x.size else 0.0
    level = abs(tr.intercept + tr.slope * float(np.median(x))) if x.size else 0.0
    sloped = ((tr.slope_low > 0 or tr.slope_high < 0) and abs(change) > 3.0 * tr.scatter
              and abs(change) > min_share * level)
    far = np.empty(0, dtype=np.int64)
    if tr.outliers.size:
        resid = a[tr.outliers] - (tr.intercept + tr.slope * x[tr.outliers])
        far = tr.outliers[np.abs(resid) > min_share * level]
    stepped = x.size >= 3 and far.size >= max(2, int(0.05 * x.size))
    note = ""
    start = abs(tr.intercept + tr.slope * float(x.min())) if x.size else 0.0
    if sloped:
        note = (f"α moved by {100 * change / start:+.1f} % over the log, beyond its scatter "
                f"(±{100 * tr.scatter / level:.1f} % from cycle to cycle) and beyond {100 * min_share:.0f} %: "
                "the feed may have changed")
    elif stepped:
        note = (f"{far.size} cycles lie beyond three times α's scatter and more than {100 * min_share:.0f} % from "
                "its trend: the feed may have changed")
    return Drift(bool(sloped or stepped), tr, float(change), note)


def detect_washes(R_m, min_drop: float = 0.05, spread: float = 5.0) -> np.ndarray:
    """Positions k where the cloth was washed before cycle k: R_m drops by more than
    ``spread`` robust scatters of its cycle-to-cycle change and by more than ``min_drop`` of
    its value (common practice, no source)."""
    R = np.asarray(R_m, dtype=float)
    if R.size < 3:
        return np.empty(0, dtype=np.int64)
    d = np.diff(R)
    med = float(np.median(d))
    sigma = 1.4826 * float(np.median(np.abs(d - med)))
    drop = d < med - spread * sigma
    drop &= d < -min_drop * np.abs(R[:-1])
    return np.flatnonzero(drop) + 1


@dataclass(frozen=True)
class Blinding:
    """Cloth resistance growth between washes, by least squares with one intercept per
    interval and a common slope."""

    growth: float  # [1/m per cycle]
    growth_stderr: float
    clean: float  # R_m just after a wash, averaged over the intervals [1/m]
    clean_stderr: float
    washes: np.ndarray  # positions (among the cycles given) where an interval starts, after the first
    cycles_since_wash: int
    current: float  # the line's R_m at the last cycle [1/m]


def cloth_blinding(cycle_number, R_m, washes) -> Blinding:
    """R_m = clean_j + growth (n - n_j) in each interval j between washes (n the cycle number,
    n_j the interval's first cycle): ordinary least squares, pooled slope."""
    n = np.asarray(cycle_number, dtype=float)
    R = np.asarray(R_m, dtype=float)
    w = np.unique(np.asarray(washes, dtype=np.int64))
    w = w[(w > 0) & (w < R.size)]
    starts = np.concatenate(([0], w))
    stops = np.concatenate((w, [R.size]))
    lengths = stops - starts
    seg = np.repeat(np.arange(starts.size), lengths)
    x = n - n[starts][seg]
    xm = np.add.reduceat(x, starts) / lengths
    Rm = np.add.reduceat(R, starts) / lengths
    dx = x - xm[seg]
    Sxx = float(np.sum(dx * dx))
    if Sxx <= 0:
        clean = float(np.mean(R))
        se = float(np.std(R, ddof=1) / math.sqrt(R.size)) if R.size > 1 else 0.0
        return Blinding(0.0, 0.0, clean, se, w, int(R.size - starts[-1]), float(R[-1]))
    g = float(np.sum(dx * (R - Rm[seg])) / Sxx)
    intercepts = Rm - g * xm
    resid = R - intercepts[seg] - g * x
    dof = max(R.size - starts.size - 1, 1)
    s2 = float(np.sum(resid * resid)) / dof
    g_se = math.sqrt(s2 / Sxx)
    clean = float(np.mean(intercepts))
    # the mean intercept's error from the scatter about the lines (each interval's mean is
    # uncorrelated with the pooled slope: Var = (sum s2/n_j + (sum xm_j)^2 Var g) / J^2;
    # derived here), and from the intercepts' own scatter when there are several: the larger
    # (two intervals that repeat each other do not make the clean cloth exact)
    J = intercepts.size
    model_se = math.sqrt(float(np.sum(s2 / lengths)) + (float(np.sum(xm)) * g_se) ** 2) / J
    clean_se = model_se
    if J > 1:
        clean_se = max(clean_se, float(np.std(intercepts, ddof=1) / math.sqrt(J)))
    current = float(intercepts[-1] + g * x[-1])
    return Blinding(g, g_se, clean, clean_se, w, int(n[-1] - n[starts[-1]] + 1), current)


# ---- which cycles the summaries use, and their robust centre -------------------------------

#: Lowest R^2 of the integrated form for a cycle to count in the summaries.
MIN_R_SQUARED = 0.99
#: A cycle whose alpha is this many times off the median of the valid cycles is left out.
ALPHA_FACTOR = 3.0


def screen_cycles(fits: CycleFits, min_rows: int = MIN_ROWS, min_r_squared: float = MIN_R_SQUARED,
                  alpha_factor: float = ALPHA_FACTOR) -> list[list[str]]:
    """Why each fitted cycle is physically invalid (an empty list: valid), in words.

    Invalid: alpha <= 0 or R_m < 0 (the log does not follow the rate equation there), R^2 of
    the integrated form below ``min_r_squared``, fewer than ``min_rows`` rows, a value that is
    not finite, or alpha more than ``alpha_factor`` times off the median alpha of the cycles
    valid on the other counts (common practice, no source)."""
    reasons = []
    for i in range(fits.resistance.size):
        a, r, r2 = float(fits.resistance[i]), float(fits.medium_resistance[i]), float(fits.r_squared[i])
        why = []
        if not (math.isfinite(a) and math.isfinite(r)):
            why.append("its fit is not finite")
        else:
            if a <= 0:
                why.append(f"α {a:.3g} m/kg is not above zero")
            if r < 0:
                why.append(f"R_m {r:.3g} 1/m is below zero")
        if not r2 >= min_r_squared:
            why.append(f"R² {r2:.3f} is below {min_r_squared:g}")
        if int(fits.rows[i]) < min_rows:
            why.append(f"{int(fits.rows[i])} rows under pressure (fewer than {min_rows})")
        reasons.append(why)
    ok = np.array([not w for w in reasons])
    if ok.sum() >= 3:
        mid = float(np.median(fits.resistance[ok]))
        for i in np.flatnonzero(ok):
            ratio = float(fits.resistance[i]) / mid
            if ratio > alpha_factor or ratio < 1.0 / alpha_factor:
                reasons[i].append(f"α {float(fits.resistance[i]):.3g} m/kg is {ratio:.3g} times the median of the "
                                  "other cycles")
    return reasons


@dataclass(frozen=True)
class Centre:
    """A robust centre of values from several cycles and its standard error."""

    value: float
    stderr: float
    scatter: float  # 1.4826 x the median absolute deviation
    count: int


def robust_centre(values, stderrs) -> Centre:
    """The median of per-cycle values and its standard error.

    The error is the larger of sqrt(pi/2) 1.4826 MAD / sqrt(n) (the median's standard error
    for normal scatter, its efficiency 2/pi; 1.4826 MAD the standard deviation: common
    practice, no source) and the median of the cycles' own standard errors / sqrt(n) (cycles
    that repeat each other exactly have no scatter, but each is only known that well). One
    value: its own standard error."""
    v = np.asarray(values, dtype=float)
    se = np.asarray(stderrs, dtype=float)
    n = v.size
    if n == 0:
        raise SolverInputError("cycles", "no valid cycle to summarise")
    mid = float(np.median(v))
    if n == 1:
        return Centre(mid, float(se[0]), 0.0, 1)
    scatter = 1.4826 * float(np.median(np.abs(v - mid)))
    err = max(math.sqrt(math.pi / 2.0) * scatter, float(np.median(se))) / math.sqrt(n)
    return Centre(mid, err, scatter, int(n))


#: R_m is resolved when a feed started up to one log step before the first row could move it
#: by at most this share (the start-of-feeding bound against R_m itself; a judgement, no source).
RESOLUTION_SHARE = 0.2


@dataclass(frozen=True)
class Resolution:
    """Whether the log's step resolves the cloth resistance (over the cycles given)."""

    resolved: bool
    share: float  # median of start_bound / R_m
    step: float  # median log step at the start of filtration [s]
    step_needed: float  # about the step that would resolve R_m [s] (nan when it cannot be told)


def cloth_resolution(fits: CycleFits, use, area: float, viscosity: float, solids_per_filtrate: float,
                     share: float = RESOLUTION_SHARE) -> Resolution:
    """Whether R_m is resolved: ``CycleFits.start_bound`` (the most a feed started between two
    rows can raise R_m; it is also how far the cake already outweighs the cloth at the first
    logged rows) at most ``share`` of R_m, in the median cycle.

    The step needed: the time a standing start takes to filtrate V* = share R A /
    (2.414 alpha c) at the cycles' highest pressure, mu (alpha c V*^2 / (2 A^2) + R V* / A) / dP
    (the rate equation integrated at constant pressure; McCabe, Smith & Harriott, 7th ed.,
    ch. 29), R = R_m less half its bound (nan when that is not above zero)."""
    u = np.asarray(use, dtype=bool)
    R = fits.medium_resistance[u]
    bound = fits.start_bound[u]
    step = float(np.median(fits.first_step[u]))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(R > 0, bound / R, np.inf)
    mid = float(np.median(ratio))
    # R_m in the middle of its start-of-feeding range (the fitted R_m is its top)
    R_low = float(np.median(R - 0.5 * bound))
    a_mid = float(np.median(fits.resistance[u]))
    needed = math.nan
    if R_low > 0 and a_mid > 0:
        mu, A, c = viscosity, area, solids_per_filtrate
        V = share * R_low * A / (START_VOLUME_FACTOR * a_mid * c)
        needed = mu * (a_mid * c * V * V / (2 * A * A) + R_low * V / A) / float(np.median(fits.max_pressure[u]))
    return Resolution(bool(mid <= share), mid, step, needed)


def ratio_with_error(plant: float, plant_se: float, lab: float, lab_se: float | None) -> tuple[float, float]:
    """plant / lab and its standard error, the relative errors added in quadrature (first-order
    propagation of independent errors; common practice, no source)."""
    r = plant / lab
    rel = math.hypot(plant_se / plant if plant else 0.0, (lab_se or 0.0) / lab)
    return r, abs(r) * rel
