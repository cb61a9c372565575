"""Lab squeeze test evaluation: C_e, creep and the equilibrium cake from a piston-press test.

A cake of known dry solids mass m_s [kg], solids density rho_s [kg/m^3] and area A [m^2] is
pressed at a constant squeeze pressure; its thickness L(t) (or the liquid expressed, v(t)) is
read against the time since the pressure was applied. The model is the one the cycle uses,
:meth:`expression.Squeeze.ratio` (Terzaghi–Voigt; Shirato, Murase, Iritani and co-workers;
Wakeman & Tarleton, Solid/Liquid Separation, the chapter on expression):

    L(t) = L_0 - (L_0 - L_inf) U_c(t),   U_c = (1 - B) U_T(C_e t / omega_d^2) + B (1 - exp(-eta t))

with omega = m_s / (rho_s A) the solids volume per unit area [m] and omega_d = omega / i for a
cake drained on i faces (1 or 2). Expressed liquid: the cake stays saturated, so the
thickness falls by v / A: v(t) = v_0 + A (L_0 - L_inf) U_c(t), with L_0 the cake thickness when
the squeeze starts (given). The void ratio e = L / omega - 1, the porosity e / (1 + e).

C_e, B, eta, L_0 (or v_0) and L_inf are fitted by nonlinear least squares
(scipy.optimize.least_squares, several starts, the best kept); standard errors come from the
Jacobian at the optimum (covariance s^2 (J^T J)^-1, s^2 = residual sum of squares / (n - p)),
R^2 = 1 - SSR / SST. ``creep=False`` fits B = 0 (and no eta).

The initial slope of U against sqrt(t) is the classic check: for U_T < 0.6,
U_T = sqrt(4 T / pi), so U = (2 / sqrt(pi)) sqrt(C_e t) / omega_d.
"""

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from .errors import SolverInputError
from .expression import Squeeze, porosity_of

QUANTITIES = ("thickness", "filtrate")
#: function evaluations for each start of the search; the best POLISHED_STARTS of them then run
#: to convergence
START_EVALUATIONS = 60
POLISHED_STARTS = 4


@dataclass(frozen=True)
class SqueezeTest:
    """One lab squeeze test (all SI).

    Attributes
    ----------
    times : tuple of float
        Time since the squeeze pressure was applied [s], rising, the first may be 0.
    values : tuple of float
        Cake thickness [m] (``quantity="thickness"``) or cumulative expressed liquid [m^3]
        (``quantity="filtrate"``) at each time.
    dry_solids_mass, solids_density, area : float
        The lab cake's dry solids [kg], the solids' density [kg/m^3] and the test area [m^2].
    drained_faces : int
        1 (piston on an impervious face) or 2 (cloth on both faces).
    initial_thickness : float or None
        The cake's thickness when the squeeze starts [m]; needed with expressed liquid.
    creep : bool
        Fit the creep fraction B and rate eta; False: B = 0.
    liquid_density : float
        [kg/m^3], for the moisture of the squeezed cake.
    """

    times: tuple
    values: tuple
    quantity: str
    dry_solids_mass: float
    solids_density: float
    area: float
    drained_faces: int = 1
    initial_thickness: float | None = None
    creep: bool = True
    liquid_density: float = 1000.0

    def __post_init__(self):
        if self.quantity not in QUANTITIES:
            raise SolverInputError("quantity", f"must be one of {', '.join(QUANTITIES)}; got {self.quantity!r}")
        for name, unit in (("dry_solids_mass", "kg"), ("solids_density", "kg/m³"), ("area", "m²"),
                           ("liquid_density", "kg/m³")):
            v = getattr(self, name)
            if not (np.isfinite(v) and v > 0.0):
                raise SolverInputError(name, f"must be a number above 0 {unit}; got {v:.6g}")
        if self.drained_faces not in (1, 2):
            raise SolverInputError("drained_faces", f"must be 1 or 2; got {self.drained_faces!r}")
        t = np.asarray(self.times, dtype=float)
        y = np.asarray(self.values, dtype=float)
        need = 8 if self.creep else 6
        if t.ndim != 1 or t.size != y.size or t.size < need:
            raise SolverInputError("readings", f"give at least {need} (time, {self._what}) readings to fit "
                                   f"{5 if self.creep else 3} parameters with a check on their scatter; "
                                   f"got {min(t.size, y.size)}")
        for j, column in ((0, t), (1, y)):
            if not np.all(np.isfinite(column)):
                raise SolverInputError(f"readings.{int(np.argmin(np.isfinite(column)))}.{j}", "must be a finite number")
        if t[0] < 0.0:
            raise SolverInputError("readings.0.0", "times count from the moment the squeeze pressure was applied: "
                                   "they must be 0 s or later")
        if np.any(np.diff(t) <= 0.0):
            k = int(np.argmax(np.diff(t) <= 0.0)) + 1
            raise SolverInputError(f"readings.{k}.0", "times must rise from reading to reading")
        if self.quantity == "thickness":
            if np.any(y <= 0.0):
                k = int(np.argmax(y <= 0.0))
                raise SolverInputError(f"readings.{k}.1", "a cake thickness must be above 0 m")
            if not y[-1] < y[0]:
                raise SolverInputError("readings", "the cake thickness does not fall from the first reading to the "
                                       "last: these are not the readings of a squeeze")
            if y[0] <= self.solids_thickness:
                raise SolverInputError(
                    "readings", f"the first thickness, {y[0] * 1e3:.4g} mm, is not above the solids' own thickness "
                    f"m_s/(rho_s A) = {self.solids_thickness * 1e3:.4g} mm: check the readings' unit, the dry solids "
                    "mass, the solids density and the area", also=("dry_solids_mass", "solids_density", "area"))
        else:
            if self.initial_thickness is None or not (np.isfinite(self.initial_thickness)
                                                      and self.initial_thickness > 0.0):
                raise SolverInputError("initial_thickness", "readings of expressed liquid need the cake's thickness "
                                       "when the squeeze starts (above 0 m)")
            if self.initial_thickness <= self.solids_thickness:
                raise SolverInputError(
                    "initial_thickness", f"must be above the solids' own thickness m_s/(rho_s A) = "
                    f"{self.solids_thickness * 1e3:.4g} mm", also=("dry_solids_mass", "solids_density", "area"))
            if not y[-1] > y[0]:
                raise SolverInputError("readings", "the expressed liquid does not rise from the first reading to the "
                                       "last: these are not the readings of a squeeze")
        k = _far_outside(y, self.quantity)
        if k is not None:
            first, last, value = (_shown(v, self.quantity) for v in (y[0], y[-1], y[k]))
            only = "only thins the cake" if self.quantity == "thickness" else "only adds to the expressed liquid"
            raise SolverInputError(
                f"readings.{k}.1", f"{value} lies further outside the first and last readings ({first} to {last}) "
                f"than the whole squeeze between them: a squeeze {only}, "
                "so every reading lies between the first and the last (within their scatter); check this reading "
                "(a slipped or missing decimal point?)")
        if np.count_nonzero(t > 0.0) < need - 1:
            raise SolverInputError("readings", "too few readings after the start of the squeeze")

    @property
    def _what(self) -> str:
        return "thickness" if self.quantity == "thickness" else "expressed liquid"

    @property
    def solids_thickness(self) -> float:
        """omega = m_s / (rho_s A): the solids volume per unit area, the thickness with no voids [m]."""
        return self.dry_solids_mass / (self.solids_density * self.area)

    @property
    def drainage_omega(self) -> float:
        """omega per drained face [m]: the length in the time factor."""
        return self.solids_thickness / self.drained_faces


def _shown(value: float, quantity: str) -> str:
    """A reading as the lab writes it: a thickness in mm, expressed liquid in mL."""
    return f"{value * 1e3:.4g} mm" if quantity == "thickness" else f"{value * 1e6:.4g} mL"


def _far_outside(y: np.ndarray, quantity: str) -> int | None:
    """The first reading further outside the span of the first and last readings than that span
    itself (a thickness above the first reading by more than the whole squeeze, or below the
    last by as much; the same for expressed liquid), or None. No scatter makes a reading of a
    squeeze do that: it is a slip (a lost decimal point), and no fit can follow it."""
    top, bottom = max(y[0], y[-1]), min(y[0], y[-1])
    span = top - bottom
    far = np.flatnonzero((y > top + span) | (y < bottom - span))
    return int(far[0]) if far.size else None


def _off_trend(y: np.ndarray) -> int:
    """The reading that breaks the trend most: the farthest from the median of itself and its
    two neighbours (one bad reading cannot move that median)."""
    padded = np.concatenate(([y[0]], y, [y[-1]]))
    med = np.median(np.stack([padded[:-2], padded[1:-1], padded[2:]]), axis=0)
    return int(np.argmax(np.abs(y - med)))


@dataclass(frozen=True)
class SqueezeFit:
    """The fitted squeeze (SI); stderrs None where the Jacobian does not determine them."""

    consolidation_coefficient: float  # C_e [m^2/s]
    consolidation_coefficient_stderr: float | None
    creep_fraction: float  # B [-]
    creep_fraction_stderr: float | None
    creep_rate: float  # eta [1/s]
    creep_rate_stderr: float | None
    initial_thickness: float  # L_0 [m]
    initial_thickness_stderr: float | None
    final_thickness: float  # L_inf [m]
    final_thickness_stderr: float | None
    solids_thickness: float  # omega [m]
    initial_void_ratio: float
    final_void_ratio: float
    initial_porosity: float
    final_porosity: float
    final_porosity_stderr: float | None
    final_moisture: float  # liquid / wet cake mass [-]
    offset: float  # v_0 [m^3] (filtrate) or L_0 [m] (thickness): the model at t = 0
    amplitude: float  # b in y = offset + b U_c [m or m^3]
    r_squared: float
    residuals: np.ndarray  # measured minus fitted [m or m^3]
    fitted: np.ndarray  # the model at the readings
    consolidation_at_last: float  # U_c at the last reading [-]
    correlation: dict = field(default_factory=dict)  # of the fitted parameters, by name pair
    warnings: list = field(default_factory=list)

    def curve(self, test: SqueezeTest, t) -> np.ndarray:
        """The fitted readings' quantity at times t [s] (for a chart)."""
        return self.offset + self.amplitude * _ratio(np.asarray(t, dtype=float), test.drainage_omega,
                                                     self.consolidation_coefficient, self.creep_fraction,
                                                     self.creep_rate)


def _ratio(t, omega_d, Ce, B, eta):
    """U_c through the cycle's own model (Squeeze.ratio)."""
    s = Squeeze(pressure=1.0, consolidation_coefficient=Ce, final_void_ratio=1.0, creep_fraction=B,
                creep_rate=eta if B > 0.0 else 0.0)
    return s.ratio(t, omega_d)


def initial_slope_estimate(t, y, omega_d: float, amplitude: float) -> float:
    """C_e from the readings' initial slope against sqrt(t) [m^2/s]: the classic construction.

    With U_T = sqrt(4 T / pi) for U < 0.6, y = y_0 + b (2 / sqrt(pi)) sqrt(C_e t) / omega_d, so a
    straight line of y against sqrt(t) through the readings with |y - y_0| < 0.5 |b| has slope
    k = 2 b sqrt(C_e) / (sqrt(pi) omega_d), and C_e = (k sqrt(pi) omega_d / (2 b))^2.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    early = np.abs(y - y[0]) <= 0.5 * abs(amplitude)
    early[: 3] = True  # at least three readings for a line
    k = np.polyfit(np.sqrt(t[early]), y[early], 1)[0]
    return float((k * np.sqrt(np.pi) * omega_d / (2.0 * amplitude)) ** 2)


def fit_squeeze(test: SqueezeTest) -> SqueezeFit:
    """Fit the Terzaghi–Voigt squeeze to one lab test (see the module's docstring)."""
    t = np.asarray(test.times, dtype=float)
    y = np.asarray(test.values, dtype=float)
    omega, omega_d = test.solids_thickness, test.drainage_omega
    span = y[-1] - y[0]
    t_end = t[-1]

    def linear(p):
        """Given log10 C_e (and B, log10 eta), the best offset and amplitude are a linear least
        squares fit (variable projection: the nonlinear search runs over C_e, B, eta only)."""
        B, log_eta = (p[1], p[2]) if test.creep else (0.0, 0.0)
        U = _ratio(t, omega_d, 10.0 ** p[0], B, 10.0 ** log_eta)
        X = np.column_stack([np.ones_like(U), U])
        coef = np.linalg.lstsq(X, y, rcond=None)[0]
        return coef, X @ coef

    scale = max(abs(span), 1e-300)
    ce0 = initial_slope_estimate(t, y, omega_d, 1.1 * span)
    if not (np.isfinite(ce0) and ce0 > 0.0):
        ce0 = omega_d**2 / t_end  # T = 1 at the last reading
    ce0 = float(np.clip(ce0, 1e-15, 1e-1))
    starts = []
    for ce_factor in (1.0, 0.2, 5.0):
        base = [np.log10(ce0 * ce_factor)]
        if test.creep:
            for B0 in (0.05, 0.25):
                for eta_factor in (0.3, 3.0, 30.0):
                    starts.append(base + [B0, np.log10(eta_factor / t_end)])
        else:
            starts.append(base)
    lo = np.array([-16.0] + ([0.0, -9.0] if test.creep else []))
    hi = np.array([0.0] + ([0.95, 3.0] if test.creep else []))
    def search(x0, max_nfev):
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            return least_squares(lambda p: (linear(p)[1] - y) / scale, x0, bounds=(lo, hi), x_scale="jac",
                                 xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=max_nfev)

    # every start a short search, then the best few of them to convergence: readings the model
    # cannot follow (one bad reading) no longer run each of the 18 starts to its full budget (8 s),
    # and a start that stopped early at a worse fit cannot hide the one that would reach the best
    # (a review found one such case among 250 exact series when only the best one carried on)
    short = [search(np.clip(x0, lo + 1e-9, hi - 1e-9), START_EVALUATIONS) for x0 in starts]
    short = sorted((r for r in short if np.isfinite(r.cost)), key=lambda r: r.cost)
    best = None
    for res in short[:POLISHED_STARTS]:
        if res.status == 0:  # stopped by the budget: carry on from there
            polished = search(res.x, 1000)
            if np.isfinite(polished.cost) and polished.cost <= res.cost:
                res = polished
        if best is None or res.cost < best.cost:
            best = res
    if best is None or not np.all(np.isfinite(best.x)):
        raise SolverInputError("readings", "the squeeze model could not be fitted to these readings")

    (a, b), fitted = linear(best.x)
    Ce = 10.0 ** best.x[0]
    B, eta = (float(best.x[1]), 10.0 ** best.x[2]) if test.creep else (0.0, 0.0)
    residuals = y - fitted
    ssr = float(residuals @ residuals)
    sst = float(np.sum((y - y.mean()) ** 2))
    r2 = 1.0 - ssr / sst if sst > 0 else float("nan")

    # standard errors in the natural parameters (a, b, C_e[, B, eta]) from their own Jacobian
    natural = np.array([a, b, Ce] + ([B, eta] if test.creep else []))

    def model_natural(q):
        return q[0] + q[1] * _ratio(t, omega_d, q[2], q[3] if test.creep else 0.0, q[4] if test.creep else 0.0)

    J = np.empty((t.size, natural.size))
    for k in range(natural.size):
        # offset and amplitude step by the readings' span, B in absolute terms, C_e and eta relatively
        h = 1e-6 * (abs(span) if k < 2 else (1.0 if k == 3 else abs(natural[k])))
        up, down = natural.copy(), natural.copy()
        up[k] += h
        if k < 2 or natural[k] - h > 0.0:
            down[k] -= h  # central; one-sided at B = 0, where B cannot go lower
        J[:, k] = (model_natural(up) - model_natural(down)) / (up[k] - down[k])
    dof = t.size - natural.size
    cov = np.full((natural.size, natural.size), np.nan)
    keep = np.flatnonzero(np.any(J != 0.0, axis=0))  # eta does nothing when B = 0
    if dof > 0:
        Jk = J[:, keep]
        JtJ = Jk.T @ Jk
        d = np.sqrt(np.diag(JtJ))
        scaled = JtJ / np.outer(d, d)
        if np.linalg.cond(scaled) < 1e12:
            cov[np.ix_(keep, keep)] = np.linalg.inv(scaled) / np.outer(d, d) * (ssr / dof)

    def se(k):
        return float(np.sqrt(cov[k, k])) if np.isfinite(cov[k, k]) and cov[k, k] >= 0 else None

    names = ["offset", "amplitude", "consolidation_coefficient"] + (["creep_fraction", "creep_rate"] if test.creep
                                                                     else [])
    correlation = {}
    sd = np.sqrt(np.abs(np.diag(cov)))
    for i in range(2, len(names)):
        for j in range(i + 1, len(names)):
            if np.isfinite(cov[i, j]) and sd[i] > 0 and sd[j] > 0:
                correlation[f"{names[i]}:{names[j]}"] = float(cov[i, j] / (sd[i] * sd[j]))

    if test.quantity == "thickness":
        L0, L_inf = float(a), float(a + b)
        L0_se = se(0)
        var_inf = cov[0, 0] + cov[1, 1] + 2 * cov[0, 1]
    else:
        L0 = float(test.initial_thickness)
        L_inf = L0 - float(b) / test.area
        L0_se = None
        var_inf = cov[1, 1] / test.area**2
    L_inf_se = float(np.sqrt(var_inf)) if np.isfinite(var_inf) and var_inf >= 0 else None
    if not L_inf > omega:
        raise SolverInputError(
            "readings", f"the fitted equilibrium thickness, {L_inf * 1e3:.4g} mm, is not above the solids' own "
            f"thickness m_s/(rho_s A) = {omega * 1e3:.4g} mm: check the readings, the dry solids mass, the solids "
            "density and the area", also=("dry_solids_mass", "solids_density", "area"))
    if not L_inf < L0:  # the same as a porosity at equilibrium not below the start's (eps = 1 - omega / L)
        k = _off_trend(y)
        raise SolverInputError(
            f"readings.{k}.1", f"{_shown(y[k], test.quantity)} breaks the trend of the readings: fitted with it, the "
            f"cake would swell from {L0 * 1e3:.4g} mm at the start to {L_inf * 1e3:.4g} mm at equilibrium (porosity "
            f"{100 * porosity_of(L0 / omega - 1.0):.1f} % to {100 * porosity_of(L_inf / omega - 1.0):.1f} %), which no "
            "squeeze does; check this reading (a slipped decimal point?) and the readings' unit")
    e0, e_inf = L0 / omega - 1.0, L_inf / omega - 1.0
    eps_inf = float(porosity_of(e_inf))
    eps_se = omega / L_inf**2 * L_inf_se if L_inf_se is not None else None  # eps = 1 - omega/L
    rho_l, rho_s = test.liquid_density, test.solids_density
    moisture = eps_inf * rho_l / (eps_inf * rho_l + (1.0 - eps_inf) * rho_s)
    U_last = float(_ratio(np.array([t_end]), omega_d, Ce, B, eta)[0])

    warnings = []
    if U_last < 0.9:
        warnings.append(f"The test stopped at {100 * U_last:.0f} % of the squeeze the model expects: the equilibrium "
                        "thickness (and the final porosity) is extrapolated. A longer test pins it down.")
    if test.creep and (B < 1e-6 or B > 0.94):
        warnings.append(f"The creep fraction came out at the edge of its range (B = {B:.3g}): fit without creep, "
                        "or run the test longer.")
    if test.creep and eta * t_end < 1.0 and B > 1e-6:
        warnings.append("The creep is far from done at the last reading (eta t < 1): B and eta are uncertain.")
    if not -15.99 < best.x[0] < -0.01:
        warnings.append(f"The consolidation coefficient came out at the edge of the range searched (C_e = {Ce:.3g} "
                        "m²/s): the readings do not show a squeeze the model can follow.")
    if porosity_of(e0) > 0.95:
        warnings.append(f"The cake would be {100 * porosity_of(e0):.1f} % voids at the start of the squeeze: check the "
                        "readings' unit, the dry solids mass, the solids density and the area.")
    if np.isfinite(r2) and r2 < 0.98:
        warnings.append(f"The model fits the readings only to R² = {r2:.3f}: check the readings.")
    # a squeeze only ever thins the cake and expresses more liquid: readings that go back
    # beyond their noise are doubtful (thickness rising, or expressed liquid falling)
    backwards = np.diff(y) > 0.0 if test.quantity == "thickness" else np.diff(y) < 0.0
    # the readings' scatter, robustly (one bad reading must not hide itself)
    noise = 1.4826 * float(np.median(np.abs(residuals))) if residuals.size > 2 else 0.0
    steps = np.abs(np.diff(y))
    if np.any(backwards & (steps > 2.0 * noise)):
        k = int(np.argmax(backwards & (steps > 2.0 * noise))) + 1
        what = "thickness rises" if test.quantity == "thickness" else "expressed liquid falls"
        warnings.append(f"The {what} at reading {k + 1} (beyond the readings' scatter): a squeeze cannot do "
                        "that; check the readings.")
    loose = [name for name, k, value in (("C_e", 2, Ce), ("creep fraction", 3, B), ("creep rate", 4, eta))
             if (k < 3 or test.creep) and se(k) is not None and value > 0.0 and se(k) > 0.5 * value]
    if loose:
        warnings.append(f"The readings pin down {' and '.join(loose)} only loosely (standard error above half the "
                        "value): use these values with care, or repeat the test with more readings.")
    return SqueezeFit(
        consolidation_coefficient=float(Ce), consolidation_coefficient_stderr=se(2),
        creep_fraction=B, creep_fraction_stderr=se(3) if test.creep else None,
        creep_rate=float(eta), creep_rate_stderr=se(4) if test.creep else None,
        initial_thickness=L0, initial_thickness_stderr=L0_se, final_thickness=L_inf, final_thickness_stderr=L_inf_se,
        solids_thickness=omega, initial_void_ratio=e0, final_void_ratio=e_inf, initial_porosity=float(porosity_of(e0)),
        final_porosity=eps_inf, final_porosity_stderr=eps_se, final_moisture=float(moisture),
        offset=float(a), amplitude=float(b), r_squared=float(r2), residuals=residuals, fitted=fitted,
        consolidation_at_last=U_last, correlation=correlation, warnings=warnings,
    )
