"""Local laws of a compressible cake (Tiller & Leu) and the cake averages they give.

A compression-permeability cell measures, at each effective solids pressure p_s, the local
specific resistance and the solidosity (solids volume fraction) of a thin cake. Tiller and
Leu's laws fit both with one stress scale p_a:

    alpha(p_s) = alpha_0 (1 + p_s/p_a)^n,        eps_s(p_s) = eps_s0 (1 + p_s/p_a)^beta

In a filtering cake p_s runs from 0 at the cake's face to dp_c at the cloth, and the mass of
solids per area between two stresses is dw = dp_s / alpha (Darcy). Averaged over the cake:

    alpha_av = dp_c / int_0^dp_c dp_s/alpha(p_s)
    eps_s,av = int_0^dp_c dp_s/alpha / int_0^dp_c dp_s/(alpha eps_s)

(the second is solids volume over cake volume: w/rho_s over int dw/(rho_s eps_s)). Both
integrals are closed form: int_0^X (1 + x)^(-k) dx = ((1 + X)^(1-k) - 1)/(1 - k), ln(1 + X)
at k = 1.

References: Tiller, F. M. & Leu, W. F., "Basic data fitting in filtration", J. Chin. Inst.
Chem. Eng. 11 (1980) 61-70; Wakeman & Tarleton, Solid/Liquid Separation: Principles of
Industrial Filtration (2005), ch. on compressible cakes; Svarovsky (ed.), Solid-Liquid
Separation, 4th ed., ch. 9.
"""

from dataclasses import dataclass

import numpy as np

from .errors import SolverInputError


def power_integral(X, k: float):
    r""":math:`\int_0^X (1 + x)^{-k} dx` for X >= 0, without cancellation at small X.

    >>> round(float(power_integral(50.0, 0.5)), 6)  # 2 (sqrt(51) - 1)
    12.282857
    >>> round(float(power_integral(1.0, 1.0)), 6)  # ln 2
    0.693147
    """
    X = np.asarray(X, dtype=float)
    lg = np.log1p(X)
    e = 1.0 - k
    out = lg if e == 0.0 else np.expm1(e * lg) / e
    return out if out.ndim else float(out)


@dataclass(frozen=True)
class TillerLeu:
    """Tiller and Leu's local laws of a cake (all SI).

    Attributes
    ----------
    resistance_at_zero_stress : float
        alpha_0 [m/kg], > 0.
    resistance_exponent : float
        n [-], 0 <= n < 2.
    solidosity_at_zero_stress : float
        eps_s0, solids volume fraction at no stress [-], 0 < eps_s0 < 1.
    solidosity_exponent : float
        beta [-], 0 <= beta < 1.
    stress_scale : float
        p_a [Pa], > 0.
    """

    resistance_at_zero_stress: float
    resistance_exponent: float
    solidosity_at_zero_stress: float
    solidosity_exponent: float
    stress_scale: float

    def __post_init__(self):
        checks = (
            ("resistance_at_zero_stress", self.resistance_at_zero_stress > 0.0, "must be > 0 m/kg"),
            ("resistance_exponent", 0.0 <= self.resistance_exponent < 2.0, "must be at least 0 and below 2"),
            ("solidosity_at_zero_stress", 0.0 < self.solidosity_at_zero_stress < 1.0, "must be above 0 and below 1"),
            ("solidosity_exponent", 0.0 <= self.solidosity_exponent < 1.0, "must be at least 0 and below 1"),
            ("stress_scale", self.stress_scale > 0.0, "must be > 0 Pa"),
        )
        for name, ok, rule in checks:
            if not ok:
                raise SolverInputError(name, f"{rule}; got {getattr(self, name):.6g}")

    def local_resistance(self, stress):
        """alpha(p_s) [m/kg] at an effective solids pressure [Pa]."""
        X = 1.0 + np.asarray(stress, dtype=float) / self.stress_scale
        return self.resistance_at_zero_stress * X**self.resistance_exponent

    def local_solidosity(self, stress):
        """eps_s(p_s) [-] at an effective solids pressure [Pa]."""
        X = 1.0 + np.asarray(stress, dtype=float) / self.stress_scale
        return self.solidosity_at_zero_stress * X**self.solidosity_exponent

    def average_resistance(self, cake_pressure):
        r"""Average specific resistance of a cake across which dp_c falls [m/kg].

        .. math:: \alpha_{av} = \Delta p_c \Big/ \int_0^{\Delta p_c} dp_s/\alpha(p_s)
                  = \alpha_0 \frac{X}{\int_0^X (1+x)^{-n} dx},\quad X = \Delta p_c / p_a

        Examples
        --------
        >>> law = TillerLeu(1e11, 0.5, 0.3, 0.1, 1e4)
        >>> round(float(law.average_resistance(5e5)) / 1e11, 4)
        4.0707
        """
        X = np.maximum(np.asarray(cake_pressure, dtype=float) / self.stress_scale, 1e-300)
        out = self.resistance_at_zero_stress * X / power_integral(X, self.resistance_exponent)
        return out if np.ndim(out) else float(out)

    def average_solidosity(self, cake_pressure):
        r"""Average solidosity of a cake across which dp_c falls [-].

        .. math:: \varepsilon_{s,av} = \int_0^{\Delta p_c} \frac{dp_s}{\alpha} \Big/
                  \int_0^{\Delta p_c} \frac{dp_s}{\alpha \varepsilon_s}
        """
        X = np.maximum(np.asarray(cake_pressure, dtype=float) / self.stress_scale, 1e-300)
        n, b = self.resistance_exponent, self.solidosity_exponent
        out = self.solidosity_at_zero_stress * power_integral(X, n) / power_integral(X, n + b)
        return out if np.ndim(out) else float(out)


@dataclass(frozen=True)
class LocalLawFit:
    law: TillerLeu
    stderrs: dict  # per parameter name [its unit]
    residuals_resistance: np.ndarray  # ln(measured/fitted)
    residuals_solidosity: np.ndarray


def fit_tiller_leu(stress, resistance, solidosity) -> LocalLawFit:
    """Fit Tiller and Leu's laws to compression-permeability data (one p_a for both).

    For a given p_a both laws are straight lines in ln(1 + p_s/p_a); p_a is chosen to make the
    sum of squared log residuals of both least (a scan over 1 Pa to 1e8 Pa, then Brent's
    method). Standard errors are those of the two lines at that p_a, and of p_a from the
    curvature of the sum of squares.
    """
    from scipy.optimize import minimize_scalar

    p = np.asarray(stress, dtype=float)
    a = np.asarray(resistance, dtype=float)
    e = np.asarray(solidosity, dtype=float)
    if not (p.size == a.size == e.size) or p.size < 4:
        raise SolverInputError("points", "give at least 4 rows of stress, resistance and solidosity")
    if np.any(p < 0) or np.any(a <= 0) or np.any((e <= 0) | (e >= 1)):
        raise SolverInputError("points", "stresses must be >= 0, resistances > 0 and solidosities between 0 and 1")
    if np.unique(p).size < 3:
        raise SolverInputError("points", "the laws need at least 3 different stresses")
    la, le = np.log(a), np.log(e)

    def lines(log_pa):
        x = np.log1p(p / np.exp(log_pa))
        X = np.column_stack((np.ones(p.size), x))
        ca, ra = np.linalg.lstsq(X, la, rcond=None)[:2]
        ce, re = np.linalg.lstsq(X, le, rcond=None)[:2]
        sa = float(((la - X @ ca) ** 2).sum())
        se = float(((le - X @ ce) ** 2).sum())
        return ca, ce, sa, se, X

    def sse(log_pa):
        _, _, sa, se, _ = lines(log_pa)
        return sa / max(np.var(la), 1e-30) + se / max(np.var(le), 1e-30)

    grid = np.linspace(np.log(1.0), np.log(1e8), 161)
    values = [sse(g) for g in grid]
    i = int(np.argmin(values))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    best = minimize_scalar(sse, bounds=(lo, hi), method="bounded", options={"xatol": 1e-6}).x if hi > lo else grid[i]
    ca, ce, sa, se_, X = lines(best)
    dof = p.size - 2
    XtX_inv = np.linalg.pinv(X.T @ X)
    var_a, var_e = sa / dof * np.diag(XtX_inv), se_ / dof * np.diag(XtX_inv)
    law = TillerLeu(float(np.exp(ca[0])), float(max(ca[1], 0.0)), float(np.exp(ce[0])),
                    float(min(max(ce[1], 0.0), 0.999)), float(np.exp(best)))
    stderrs = {
        "resistance_at_zero_stress": float(law.resistance_at_zero_stress * np.sqrt(var_a[0])),
        "resistance_exponent": float(np.sqrt(var_a[1])),
        "solidosity_at_zero_stress": float(law.solidosity_at_zero_stress * np.sqrt(var_e[0])),
        "solidosity_exponent": float(np.sqrt(var_e[1])),
    }
    fitted_a = X @ ca
    fitted_e = X @ ce
    return LocalLawFit(law, stderrs, la - fitted_a, le - fitted_e)
