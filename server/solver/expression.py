"""Membrane squeeze (expression): Terzaghi–Voigt consolidation of the cake.

The average consolidation ratio after a squeeze of duration t (Shirato, Murase, Iritani and
co-workers' expression model; Wakeman & Tarleton, Solid/Liquid Separation, the chapter on
expression):

    U_c = (1 - B) U_T(T_c) + B (1 - exp(-eta t)),     T_c = C_e t / omega^2

U_T is Terzaghi's average degree of consolidation of a layer drained on one face, omega the
cake's solids volume per unit filter area (per face of a chamber, as the filter area counts
both faces), C_e the modified consolidation coefficient [m^2/s], B the creep (secondary
consolidation) share and eta its rate [1/s]. The cake's void ratio falls from its value after
filtration to its equilibrium value at the squeeze pressure in proportion to U_c.

U_T is evaluated exactly: by its Fourier series for T >= 0.2 (a few terms) and by the
equivalent image (complementary error function) series for small T, where the Fourier series
converges slowly. Both are exact; tests check them against each other, against tabulated
values and against a finite-difference solution of the consolidation equation.
"""

from dataclasses import dataclass

import numpy as np
from scipy.special import erfc

from .errors import SolverInputError

#: Below this time factor U_T comes from the image series (fast there), above from Fourier.
_SWITCH_T = 0.2
_SQRT_PI = np.sqrt(np.pi)


def _ierfc(x):
    """The integral of erfc from x to infinity: exp(-x^2)/sqrt(pi) - x erfc(x)."""
    return np.exp(-x * x) / _SQRT_PI - x * erfc(x)


def terzaghi_average(T):
    r"""Terzaghi's average degree of consolidation U_T(T) [-], vectorised; U_T(0) = 0.

    .. math:: U_T = 1 - \sum_{m\ge0} \frac{2}{M^2} e^{-M^2 T},\quad M = \tfrac{\pi}{2}(2m+1)

    and for small T the same function as
    :math:`U_T = 2\sqrt{T}\,[1/\sqrt\pi + 2\sum_{k\ge1} (-1)^k \mathrm{ierfc}(k/\sqrt T)]`.
    """
    T = np.asarray(T, dtype=float)
    out = np.empty_like(T)
    small = T < _SWITCH_T
    if np.any(small):
        Ts = np.maximum(T[small], 0.0)
        r = np.sqrt(Ts)
        with np.errstate(divide="ignore", invalid="ignore"):
            s = np.zeros_like(Ts)
            for k in range(1, 8):  # ierfc(k / sqrt(0.2)) < 1e-40 by k = 7
                s += (-1) ** k * np.where(r > 0, _ierfc(k / np.where(r > 0, r, 1.0)), 0.0)
        out[small] = 2.0 * r * (1.0 / _SQRT_PI + 2.0 * s)
    big = ~small
    if np.any(big):
        Tb = T[big]
        s = np.zeros_like(Tb)
        for m in range(12):  # exp(-M^2 0.2) < 1e-17 from m = 12 on
            M = 0.5 * np.pi * (2 * m + 1)
            s += 2.0 / (M * M) * np.exp(-M * M * Tb)
        out[big] = 1.0 - s
    return out if out.ndim else float(out)


def terzaghi_rate(T):
    """dU_T/dT [-], vectorised (T > 0): the Fourier series' derivative, or for small T
    (1 + 2 sum_k (-1)^k exp(-k^2/T)) / sqrt(pi T)."""
    T = np.asarray(T, dtype=float)
    out = np.empty_like(T)
    small = T < _SWITCH_T
    if np.any(small):
        Ts = T[small]
        s = np.ones_like(Ts)
        for k in range(1, 8):
            s += 2.0 * (-1) ** k * np.exp(-k * k / Ts)
        out[small] = s / np.sqrt(np.pi * Ts)
    big = ~small
    if np.any(big):
        Tb = T[big]
        s = np.zeros_like(Tb)
        for m in range(12):
            M = 0.5 * np.pi * (2 * m + 1)
            s += 2.0 * np.exp(-M * M * Tb)
        out[big] = s
    return out


def _invert_increasing(g, dg, target, lo, hi, x0, iterations=60):
    """x in [lo, hi] (log scale, arrays) with g(exp(x)) = target for an increasing g:
    Newton's steps in log x from x0, a bisection step whenever Newton would leave the bracket."""
    x = np.clip(x0, lo, hi)
    for _ in range(iterations):
        t = np.exp(x)
        r = g(t) - target
        lo, hi = np.where(r < 0, x, lo), np.where(r < 0, hi, x)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            step = x - r / (dg(t) * t)
        inside = np.isfinite(step) & (step >= lo) & (step <= hi)
        new = np.where(inside, step, 0.5 * (lo + hi))
        if np.all(np.abs(new - x) <= 1e-13 * np.maximum(1.0, np.abs(x))):
            x = new
            break
        x = new
    return np.exp(x)


def terzaghi_time_factor(U):
    """The time factor T at which U_T(T) = U, for 0 <= U < 1 (vectorised; safeguarded
    Newton steps on log T from the standard approximations, to double precision)."""
    U = np.asarray(U, dtype=float)
    if not np.all((U >= 0.0) & (U < 1.0)):  # NaN fails too
        raise SolverInputError("consolidation", "must be at least 0 and below 1")
    Up = np.where(U > 0.0, U, 0.5)
    # start: U = sqrt(4T/pi) below U = 0.6, the series' first term above (both near exact)
    with np.errstate(divide="ignore", invalid="ignore"):
        x0 = np.where(Up < 0.6, np.log(np.pi * Up * Up / 4.0),
                      np.log(-4.0 / np.pi ** 2 * np.log(np.maximum((1.0 - Up) * np.pi ** 2 / 8.0, 1e-300))))
    T = _invert_increasing(terzaghi_average, terzaghi_rate, Up, np.full(U.shape, np.log(1e-300)),
                           np.full(U.shape, np.log(1e3)), x0)
    out = np.where(U == 0.0, 0.0, T)
    return out if out.ndim else float(out)


@dataclass(frozen=True)
class Squeeze:
    """A membrane squeeze (all SI).

    Attributes
    ----------
    pressure : float
        Squeeze (membrane) pressure [Pa].
    consolidation_coefficient : float
        C_e [m^2/s].
    final_void_ratio : float
        The cake's equilibrium void ratio under the squeeze pressure [-].
    time, consolidation : float or None
        The squeeze's duration [s], or the consolidation ratio it runs to (0-1); neither:
        the whole-cycle optimum chooses it (under a moisture specification), or no squeeze.
    creep_fraction, creep_rate : float
        B [-] and eta [1/s].
    """

    pressure: float
    consolidation_coefficient: float
    final_void_ratio: float
    time: float | None = None
    consolidation: float | None = None
    creep_fraction: float = 0.0
    creep_rate: float = 0.0

    def __post_init__(self):
        for name in ("pressure", "consolidation_coefficient"):
            if not getattr(self, name) > 0.0:
                raise SolverInputError(name, f"must be > 0; got {getattr(self, name):.6g}")
        if not self.final_void_ratio > 0.0:
            raise SolverInputError("final_porosity", "the squeezed cake's porosity must be above 0")
        if self.time is not None and self.consolidation is not None:
            raise SolverInputError("time", "give time or consolidation, not both")
        if self.time is not None and not self.time > 0.0:
            raise SolverInputError("time", f"must be > 0 s; got {self.time:.6g}")
        if self.consolidation is not None and not 0.0 < self.consolidation < 1.0:
            raise SolverInputError("consolidation",
                                   f"must be between 0 and 1 (exclusive); got {self.consolidation:.6g}")
        if not 0.0 <= self.creep_fraction < 1.0:
            raise SolverInputError("creep_fraction", f"must be at least 0 and below 1; got {self.creep_fraction:.6g}")
        if self.creep_fraction > 0.0 and not self.creep_rate > 0.0:
            raise SolverInputError("creep_rate", "a creep fraction above 0 needs a creep rate above 0 (1/s)")

    @property
    def free(self) -> bool:
        """Neither time nor consolidation given: the optimum chooses the squeeze's duration."""
        return self.time is None and self.consolidation is None

    def ratio(self, t, omega):
        """Average consolidation ratio U_c after a squeeze of t [s] of a cake with omega [m]
        of solids volume per unit area, vectorised."""
        t = np.asarray(t, dtype=float)
        omega = np.asarray(omega, dtype=float)
        U = terzaghi_average(self.consolidation_coefficient * t / (omega * omega))
        B = self.creep_fraction
        if B > 0.0:
            U = (1.0 - B) * U + B * (1.0 - np.exp(-self.creep_rate * t))
        return U

    def time_for(self, U, omega):
        """Squeeze time [s] to reach consolidation ratio U (0 <= U < 1), vectorised.

        Without creep T_c is inverted directly; with creep U_c(t) rises monotonically and a
        bisection on log t finds it to double precision.
        """
        U = np.asarray(U, dtype=float)
        omega = np.asarray(omega, dtype=float)
        scale = omega * omega / self.consolidation_coefficient  # s per unit time factor
        if self.creep_fraction == 0.0:
            if U.size > 1 and np.all(U == U.flat[0]):  # one ratio for every cake: invert once
                return terzaghi_time_factor(float(U.flat[0])) * scale * np.ones_like(U)
            return terzaghi_time_factor(U) * scale
        if not np.all((U >= 0.0) & (U < 1.0)):  # NaN fails too
            raise SolverInputError("consolidation", "must be at least 0 and below 1")
        U, scale = np.broadcast_arrays(U, scale)
        B, eta = self.creep_fraction, self.creep_rate

        def g(t):
            return (1.0 - B) * terzaghi_average(t / scale) + B * (1.0 - np.exp(-eta * t))

        def dg(t):
            return (1.0 - B) * terzaghi_rate(t / scale) / scale + B * eta * np.exp(-eta * t)

        # the bracket: from far below either part's time scale to past both
        lo = np.log(np.minimum(scale, 1.0 / eta) * 1e-30)
        hi = np.log(np.maximum(scale * 1e3, 50.0 / eta))
        Up = np.where(U > 0.0, U, 0.5)
        x0 = np.log(terzaghi_time_factor(np.minimum(Up, 0.999)) * scale)
        t = _invert_increasing(g, dg, Up, lo, hi, x0, iterations=100)
        out = np.where(U == 0.0, 0.0, t)
        return out if out.ndim else float(out)


def void_ratio(porosity):
    """e = eps / (1 - eps)."""
    return porosity / (1.0 - porosity)


def porosity_of(e):
    """eps = e / (1 + e)."""
    return e / (1.0 + e)
