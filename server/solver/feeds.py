"""Feed modes: how the press is fed, and the filtration curve t(V) that results.

A feed mode turns the cake and cloth (a :class:`Filtration`) and a filter area into a
filtration curve with time(V), volume(t), rate(V) and pressure(V), all vectorised.
A curve may also offer ``optimum_volume`` in closed form; the cycle optimiser falls
back to a global numeric search for curves that do not, on a grid that holds the curve's
``knots`` (stage starts, switch points, table nodes) where the throughput may change course.

To add a feed mode, write a dataclass with ``mode``, ``pressure_varies``, ``pressure_cap`` and a
``curve(filtration, filter_area, V_max)`` method returning an object with those four methods
(see DEVELOPERS.md). ``V_max`` is the
largest filtrate volume the cycle will ask about; closed-form curves ignore it.
"""

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.interpolate import PchipInterpolator

from . import constant_pressure as cp
from .cakebasis import CakeBasisPressureCurve
from .curves import GeneralisedInverse, TabulatedCurve, operating_point, volume_grid
from .errors import SolverInputError, in_bar, in_m3h
from .locallaws import TillerLeu
from .resistance import specific_resistance

PRESSURE_BASES = ("cake", "total")


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
    porosity : float or None
        Cake porosity [-], needed to wash by cake pore volumes.
    pressure_basis : str
        "total": alpha belongs to the whole pressure drop (the textbook shortcut); "cake":
        to the pressure across the cake, dp_c = dP - mu R_m q / A (Tiller). They differ only
        for a compressible cake behind a cloth with resistance.
    local : TillerLeu or None
        Local laws of the cake; alpha is then their cake average alpha_av(dp) and
        resistance_ref, reference_pressure and compressibility are not used.
    """

    solids_per_filtrate: float
    cake_volume_ratio: float
    wet_to_dry_ratio: float
    viscosity: float
    resistance_ref: float
    reference_pressure: float
    compressibility: float
    medium_resistance: float
    porosity: float | None = None
    pressure_basis: str = "total"
    local: TillerLeu | None = None

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
        if self.pressure_basis not in PRESSURE_BASES:
            raise SolverInputError("pressure_basis", f"must be 'cake' or 'total'; got {self.pressure_basis!r}")

    def specific_resistance(self, pressure):
        """alpha at a pressure drop across the cake (total basis: across cake and cloth) [m/kg]."""
        if self.local is not None:
            return self.local.average_resistance(pressure)
        return specific_resistance(
            self.resistance_ref, pressure, self.reference_pressure, self.compressibility
        )

    @property
    def incompressible(self) -> bool:
        """alpha does not depend on pressure."""
        return self.local.resistance_exponent == 0.0 if self.local is not None else self.compressibility == 0.0

    @property
    def on_cake_basis(self) -> bool:
        """The cake pressure basis changes the answer: a compressible cake behind a cloth."""
        return cake_basis_applies(self.pressure_basis, self.medium_resistance, self.incompressible)

    def cake_pressure(self, pressure, V, filter_area: float, steps: int = 64):
        r"""The pressure across the cake at a total pressure drop and filtrate volume [Pa].

        Solves :math:`\Delta p_c (1 + R_m A / (lpha(\Delta p_c) c V)) = \Delta P` (the cake's
        and the cloth's Darcy laws in series) by bisection on dp_c/dP, vectorised; the left
        side rises with dp_c because dp/alpha(p) does. On the total basis: dP itself.
        """
        P = np.asarray(pressure, dtype=float) * np.ones_like(np.asarray(V, dtype=float))
        if not self.on_cake_basis:
            return P
        V = np.asarray(V, dtype=float) * np.ones_like(P)
        if self.local is None:
            return self._cake_share_power_law(P, V, filter_area) * P
        c_V = self.solids_per_filtrate * V
        lo, hi = np.zeros_like(P), np.ones_like(P)
        cloth = self.medium_resistance * filter_area
        for _ in range(steps):
            mid = 0.5 * (lo + hi)
            with np.errstate(divide="ignore", invalid="ignore"):
                over = mid * (1.0 + cloth / (self.specific_resistance(mid * P) * c_V)) >= 1.0
            hi = np.where(over, mid, hi)
            lo = np.where(over, lo, mid)
        return 0.5 * (lo + hi) * P

    def _cake_share_power_law(self, P, V, filter_area: float):
        r"""dp_c/dP for alpha = alpha_ref (p/p_ref)^s, by Newton's method (vectorised).

        With a = alpha(dP) and k = R_m A / (a c V), the share phi = dp_c/dP solves
        :math:`\phi + k \phi^{1-s} = 1`. In x = phi^(1-s) this is x^p + k x = 1 with
        p = 1/(1-s) >= 1: convex and rising, so Newton's method from x = min(1, 1/k), where the
        left side is at least 1, falls to the root without overshooting.
        """
        s_ = self.compressibility
        a = self.specific_resistance(P)
        started = V > 0.0
        with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
            # no cake yet (V = 0): solved at V = 1 and set to 0 below, so every k is finite and > 0
            k = self.medium_resistance * filter_area / (a * self.solids_per_filtrate * np.where(started, V, 1.0))
            power = 1.0 / (1.0 - s_)
            x = np.minimum(1.0, 1.0 / k)  # > 0 and at or above the root: the steps fall to it
            for _ in range(CAKE_SHARE_STEPS):
                xp = x**power
                step = (xp + k * x - 1.0) / (power * xp / x + k)
                if not np.all(np.isfinite(step)):  # rare: k out of floating-point range, x = 0: held there
                    step = np.where(np.isfinite(step), step, 0.0)
                x = np.maximum(x - step, 0.0)
                if np.all(np.abs(step) <= 1e-15 * np.maximum(x, 1e-300)):
                    break
            phi = np.where(started, np.maximum(x, 0.0) ** power, 0.0)
        return phi

    def resistance_per_rate(self, pressure, V, filter_area: float):
        """dt/dV = mu (alpha c V / A + R_m)/(A dP) at a pressure drop and volume [s/m^3], alpha on
        this filtration's pressure basis."""
        alpha = self.specific_resistance(self.cake_pressure(pressure, V, filter_area))
        return (self.viscosity * (alpha * self.solids_per_filtrate * np.asarray(V, dtype=float) / filter_area
                                  + self.medium_resistance) / (filter_area * np.asarray(pressure, dtype=float)))


def cake_basis_applies(pressure_basis: str, medium_resistance: float, incompressible: bool) -> bool:
    """Whether the cake pressure basis changes the answer: a compressible cake behind a cloth
    (otherwise both bases give the same resistance and the closed forms hold)."""
    return pressure_basis == "cake" and medium_resistance > 0.0 and not incompressible


CAKE_SHARE_STEPS = 60  # at most; Newton's method on a convex function, usually under ten


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
        if isinstance(V, float):
            return self.pressure
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
    #: the feed pressure is one number: charts draw no pressure or flow against time
    pressure_varies = False

    def __post_init__(self):
        if not self.pressure > 0.0:
            raise SolverInputError("pressure", f"must be > 0 Pa; got {self.pressure:.6g}")

    @property
    def pressure_cap(self) -> float:
        return self.pressure

    def supply_flow(self, pressure):
        """Unlimited flow below the set pressure (used to test the general path)."""
        return np.full_like(np.asarray(pressure, dtype=float), np.inf)

    def curve(self, filtration: Filtration, filter_area: float, V_max: float = 0.0):
        if filtration.on_cake_basis:
            f = filtration
            if f.local is None:  # a power-law cake: closed form
                V0 = f.medium_resistance * filter_area / (f.specific_resistance(self.pressure) * f.solids_per_filtrate)
                B = f.viscosity * f.medium_resistance / (filter_area * self.pressure)
                return CakeBasisPressureCurve(self.pressure, V0, B, f.compressibility)
            return held_pressure_curve(filtration, filter_area, self.pressure, V_max)
        alpha = filtration.specific_resistance(self.pressure)
        K_p = cp.cake_constant(
            filtration.viscosity, alpha, filtration.solids_per_filtrate, filter_area, self.pressure
        )
        B = cp.medium_constant(
            filtration.viscosity, filtration.medium_resistance, filter_area, self.pressure
        )
        return ConstantPressureCurve(self.pressure, K_p, B)


class HeldPressureCurve(TabulatedCurve):
    """A held pressure on the cake pressure basis: 1/Q tabulated on a volume grid (a cake with
    local laws, and each step of a pressure-steps feed; a power-law cake at constant pressure has
    the closed form, :class:`CakeBasisPressureCurve`). The pressure is held from the start, so
    the throughput has one peak at most.

    ``convex``: the table's 1/Q is known to be convex in V (its nodes lie exactly on a convex
    1/Q, as :func:`held_pressure_curve` makes them for a power-law cake); the throughput's one
    peak is then found without looking at every segment (:meth:`peak_volumes`).
    """

    knots = np.empty(0)
    held_from = 0.0

    def __init__(self, V, pressure, flow=None, *, reciprocal_rate=None, convex: bool = False):
        super().__init__(V, pressure, flow, reciprocal_rate=reciprocal_rate)
        self.convex = convex

    @property
    def pressure(self) -> float:
        """The held pressure drop [Pa]."""
        return self.P.item(0)

    def pressure_at(self, V):
        """The held pressure drop at every volume [Pa]."""
        if isinstance(V, float) or np.ndim(V) == 0:
            return self.P.item(0)
        return np.full(np.shape(V), self.P.item(0))

    @property
    def optimum_volume(self):
        """``_optimum_volume`` when the table's throughput has a peak for certain: its 1/Q still
        rising at the end (the table continues its last segment, so the throughput falls
        beyond some volume) and finite. Otherwise None, and the cycle scans for the peak."""
        if self.has_peak:
            return self._optimum_volume
        return None

    def peak_volumes(self, downtime: float, wash_coefficient: float) -> np.ndarray:
        r"""Every local peak of a cycle's throughput on this table [m^3] (see
        :meth:`TabulatedCurve.peak_volumes`).

        On a convex table one peak at most, found from the nodes alone: with k non-decreasing
        from segment to segment, g = T - V dT/dV falls inside each segment (k >= 0) and at
        each node (by a V^2 times the rise of k), so the throughput rises up to the first node
        where g (with the next segment's slope) is <= 0 and falls after it; the peak is that
        node, or the root of the quadratic g on the segment before it, or on the continued
        last segment when g stays positive on the whole table. Tested against the general
        search in tests/solver/test_cake_basis_table.py.
        """
        if not self.convex:
            return super().peak_volumes(downtime, wash_coefficient)
        V, t, r, k = self.V, self.t, self.r, self.slope
        a, t_d = wash_coefficient, downtime
        # g - t_d at each node, with the slope of the segment that starts there: t - (r + a k V) V
        if a == 0.0:
            g = r * V
        else:
            g = k * V
            g *= a
            g += r
            g *= V
        np.subtract(t, g, out=g)
        falling = g[1:] <= -t_d  # g <= 0 (fl(g + t_d) <= 0 exactly when g <= -t_d)
        j = int(falling.argmax())  # the first such node is j + 1, where the peak's segment j ends
        found = bool(falling[j])
        if not found:
            j = V.size - 1  # g > 0 on the whole table: on the continued last segment
        Vj, kj, gj = V.item(j), k.item(j), g.item(j) + t_d
        if not (gj > 0.0 and kj > 0.0):  # not the regular shape (no downtime): every segment
            return super().peak_volumes(downtime, wash_coefficient)
        C1 = -kj * Vj * (1.0 + 2.0 * a)
        C2 = -kj * (0.5 + a)
        h = 2.0 * gj / (-C1 + np.sqrt(max(C1 * C1 - 4.0 * C2 * gj, 0.0)))
        if found:
            width = V.item(j + 1) - Vj
            if gj + (C1 + C2 * width) * width > 0.0:  # g still positive at the node: a kink
                return np.array([V.item(j + 1)])
            h = min(h, width)
        return np.array([Vj + h])

    def _optimum_volume(self, downtime: float, wash_coefficient: float) -> float:
        """The filtrate volume of the highest throughput of this tabulated curve, exactly: the
        highest of the table's local peaks (:meth:`TabulatedCurve.peak_volumes`; the first of
        equals). Tested against ``peak_scan`` in tests/solver/test_cake_basis.py."""
        candidates = self.peak_volumes(downtime, wash_coefficient)
        if candidates.size == 1:
            return candidates.item(0)
        a, t_d = wash_coefficient, downtime
        T = self.time(candidates) + a * candidates / self.rate(candidates) + t_d
        return float(candidates[int(np.argmax(candidates / T))])


#: Newton steps after the first (Halley's) step towards each grid volume near V_0, by
#: compressibility: the more compressible the cake, the sharper x^p turns near V = V_0 and the
#: further a fixed number of steps leaves the nodes from the grid there. Beyond s = 0.99, steps
#: on every node until they move no share by more than 1e-4 of itself.
CAKE_BASIS_NODE_STEPS = ((0.85, 1), (0.95, 2), (0.99, 3))
CAKE_BASIS_MAX_STEPS = 200
#: the grid volumes, as multiples of V_0, between which Halley's step alone leaves a node more
#: than about 1e-5 of its volume from the grid (its error grows as k^3 away from k = 1): the
#: Newton steps go only there. Measured with these (s up to 0.99, V_0 from 1e-7 to 60 times the
#: largest volume): no segment more than 1.09 times as long as the grid's (1.01 for s <= 0.6),
#: no node more than 0.25 % beyond its grid volume.
CAKE_BASIS_NEWTON_BAND = (0.1, 50.0)


def held_pressure_curve(filtration: Filtration, filter_area: float, pressure: float, V_max: float,
                        n: int = 2000) -> HeldPressureCurve:
    """The constant-pressure curve with alpha at the cake's pressure at each volume.

    A power-law cake's nodes are exact points of the curve, without an iteration to
    convergence (:func:`held_pressure_nodes`); local laws are solved on the usual grid.
    """
    V_max = V_max if V_max > 0.0 else 1.0
    if filtration.local is None and filtration.on_cake_basis:
        V, r = held_pressure_nodes(filtration, filter_area, pressure, V_max, n)
        return HeldPressureCurve(V, np.full_like(V, pressure), reciprocal_rate=r, convex=True)
    V = volume_grid(V_max, n)
    r = filtration.resistance_per_rate(pressure, V, filter_area)
    return HeldPressureCurve(V, np.full_like(V, pressure), reciprocal_rate=r)


def held_pressure_nodes(filtration: Filtration, filter_area: float, pressure: float, V_max: float,
                        n: int = 2000, safe: bool = False) -> tuple[np.ndarray, np.ndarray]:
    r"""Filtrate volumes [m^3] and 1/Q [s/m^3] exactly on the held-pressure curve of a power-law
    cake on the cake pressure basis, near the usual volume grid, from 0 to at least ``V_max``.

    With alpha = alpha_P (dp_c/dP)^s (alpha_P at the whole drop dP), the cake's share
    phi = dp_c/dP and the cloth's psi = 1 - phi split the rate between cake and cloth:
    phi/psi = alpha(dp_c) c V / (A R_m). So V is explicit in the share, and so is the rate:

    .. math:: V = V_0 \frac{x}{\psi},\quad x = \phi^{1-s},\quad V_0 = \frac{A R_m}{\alpha_P c},
              \qquad \frac{1}{Q} = \frac{\mu R_m}{A \Delta P \psi} = \frac{B}{\psi}

    (the cake's resistance alpha c V / A is R_m phi/psi). Each node takes an approximate share
    for its grid volume V_g, the root of f(x) = x^p + k x - 1, k = V_0/V_g, p = 1/(1-s): one
    step of Halley's method from x = min(1, 1/k), where f, f' and f'' are known in closed form,
    then, near V_0 where that is not yet close (``CAKE_BASIS_NEWTON_BAND``), a few Newton steps
    (``CAKE_BASIS_NODE_STEPS``). f is convex, so a Newton step ends at or above the root from
    anywhere; elsewhere Halley's step lands above it or below by 1e-10 of it at most
    (measured): each node lies at, or a little beyond, its grid volume. The node's V and 1/Q
    are then computed from that share exactly. At or below V_0 the share is carried as x
    (psi = -expm1(p ln x)), beyond it as u = 1 - x (psi = -expm1(p log1p(-u))), so neither
    share loses precision near 0 or 1. V rises with x, and the nodes are checked to rise: should
    one come out of order, unbounded or short of ``V_max`` (not seen), they are made again
    (``safe``) by Newton's method alone from x = min(1, 1/k), to 1e-4 of the share.

    1/Q is convex in V along the curve: dr/dV = (B/V_0) p x^(p-1) / (1 + (p-1) x^p), which
    rises with x for p >= 1 (derived here).
    """
    f = filtration
    s_ = f.compressibility
    p = 1.0 / (1.0 - s_)
    halley = 0.5 * p * (p - 1.0)  # f''/2 = halley x^p/x^2 in x, halley in u
    # None: until close
    steps = None if safe else next((n for top, n in CAKE_BASIS_NODE_STEPS if s_ <= top), None)
    V0 = f.medium_resistance * filter_area / (f.specific_resistance(pressure) * f.solids_per_filtrate)
    B = f.viscosity * f.medium_resistance / (filter_area * pressure)
    # at or beyond the grid volume to round-off: a hair more, so the last node reaches V_max
    grid = volume_grid(V_max * (1.0 + 1e-9), n)
    m = int(grid.searchsorted(V0, "right"))  # grid[1:m] <= V0 < grid[m:]
    # the Newton steps' nodes, grid[lo:hi] (every node when stepping until close)
    lo, hi = (1, grid.size) if steps is None else (
        max(int(grid.searchsorted(CAKE_BASIS_NEWTON_BAND[0] * V0)), 1),
        int(grid.searchsorted(CAKE_BASIS_NEWTON_BAND[1] * V0)))
    # the nodes' V and E = x^p - 1 = -psi (kept negative: V = V_0 x/psi = -V_0 x/E, 1/Q = -B/E)
    V, E = np.empty_like(grid), np.empty_like(grid)
    V[0], E[0] = 0.0, -1.0  # no cake yet: the cloth takes the whole drop
    with np.errstate(under="ignore", over="ignore", divide="ignore", invalid="ignore"):
        if m > 1:  # x from x = V/V_0 = 1/k: there f = x^p, f' = p x^p/x + k, f'' = p (p - 1) x^p/x^2
            x = grid[1:m] / V0
            k = V0 / grid[1:m]
            if not safe:
                xp = np.log(x)
                xp *= p
                np.exp(xp, out=xp)  # f = x^p
                a = xp / x
                a *= p  # f' - k
                d1 = a + k  # f'
                # Halley: x -= f / (f' - f f''/(2 f')), f f''/(2 f') = (p - 1)/(2 p) a^2/f';
                # f f''/(2 f'^2) < 1/2, so 0 < x < 1 after it
                a *= a
                a *= (p - 1.0) / (2.0 * p)
                a /= d1
                np.subtract(d1, a, out=a)
                np.divide(xp, a, out=a)
                x -= a
            if lo < m:
                _newton_share(x[lo - 1:], k[lo - 1:], p, steps)  # in place, on the views
            e = E[1:m]
            np.log(x, out=e)
            e *= p
            np.expm1(e, out=e)
            np.divide(x, e, out=V[1:m])  # x/E = -x/psi
        if m < grid.size:  # u = 1 - x from u = 0 (x = 1), where f = k, f' = -(p + k), f'' = p (p - 1)
            k = V0 / grid[m:]
            pk = k + p
            if safe:  # Newton's step
                u = k / pk
            else:  # Halley's step, k / (pk - halley k / pk): 0 < u < 2 k/(p + k) < 1
                u = k * halley
                u /= pk
                np.subtract(pk, u, out=u)
                np.divide(k, u, out=u)
            if hi > m:
                _newton_cloth_share(u[:hi - m], k[:hi - m], p, steps)
            e = E[m:]
            np.negative(u, out=e)
            np.log1p(e, out=e)
            e *= p
            np.expm1(e, out=e)
            np.subtract(1.0, u, out=u)  # x
            np.divide(u, e, out=V[m:])
        V *= -V0  # V_0 x/psi
        V[0] = 0.0
    r = -B / E  # B/psi
    if not (np.all(V[1:] > V[:-1]) and V[-1] >= V_max and np.isfinite(r[-1])):
        if not safe:
            return held_pressure_nodes(filtration, filter_area, pressure, V_max, n, safe=True)
        # only at the ends of floating-point range (a share rounding to 0 or 1): the nodes
        # that are finite and rise
        keep = np.flatnonzero(np.isfinite(V) & np.isfinite(r))
        Vk = V[keep]
        rises = np.concatenate(([True], Vk[1:] > np.maximum.accumulate(Vk)[:-1]))
        V, r = Vk[rises], r[keep][rises]
    return V, r


def _newton_share(x, k, p, steps):
    """Newton's method on x^p + k x = 1 in place: ``steps`` steps, or (None) until a step moves no
    x by more than 1e-4 of itself."""
    for _ in range(CAKE_BASIS_MAX_STEPS if steps is None else steps):
        xp = np.exp(p * np.log(x))
        step = (xp + k * x - 1.0) / (p * xp / x + k)
        x -= step
        if steps is None and not np.any(np.abs(step) > 1e-4 * x):
            break


def _newton_cloth_share(u, k, p, steps):
    """Newton's method on (1 - u)^p + k (1 - u) = 1 in place (u = 1 - x), as :func:`_newton_share`."""
    for _ in range(CAKE_BASIS_MAX_STEPS if steps is None else steps):
        w = 1.0 - u
        E = np.expm1(p * np.log1p(-u))  # x^p - 1
        step = (k * w + E) / (p * (E + 1.0) / w + k)
        u += step
        if steps is None and not np.any(np.abs(step) > 1e-4 * u):
            break


def kink_volume(filtration: Filtration, filter_area: float, pressure: float, flow: float) -> float:
    """Filtrate volume at which the cake and cloth pass ``flow`` at ``pressure`` [m^3] (< 0: never),
    on the filtration's pressure basis."""
    f = filtration
    if not flow > 0.0:
        return -1.0
    head = pressure / (f.viscosity * flow) - f.medium_resistance / filter_area  # = alpha c V / A^2
    if head <= 0.0:
        return -1.0
    cake_p = pressure - f.viscosity * f.medium_resistance * flow / filter_area if f.on_cake_basis else pressure
    return head * filter_area**2 / (f.specific_resistance(cake_p) * f.solids_per_filtrate)


def _constants(filtration: Filtration, filter_area: float, pressure):
    """K_p [s/m^6] and B [s/m^3] at a pressure drop (alpha at that pressure)."""
    alpha = filtration.specific_resistance(pressure)
    K_p = cp.cake_constant(filtration.viscosity, alpha, filtration.solids_per_filtrate, filter_area, pressure)
    B = cp.medium_constant(filtration.viscosity, filtration.medium_resistance, filter_area, pressure)
    return K_p, B


@dataclass(frozen=True)
class RateThenPressureCurve:
    r"""Constant rate Q_0 until the pressure reaches dP_max, then constant pressure.

    Switch volume and time, with K_p and B at dP_max:

    .. math:: V_1 = (1/Q_0 - B)/K_p = \frac{A^2}{\alpha c}\left(\frac{\Delta P_{max}}{\mu Q_0}
              - \frac{R_m}{A}\right),\quad t_1 = V_1 / Q_0

    then t = t_1 + (K_p/2)(V^2 - V_1^2) + B (V - V_1). The same holds for a compressible
    cake: during the constant-rate period the flow is fixed, and after it alpha is at dP_max.
    During the constant-rate period the pressure is the one at which the cake passes Q_0.
    """

    flow: float
    max_pressure: float
    K_p: float
    B: float
    V1: float
    filtration: Filtration
    filter_area: float

    @property
    def t1(self) -> float:
        return self.V1 / self.flow

    @property
    def knots(self) -> np.ndarray:
        """The switch from constant rate to constant pressure [m^3]."""
        return np.array([self.V1]) if self.V1 > 0.0 else np.empty(0)

    @property
    def held_from(self) -> float:
        """From here on the pressure is held: one more throughput peak at most [m^3]."""
        return max(self.V1, 0.0)

    def time(self, V):
        V = np.asarray(V, dtype=float)
        W = np.maximum(V - self.V1, 0.0)
        out = np.minimum(V, self.V1) / self.flow + 0.5 * self.K_p * W * (V + self.V1) + self.B * W
        return out if out.ndim else float(out)

    def volume(self, t):
        t = np.asarray(t, dtype=float)
        dt = np.maximum(t - self.t1, 0.0)
        b = 1.0 / self.flow if self.V1 > 0 else self.B
        W = 2.0 * dt / (b + np.sqrt(b * b + 2.0 * self.K_p * dt))
        out = np.where(t <= self.t1, self.flow * t, self.V1 + W)
        return out if out.ndim else float(out)

    def rate(self, V):
        out = np.minimum(self.flow, cp.reciprocal(self.K_p * np.asarray(V, dtype=float) + self.B))
        return out if np.ndim(out) else float(out)

    def pressure_at(self, V):
        V = np.asarray(V, dtype=float)
        supply = lambda p: np.full_like(p, self.flow)  # noqa: E731
        P, _ = operating_point(supply, self.max_pressure, V, self.filtration, self.filter_area)
        out = np.where(V >= self.V1, self.max_pressure, P)
        return out if out.ndim else float(out)


@dataclass(frozen=True)
class FlatSupply:
    """A supply that gives one flow at every pressure [m^3/s] (a positive-displacement pump)."""

    flow: float

    def __call__(self, pressure):
        return np.full_like(np.asarray(pressure, dtype=float), self.flow)

    def nodes(self, cap: float) -> tuple[np.ndarray, np.ndarray]:
        """(pressure, flow) nodes from 0 to ``cap`` [Pa]: one flat segment."""
        return np.array([0.0, float(cap)]), np.array([self.flow, self.flow])


@dataclass(frozen=True)
class ConstantRate:
    """A positive-displacement pump: a set flow up to a maximum pressure, then that pressure.

    Attributes
    ----------
    flow : float
        Set filtrate flow [m^3/s], > 0.
    max_pressure : float
        Relief or set pressure [Pa], > 0.
    """

    flow: float
    max_pressure: float
    mode = "constant_rate"
    #: the pressure rises as the cake builds: charts draw pressure and flow against time
    pressure_varies = True

    def __post_init__(self):
        if not self.flow > 0.0:
            raise SolverInputError("flow", f"must be > 0 m^3/s; got {self.flow:.6g}")
        if not self.max_pressure > 0.0:
            raise SolverInputError("max_pressure", f"must be > 0 Pa; got {self.max_pressure:.6g}")

    @property
    def pressure_cap(self) -> float:
        return self.max_pressure

    @property
    def supply_flow(self):
        """Q_supply(dP): the set flow at any pressure up to the cap (with nodes, so the operating
        point is solved exactly)."""
        return FlatSupply(self.flow)

    def clean_cloth_flow(self, filtration: Filtration, filter_area: float) -> float:
        """Flow the clean cloth alone passes at the maximum pressure [m^3/s] (inf: no cloth)."""
        _, B = _constants(filtration, filter_area, self.max_pressure)
        return np.inf if B == 0.0 else 1.0 / B

    def curve(self, filtration: Filtration, filter_area: float, V_max: float = 0.0):
        if filtration.on_cake_basis:
            return _supply_curve(self, filtration, filter_area, V_max if V_max > 0.0 else 1.0, 2000)
        K_p, B = _constants(filtration, filter_area, self.max_pressure)
        V1 = max((1.0 / self.flow - B) / K_p, 0.0)
        return RateThenPressureCurve(self.flow, self.max_pressure, K_p, B, V1, filtration, filter_area)

    def warnings(self, filtration: Filtration, filter_area: float) -> list[str]:
        q_clean = self.clean_cloth_flow(filtration, filter_area)
        if self.flow >= q_clean:
            return [
                f"The clean cloth alone passes only {q_clean * 3600:.4g} m³/h at the maximum pressure, "
                f"less than the set flow of {self.flow * 3600:.4g} m³/h: the cycle runs at the "
                f"maximum pressure from the start."
            ]
        return []


def _supply_curve(feed, filtration: Filtration, filter_area: float, V_max: float, n: int) -> TabulatedCurve:
    """Operating points on a volume grid, with a node at each volume where the operating
    point passes a kink of the supply: where it reaches its pressure cap, and where it leaves
    its highest flow (1/Q has a kink there, which a node keeps exact)."""
    V = volume_grid(V_max, n)
    pressures = [feed.pressure_cap, *getattr(feed, "kink_pressures", ())]
    for pressure in pressures:
        if not 0.0 < pressure <= feed.pressure_cap:
            continue
        V_kink = kink_volume(filtration, filter_area, pressure, float(feed.supply_flow(pressure)))
        if 0.0 < V_kink < V_max:
            i = int(np.searchsorted(V, V_kink))  # the grid is sorted: a node inserted, not a sort
            if V[i] != V_kink:
                V = np.concatenate((V[:i], (V_kink,), V[i:]))
    P, Q = operating_point(feed.supply_flow, feed.pressure_cap, V, filtration, filter_area)
    return TabulatedCurve(V, P, Q)


@dataclass(frozen=True)
class PumpCurve:
    """A centrifugal pump: pressure falls as flow rises along measured (flow, pressure) points.

    The points are joined by a monotone cubic (PCHIP: Fritsch & Carlson, SIAM J. Numer.
    Anal. 17 (1980) 238), which keeps a falling curve falling. Below the curve's lowest
    pressure the pump gives its highest listed flow; it never exceeds the curve's
    highest pressure (its lowest listed flow) nor ``max_pressure``.

    Attributes
    ----------
    points : tuple of (flow [m^3/s], pressure [Pa])
        At least two; pressure must not rise with flow.
    max_pressure : float or None
        Relief pressure [Pa].
    """

    points: tuple
    max_pressure: float | None = None
    grid_points: int = 2000
    mode = "pump_curve"
    #: the operating point moves along the curve: charts draw pressure and flow
    pressure_varies = True

    def __post_init__(self):
        pts = sorted((float(q), float(p)) for q, p in self.points)
        if len(pts) < 2:
            raise SolverInputError("points", "a pump curve needs at least two (flow, pressure) points")
        for i, (q, p) in enumerate(pts):
            if q < 0.0 or not p > 0.0:
                raise SolverInputError(
                    "points", f"flows must be >= 0 and pressures > 0; point {i + 1} is ({in_m3h(q)}, {in_bar(p)})"
                )
        for (q0, p0), (q1, p1) in zip(pts, pts[1:]):
            if q1 == q0:
                raise SolverInputError("points", f"two points have the same flow {in_m3h(q0)}")
            if p1 > p0:
                raise SolverInputError(
                    "points",
                    f"the pump curve rises from {in_bar(p0)} at {in_m3h(q0)} to {in_bar(p1)} at "
                    f"{in_m3h(q1)}: a centrifugal pump's pressure must fall (or stay) as flow rises",
                )
        if pts[-1][0] <= 0.0:
            raise SolverInputError("points", "the pump curve needs a point with flow > 0")
        if self.max_pressure is not None and not self.max_pressure > 0.0:
            raise SolverInputError("max_pressure", f"must be > 0 Pa; got {self.max_pressure:.6g}")
        object.__setattr__(self, "points", tuple(pts))
        object.__setattr__(self, "_supply", _pump_supply_table(tuple(pts)))

    @property
    def pressure_cap(self) -> float:
        top = self.points[0][1]
        return top if self.max_pressure is None else min(top, self.max_pressure)

    @property
    def kink_pressures(self) -> tuple:
        """Below its lowest listed pressure the pump gives its highest flow: a kink there [Pa]."""
        return (self.points[-1][1],)

    @property
    def supply_flow(self):
        """Q_supply(dP) [m^3/s]: a table with nodes, so the operating point is solved per segment."""
        return self._supply

    def curve(self, filtration: Filtration, filter_area: float, V_max: float = 1.0) -> TabulatedCurve:
        return _supply_curve(self, filtration, filter_area, V_max, self.grid_points)

    def warnings(self, filtration: Filtration, filter_area: float) -> list[str]:
        out = []
        q_max = self.points[-1][0]
        if cake_flow_at_start(filtration, filter_area, self.points[-1][1]) > q_max:
            out.append(
                f"At the start the press would take more than the pump curve's highest flow "
                f"({q_max * 3600:.4g} m³/h); the flow is taken as that until the cake builds up."
            )
        q_min, p_top = self.points[0]
        if q_min > 0.0 and (self.max_pressure is None or self.max_pressure >= p_top):
            out.append(
                f"The pump curve starts at {q_min * 3600:.4g} m³/h: below that flow the pump is taken to "
                f"hold its highest listed pressure, {p_top / 1e5:.4g} bar. Give the shut-off point (zero flow) "
                f"for a truer end of the cycle."
            )
        return out


@lru_cache(maxsize=64)
def _pump_supply_table(points: tuple) -> GeneralisedInverse:
    """Flow against pressure for a pump curve given as sorted (flow, pressure) points: the
    monotone cubic through them on a dense grid of flows, inverted (piecewise linear between
    the grid's points; kept: a scenario's curve comes back with every request about it)."""
    q = np.array([p[0] for p in points])
    P = np.array([p[1] for p in points])
    dense_q = np.unique(np.concatenate((q, np.linspace(q[0], q[-1], max(4 * q.size, 2000)))))
    dense_p = PchipInterpolator(q, P)(dense_q)
    return GeneralisedInverse(dense_q, np.minimum.accumulate(dense_p))


def cake_flow_at_start(filtration: Filtration, filter_area: float, pressure: float) -> float:
    """Flow the clean cloth passes at a pressure [m^3/s] (inf without cloth resistance)."""
    if filtration.medium_resistance == 0.0:
        return np.inf
    return pressure * filter_area / (filtration.viscosity * filtration.medium_resistance)


class _StepSchedule:
    """What every curve of pressure steps shares: the step of a volume, the knots and where
    the last step is held (``pressures`` and ``V_starts`` per step)."""

    def _step_of_volume(self, V):
        return np.clip(np.searchsorted(self.V_starts, V, side="right") - 1, 0, len(self.V_starts) - 1)

    @property
    def knots(self) -> np.ndarray:
        """Filtrate volumes at which each later stage starts [m^3]."""
        return self.V_starts[1:]

    @property
    def held_from(self) -> float:
        """The last stage's start: it is held, so one more throughput peak at most [m^3]."""
        return float(self.V_starts[-1])

    def pressure_at(self, V):
        out = self.pressures[self._step_of_volume(np.asarray(V, dtype=float))]
        return out if np.ndim(out) else float(out)


@dataclass(frozen=True)
class SteppedPressureCurve(_StepSchedule):
    """Constant pressure in steps; the last step is held. Closed form step by step."""

    pressures: np.ndarray  # Pa, per step
    starts: np.ndarray  # s, step start times
    V_starts: np.ndarray  # m^3 at each step start
    K_p: np.ndarray
    B: np.ndarray

    def time(self, V):
        V = np.asarray(V, dtype=float)
        i = self._step_of_volume(V)
        V0 = self.V_starts[i]
        out = self.starts[i] + 0.5 * self.K_p[i] * (V * V - V0 * V0) + self.B[i] * (V - V0)
        return out if out.ndim else float(out)

    def volume(self, t):
        t = np.asarray(t, dtype=float)
        i = np.clip(np.searchsorted(self.starts, t, side="right") - 1, 0, self.K_p.size - 1)
        V0, dt = self.V_starts[i], t - self.starts[i]
        b = self.K_p[i] * V0 + self.B[i]
        out = V0 + 2.0 * dt / (b + np.sqrt(b * b + 2.0 * self.K_p[i] * dt))
        return out if out.ndim else float(out)

    def rate(self, V):
        V = np.asarray(V, dtype=float)
        i = self._step_of_volume(V)
        return cp.reciprocal(self.K_p[i] * V + self.B[i])


@dataclass(frozen=True)
class PressureSteps:
    """A schedule of (pressure, duration) steps; the last step is held to the end.

    Attributes
    ----------
    steps : tuple of (pressure [Pa], duration [s])
        Pressures > 0, durations > 0 (the last step's duration is how long it is
        planned, but it is held for as long as the cycle needs).
    """

    steps: tuple
    mode = "pressure_steps"
    #: the pressure changes step by step: charts draw pressure and flow
    pressure_varies = True

    def __post_init__(self):
        if len(self.steps) < 1:
            raise SolverInputError("steps", "give at least one (pressure, duration) step")
        for i, (p, d) in enumerate(self.steps):
            if not p > 0.0:
                raise SolverInputError("steps", f"step {i + 1}: pressure must be > 0 Pa; got {p:.6g}")
            if not d > 0.0:
                raise SolverInputError("steps", f"step {i + 1}: duration must be > 0 s; got {d:.6g}")

    @property
    def pressure_cap(self) -> float:
        return max(p for p, _ in self.steps)

    def curve(self, filtration: Filtration, filter_area: float, V_max: float = 0.0):
        if filtration.on_cake_basis:
            return _cake_basis_steps(self.steps, filtration, filter_area, V_max)
        P = np.array([p for p, _ in self.steps], dtype=float)
        K_p, B = _constants(filtration, filter_area, P)
        K_p, B = np.atleast_1d(K_p).astype(float), np.atleast_1d(B * np.ones_like(P)).astype(float)
        starts, V_starts = [0.0], [0.0]
        for i, (_, duration) in enumerate(self.steps[:-1]):
            V0 = V_starts[-1]
            b = K_p[i] * V0 + B[i]
            V_starts.append(V0 + 2.0 * duration / (b + np.sqrt(b * b + 2.0 * K_p[i] * duration)))
            starts.append(starts[-1] + duration)
        return SteppedPressureCurve(P, np.array(starts), np.array(V_starts), K_p, B)


class SteppedCakeBasisCurve(_StepSchedule):
    """Pressure steps on the cake pressure basis: each step follows its own held-pressure curve
    (the rate depends only on the pressure and the filtrate volume), shifted in time."""

    def __init__(self, pressures, starts, V_starts, curves):
        self.pressures, self.starts, self.V_starts, self.curves = pressures, starts, V_starts, curves
        self._offsets = np.array([c.time(v) for c, v in zip(curves, V_starts)])

    @property
    def V_max(self) -> float:
        return min(c.V_max for c in self.curves)

    def _each(self, index, x, fn):
        x = np.asarray(x, dtype=float)
        if x.ndim == 0:
            return float(fn(int(index), x))
        out = np.empty_like(x, dtype=float)
        for i in np.unique(index):
            mask = index == i
            out[mask] = fn(i, x[mask])
        return out if out.ndim else float(out)

    def time(self, V):
        V = np.asarray(V, dtype=float)
        return self._each(self._step_of_volume(V), V,
                          lambda i, v: self.starts[i] + self.curves[i].time(v) - self._offsets[i])

    def volume(self, t):
        t = np.asarray(t, dtype=float)
        i = np.clip(np.searchsorted(self.starts, t, side="right") - 1, 0, len(self.curves) - 1)
        return self._each(i, t, lambda k, x: self.curves[k].volume(x - self.starts[k] + self._offsets[k]))

    def rate(self, V):
        V = np.asarray(V, dtype=float)
        return self._each(self._step_of_volume(V), V, lambda i, v: self.curves[i].rate(v))


def _cake_basis_steps(steps, filtration: Filtration, filter_area: float, V_max: float) -> SteppedCakeBasisCurve:
    V_max = V_max if V_max > 0.0 else 1.0
    P = np.array([p for p, _ in steps], dtype=float)
    curves = [held_pressure_curve(filtration, filter_area, float(p), V_max) for p in P]
    starts, V_starts = [0.0], [0.0]
    for i, (_, duration) in enumerate(steps[:-1]):
        c = curves[i]
        V_starts.append(float(c.volume(c.time(V_starts[-1]) + duration)))
        starts.append(starts[-1] + duration)
    return SteppedCakeBasisCurve(P, np.array(starts), np.array(V_starts), curves)
