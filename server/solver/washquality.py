"""Washing quality: solute removed by a displacement wash of W cake pore volumes.

Two models (Wakeman & Tarleton, Solid/Liquid Separation; Svarovsky, Solid-Liquid
Separation, the chapters on cake washing; Perry's Chemical Engineers' Handbook):

- axial dispersion: the washate's reduced exit concentration for a step change at the cake
  face of a semi-infinite bed (the Ogata–Banks solution of the advection–dispersion
  equation, evaluated at the cake's exit face), with the dispersion number D_n = u L / D_L:

      c_R(W) = 1 - 1/2 [erfc((1 - W) / (2 sqrt(W/D_n))) + exp(D_n) erfc((1 + W) / (2 sqrt(W/D_n)))]

  and the fraction of solute removed F(W) = integral of c_R from 0 to W. Plug flow
  (D_n -> infinity) removes everything at W = 1.
- wash efficiency E (Choudhury & Dahlstrom's stage-wise rule): the fraction remaining after
  N pore volumes is (1 - E)^N, never below what plug flow leaves (1 - N for N < 1: a wash
  carries out at most its own volume of liquor).
"""

from dataclasses import dataclass

import numpy as np
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import erfc, erfcx

from .errors import SolverInputError

WASH_MODELS = ("dispersion", "efficiency")


def exit_concentration(W, dispersion_number: float):
    """Reduced washate concentration c_R = (c - c_wash) / (c_0 - c_wash) at the cake's exit
    face after W pore volumes of wash [-], vectorised over W (c_R(0) = 1)."""
    W = np.asarray(W, dtype=float)
    Dn = float(dispersion_number)
    with np.errstate(divide="ignore", invalid="ignore"):
        Wp = np.where(W > 0.0, W, 1.0)
        root = np.sqrt(Dn / Wp) / 2.0
        a = (1.0 - Wp) * root
        b = (1.0 + Wp) * root
        # exp(D_n) erfc(b) without overflow: exp(D_n - b^2) erfcx(b), D_n - b^2 <= 0
        tail = np.exp(Dn - b * b) * erfcx(b)
        c = 1.0 - 0.5 * (erfc(a) + tail)
    out = np.where(W > 0.0, np.clip(c, 0.0, 1.0), 1.0)  # clip: rounding only, c_R is in [0, 1]
    return out if out.ndim else float(out)


@dataclass(frozen=True)
class WashModel:
    """How a wash of W pore volumes removes the solute of the cake liquor.

    model "dispersion" (needs ``dispersion_number`` D_n > 0) or "efficiency" (needs
    ``efficiency`` E, 0 < E < 1).
    """

    model: str
    dispersion_number: float | None = None
    efficiency: float | None = None

    def __post_init__(self):
        if self.model not in WASH_MODELS:
            raise SolverInputError("model", f"must be one of {', '.join(WASH_MODELS)}; got {self.model!r}")
        if self.model == "dispersion":
            if self.dispersion_number is None or not 0.0 < self.dispersion_number <= 1e4:
                raise SolverInputError("dispersion_number", "the dispersion model needs a dispersion number "
                                       "between 0 and 10,000 (exclusive of 0)")
        elif self.efficiency is None or not 0.0 < self.efficiency < 1.0:
            raise SolverInputError("efficiency", "the efficiency model needs a wash efficiency between 0 and 1 "
                                   "(exclusive)")

    def removal(self, W):
        """Fraction of the solute removed after W pore volumes [-], vectorised over W."""
        W = np.asarray(W, dtype=float)
        if self.model == "efficiency":
            # never more than plug flow carries out (W pore volumes remove at most W of it)
            out = np.minimum(1.0 - (1.0 - self.efficiency) ** W, W)
        else:
            out = np.vectorize(self._dispersion_removal, otypes=[float])(W)
        return out if out.ndim else float(out)

    def _dispersion_removal(self, W: float) -> float:
        if W <= 0.0:
            return 0.0
        Dn = self.dispersion_number
        # c_R changes fastest near W = 1 over a width ~ 1/sqrt(D_n): tell the integrator; and
        # break at every doubling of W, or a long last interval steps over the tail of c_R
        edges = {1.0 - 4.0 / np.sqrt(Dn), 1.0, 1.0 + 4.0 / np.sqrt(Dn), *(2.0 ** np.arange(1, 15))}
        points = sorted(float(p) for p in edges if 0.0 < p < W)
        value, _ = quad(exit_concentration, 0.0, W, args=(Dn,), points=points or None, limit=200,
                        epsabs=1e-13, epsrel=1e-12)
        return min(value, 1.0)

    def wash_ratio_for(self, removal: float, field: str = "solute_removal") -> float:
        """Pore volumes W that remove the fraction ``removal`` (0 < removal < 1) [-]."""
        if not 0.0 < removal < 1.0:
            raise SolverInputError(field, f"must be between 0 and 1 (exclusive); got {removal:.6g}")
        if self.model == "efficiency":
            # the rule, or plug flow where the rule would remove more than the wash carries
            return float(max(np.log1p(-removal) / np.log1p(-self.efficiency), removal))
        hi = 2.0
        while self._dispersion_removal(hi) < removal:
            hi *= 2.0
            if hi > 1e4:
                raise SolverInputError(field, f"a removal of {removal:.6g} needs more than 10,000 pore volumes")
        return float(brentq(lambda W: self._dispersion_removal(W) - removal, 0.0, hi, xtol=1e-14, rtol=1e-13))

    def profile(self, W_max: float, n: int = 121) -> dict:
        """Washate concentration and solute removed against wash ratio, 0..W_max (chart)."""
        W = np.linspace(0.0, W_max, n)
        if self.model == "efficiency":
            # the stage-wise rule's washate: the rate of removal, c_R = -ln(1-E) (1-E)^W
            c = -np.log1p(-self.efficiency) * (1.0 - self.efficiency) ** W
            c = np.where(1.0 - (1.0 - self.efficiency) ** W > W, 1.0, np.minimum(c, 1.0))  # plug flow's bound
        else:
            c = exit_concentration(W, self.dispersion_number)
        return {"wash_ratio": W, "concentration": np.asarray(c, dtype=float), "removal": self.removal(W)}
