"""Filtration curves t(V) for feeds whose pressure changes during filtration.

Rate equation (Ruth) with the pressure at each instant, for compressible cakes too:

    Q = dV/dt = dP / (mu (alpha(dP) c V / A^2 + R_m / A))          (the cake's side)
    Q = Q_supply(dP)                                               (the feed's side)

For each filtrate volume on a grid the operating pressure is found by a monotone root
find vectorised over the grid (the cake passes more flow at higher pressure, the supply
gives less), and t(V) is the quadrature of 1/Q over V: piecewise-linear 1/Q integrated
exactly, so a curve whose 1/Q is linear in V (any constant-pressure stretch) is exact.

References: Svarovsky (ed.), Solid-Liquid Separation, and Wakeman & Tarleton,
Solid/Liquid Separation: Principles of Industrial Filtration, chapters on pump-fed
filtration (the supply/cake-resistance construction; from memory).
"""

from bisect import bisect_left
from functools import lru_cache

import numpy as np

BISECTION_STEPS = 48  # brackets the pressure to 2^-48 of the cap


def cake_flow(pressure, V, filtration, filter_area):
    """Flow the cake and cloth pass at a pressure drop after V of filtrate [m^3/s].

    Increasing in pressure for 0 <= s < 1. Infinite at V = 0 with no cloth resistance.
    """
    f = filtration
    if f.on_cake_basis:
        with np.errstate(divide="ignore"):
            return 1.0 / f.resistance_per_rate(pressure, V, filter_area)
    resistance = (
        f.specific_resistance(pressure) * f.solids_per_filtrate * V / filter_area**2
        + f.medium_resistance / filter_area
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(resistance > 0.0, pressure / (f.viscosity * resistance), np.inf)


def operating_point(supply_flow, pressure_cap, V, filtration, filter_area):
    """Pressure and flow where the supply meets the cake, at each filtrate volume.

    Parameters
    ----------
    supply_flow : callable
        Q_supply(dP) [m^3/s], vectorised and non-increasing in dP [Pa]; at the cap it
        gives the most the supply delivers there.
    pressure_cap : float
        Highest pressure the supply reaches (relief, set pressure or shut-off) [Pa].
    V : ndarray
        Filtrate volumes [m^3].

    Returns
    -------
    pressure, flow : ndarray
        [Pa], [m^3/s]. The pressure never exceeds ``pressure_cap``.
    """
    V = np.asarray(V, dtype=float)
    nodes = getattr(supply_flow, "nodes", None)
    if nodes is not None:
        return _operating_point_on_nodes(*nodes(pressure_cap), V, filtration, filter_area)
    if filtration.on_cake_basis:
        return _operating_point_cake_basis(supply_flow, pressure_cap, V, filtration, filter_area)
    cap = np.full_like(V, pressure_cap)
    at_cap = cake_flow(cap, V, filtration, filter_area) <= supply_flow(cap)
    lo = np.zeros_like(V)
    hi = cap.copy()
    # "the cake passes more than the supply gives", P / (mu R) > Q(P), as P > mu R Q(P):
    # no division, and the cake's resistance per unit alpha worked out once
    f = filtration
    cake_per_alpha = f.solids_per_filtrate * V / filter_area**2
    medium = f.medium_resistance / filter_area
    for _ in range(BISECTION_STEPS):
        mid = 0.5 * (lo + hi)
        alpha = f.resistance_ref if f.local is None and f.compressibility == 0.0 else f.specific_resistance(mid)
        cake_wins = mid > f.viscosity * (alpha * cake_per_alpha + medium) * supply_flow(mid)
        hi = np.where(cake_wins, mid, hi)
        lo = np.where(cake_wins, lo, mid)
    pressure = np.where(at_cap, cap, hi)
    flow = cake_flow(pressure, V, filtration, filter_area)
    # Where the supply curve jumps (a flat stretch of a pump curve) the cake's flow at the
    # bracketed pressure is the answer; where the cake passes any flow (V = 0, no cloth)
    # the supply's flow is.
    flow = np.where(np.isfinite(flow), np.minimum(flow, supply_flow(lo)), supply_flow(lo))
    return pressure, flow


def _operating_point_cake_basis(supply_flow, pressure_cap, V, filtration, filter_area):
    """``operating_point`` with alpha at the cake's own pressure dp_c (Tiller's basis).

    Parametrised by dp_c: the cake passes q = dp_c A^2/(mu alpha(dp_c) c V) and the whole
    pressure is P = dp_c + mu R_m q / A, both rising with dp_c while the supply's flow falls
    with P; bisection on dp_c finds where the cake takes what the supply gives, or where P
    reaches the cap. At V = 0 (no cake) the cloth alone meets the supply.
    """
    f = filtration
    mu, c, A = f.viscosity, f.solids_per_filtrate, filter_area
    cloth = mu * f.medium_resistance / A
    Vp = np.where(V > 0.0, V, 1.0)
    lo, hi = np.zeros_like(V), np.full_like(V, float(pressure_cap))
    for _ in range(BISECTION_STEPS + 12):
        mid = 0.5 * (lo + hi)
        q = mid * A * A / (mu * f.specific_resistance(mid) * c * Vp)
        P = mid + cloth * q
        too_high = (P >= pressure_cap) | (q >= supply_flow(np.minimum(P, pressure_cap)))
        hi = np.where(too_high, mid, hi)
        lo = np.where(too_high, lo, mid)
    q = hi * A * A / (mu * f.specific_resistance(hi) * c * Vp)
    P = np.minimum(hi + cloth * q, pressure_cap)
    flow = np.minimum(q, supply_flow(P))
    start = V <= 0.0
    if np.any(start):  # the clean cloth: P = mu R_m Q / A with Q = supply(P)
        lo0, hi0 = 0.0, float(pressure_cap)
        for _ in range(BISECTION_STEPS):
            mid0 = 0.5 * (lo0 + hi0)
            if mid0 >= cloth * float(supply_flow(np.array(mid0))):
                hi0 = mid0
            else:
                lo0 = mid0
        P = np.where(start, hi0, P)
        flow = np.where(start, float(supply_flow(np.array(hi0))) if hi0 < pressure_cap else pressure_cap / cloth, flow)
    return P, flow


NEWTON_STEPS = 8  # at most; from the secant's root on a supply segment two reach round-off
#: flow ratio of the nodes along the supply's last segment, to no flow (the pressure held past the cap)
HELD_RATIO = 1.03
HELD_NODES = 1000  # at most (the ratio grows instead)
#: pressure ratio of the nodes below the supply's lowest pressure (its flow held there; total basis
#: with a cloth, where that stretch has no closed form)
FIRST_RATIO = 1.02


@lru_cache(maxsize=16)
def unit_steps(n: int) -> np.ndarray:
    """0, 1/(n-1), ..., 1, read-only (made once per n: geometric nodes are an exponential of
    them, a cycle's curves scaled copies)."""
    steps = np.linspace(0.0, 1.0, n)
    steps.flags.writeable = False
    return steps


def _operating_point_on_nodes(p, q, V, filtration, filter_area):
    r"""``operating_point`` for a piecewise-linear supply Q(P) through nodes (p, q), p non-decreasing
    from 0 to the cap (a jump in Q: two nodes at one pressure): exact on each segment.

    alpha belongs to y = P - mu R_m Q / A on the cake basis (Tiller), to y = P on the total
    basis. The cake and cloth meet the supply where

    .. math:: G = y^{1-s} - \mu Q (r y^{-s} + k V) = 0,\qquad k = \alpha_{ref} p_{ref}^{-s} c / A^2

    (r = R_m/A on the total basis, 0 on the cake basis), so the volume at which the operating
    point reaches node j is closed-form, V_j = (y_j/(mu q_j) - r) A^2/(alpha(y_j) c); these
    volumes rise with j (the supply falls, alpha y^-1 falls for s < 1), so each filtrate
    volume's segment is a binary search away. Past the cap the pressure is held while the flow
    falls to zero: more nodes continue the supply there. On a segment P and Q are linear in a
    parameter t and G is concave and rising in t (derived here: y^(1-s) is concave, Q y^-s
    convex), so Newton's method from the root of the chord (right of the root) goes left of
    it once, then rises to it without overshooting (with r = 0 on the equivalent
    H = y - (mu k V Q)^(1/(1-s)), also concave, whose slope stays finite where y -> 0). Where Q
    is constant (below the supply's lowest pressure; a positive-displacement pump) and r = 0,
    y^(1-s) = mu Q k V gives the root in closed form, Newton's start. An incompressible cake's
    G is linear in t; with local laws (alpha a cake average) each segment is bisected in t.
    Tested against brentq in tests/solver/test_pump_table.py.
    """
    f = filtration
    mu, c = f.viscosity, f.solids_per_filtrate
    A2 = filter_area**2
    medium = f.medium_resistance / filter_area
    cake_basis = f.on_cake_basis
    cloth = mu * medium if cake_basis else 0.0  # the cloth's pressure per unit flow, taken off before alpha
    r = 0.0 if cake_basis else medium  # the cloth in G (total basis)
    power_law = f.local is None
    s_ = f.compressibility if power_law else 0.0
    cap = float(p[-1])
    if power_law and s_ and r > 0.0 and p.size >= 2:
        # below the supply's lowest pressure its flow is held and a compressible cake's pressure
        # may span decades up from the cloth's share mu q R_m / A (at V = 0): nodes in geometric
        # steps keep Newton's start close
        floor = mu * q[0] * medium
        if floor < p[1]:
            n = int(min(600, np.ceil(np.log(p[1] / floor) / np.log(FIRST_RATIO)))) + 1
            extra = floor * np.exp(np.log(p[1] / floor) * unit_steps(n)[:-1])
            p = np.concatenate(([0.0], extra, p[1:]))
            q = np.concatenate((np.full(extra.size + 1, q[0]), q[1:]))
    # The last segment ends at no flow: held at the cap (a node (cap, 0) added), or a pump's
    # shut-off there. Nodes along it in geometric steps of the flow, down to one where the volume
    # is past every V asked (there y >= p_lo/2 and alpha(y) <= alpha(cap)), keep Newton's start
    # close and the flow's relative precision (Q = q0 + t dq would lose it next to zero).
    held = q[-1] > 0.0  # past the cap the pressure is held while the flow falls to zero
    p_lo, q_lo = (cap, float(q[-1])) if held else (float(p[-2]), float(q[-2]))
    p_along = q_along = ()
    V_top = float(V.max()) if V.size else 0.0
    if V_top > 0.0 and q_lo > 0.0:
        alpha_cap = f.resistance_ref * (cap / f.reference_pressure) ** s_ if power_law else float(
            f.specific_resistance(cap))
        q_end = 0.5 * p_lo / (mu * (r + alpha_cap * c * V_top / A2))
        if cloth > 0.0:
            q_end = min(q_end, 0.5 * p_lo / cloth)
        if 0.0 < q_end < q_lo:
            ratio = max(HELD_RATIO, (q_lo / q_end) ** (1.0 / HELD_NODES))
            n = int(np.ceil(np.log(q_lo / q_end) / np.log(ratio)))
            q_along = q_lo * ratio ** -np.arange(1.0, n + 1.0)
            p_along = cap - (cap - p_lo) * (q_along / q_lo)  # on the segment's line
    p = np.concatenate((p if held else p[:-1], p_along, (cap,)))
    q = np.concatenate((q if held else q[:-1], q_along, (0.0,)))
    y = p - cloth * q if cloth else p
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        y_pos = np.maximum(y, 0.0)
        if power_law and s_:
            k = f.resistance_ref * f.reference_pressure**-s_ * c / A2  # alpha c V / A^2 = k V y^s
            b = (mu * k) * q  # G at node j: a_j - V b_j
            a = y_pos**-s_ * (y_pos - (mu * r) * q) if r else y_pos ** (1.0 - s_)
            V_nodes = a / b
        else:
            alpha = f.specific_resistance(y_pos) if not power_law else f.resistance_ref
            V_nodes = (y / (mu * q) - r) * A2 / (alpha * c)
        V_nodes = np.fmax(V_nodes, 0.0)  # 0/0 where the cake has no pressure yet: 0
    V_nodes[0] = 0.0  # zero pressure: no filtrate yet
    V_nodes[-1] = np.inf  # no flow (the only node without: q falls, and the supply's is > 0 below the cap)
    if not (V_nodes[1:] >= V_nodes[:-1]).all():
        V_nodes = np.maximum.accumulate(V_nodes)  # rounding must not break the order
    j = np.searchsorted(V_nodes, V, side="right") - 1
    j = np.minimum(np.maximum(j, 0), p.size - 2)
    j1 = j + 1
    p0, q0, y0, p1 = p[j], q[j], y[j], p[j1]
    dp, dq = p1 - p0, q[j1] - q0
    dy = dp - cloth * dq if cloth else dp  # >= 0
    if not power_law:
        lo, hi = np.zeros_like(V), np.ones_like(V)
        cpa = c * V / A2
        for _ in range(BISECTION_STEPS):
            mid = 0.5 * (lo + hi)
            ym = y0 + mid * dy
            cake_wins = ym > mu * (q0 + mid * dq) * (f.specific_resistance(np.maximum(ym, 0.0)) * cpa + r)
            hi = np.where(cake_wins, mid, hi)
            lo = np.where(cake_wins, lo, mid)
        t = 0.5 * (lo + hi)
    elif not s_:
        muR = mu * (f.resistance_ref * c * V / A2 + medium)
        den = dp - muR * dq  # > 0 on a segment of positive length
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(den > 0.0, (muR * q0 - p0) / den, 0.0)
        t = np.minimum(np.maximum(t, 0.0), 1.0)
    else:
        t = _newton_on_segments(V, a[j], b[j], a[j1], b[j1], y0, dy, q0, dq, dp / p1, mu * k, mu * r, s_)
    P = np.minimum(p0 + t * dp, p1)
    return P, q0 + t * dq


def _newton_on_segments(V, a0, b0, a1, b1, y0, dy, q0, dq, dp_rel, mu_k, mu_r, s_):
    r"""Each volume's parameter t on its segment (a power law, s > 0), by Newton's method; see
    ``_operating_point_on_nodes`` (G = a - V b at the segment's ends; dp_rel: the segment's
    pressure rise relative to its end pressure).

    With no cloth term in G (the cake basis; the total basis without cloth) the root of G is
    the root of

    .. math:: H(t) = y - (\mu k V Q)^{1/(1-s)},

    concave and rising in t like G, but with H' = dy - Q' (mu k V Q)^{1/(1-s)} / ((1-s) Q) >= dy
    finite where y -> 0 (a cake pressure next to nothing behind a cloth that takes nearly all
    of it, where G' is infinite and Newton's method would crawl), and defined for y < 0 too.
    """
    one_s = 1.0 - s_
    mkV = mu_k * V
    power = 1.0 / one_s
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        G0 = a0 - V * b0
        t = G0 / (G0 - (a1 - V * b1))  # the root of G's chord: right of the root (G is concave)
        if not mu_r:
            # the flow held on the segment: y^(1-s) = mu Q k V, the root itself
            flat = np.flatnonzero(dq == 0.0)
            if flat.size:
                t[flat] = ((q0[flat] * mkV[flat]) ** power - y0[flat]) / dy[flat]
        t = np.minimum(np.where(t >= 0.0, t, 0.0), 1.0)  # also where the chord has no root (NaN)
        if mu_r:
            y_scale = dy / (y0 + dy)  # the total basis: y = P
        out, at = t, None  # the volumes still iterated: all, then those not yet converged
        for _ in range(NEWTON_STEPS):
            Q = q0 + t * dq
            if mu_r:  # G on the total basis with a cloth (y = P >= the cloth's share > 0)
                y = np.maximum(y0 + t * dy, 1e-300)
                y_s = y**-s_
                mQr = mu_r * Q
                G = y_s * (y - mQr) - Q * mkV
                dG = y_s * (one_s * dy + s_ * mQr * dy / y - mu_r * dq) - dq * mkV
                scale = y_scale
            else:
                W = (mkV * Q) ** power
                G = y0 + t * dy - W
                dG = dy - power * W * dq / Q
                scale = dp_rel
            step = G / dG
            if not np.isfinite(step).all():  # out of floating-point range: to the segment's middle there
                step = np.where(np.isfinite(step), step, t - 0.5)
            t = np.minimum(np.maximum(t - step, 0.0), 1.0)
            if at is None:
                out = t
            else:
                out[at] = t
            # the change in P (relative to the segment's end) and in Q (to itself): below 1e-9 the
            # next step's would be below round-off (quadratic convergence; |G''/G'| <= s dy/y,
            # |H''/H'| <= (1/(1-s) - 1) |dq|/Q)
            going = np.flatnonzero(np.abs(step) * (scale - dq / Q) > 1e-9)
            if going.size == 0:
                break
            at = going if at is None else at[going]
            t, y0, dy, q0, dq, mkV = (x[going] for x in (t, y0, dy, q0, dq, mkV))
            if mu_r:
                y_scale = y_scale[going]
            else:
                dp_rel = dp_rel[going]
    return out


def volume_grid(V_max: float, n: int = 2000) -> np.ndarray:
    """Filtrate volumes from 0 to V_max: dense near the start where the cake is thin.

    The grid of V_max = 1 scaled (made once per n): the same nodes to round-off as building
    it for each V_max, without a geomspace and a sort per curve.
    """
    return V_max * _unit_volume_grid(n)


@lru_cache(maxsize=8)
def _unit_volume_grid(n: int) -> np.ndarray:
    geometric = np.geomspace(1e-6, 1.0, n // 2)
    linear = np.linspace(0.0, 1.0, n - n // 2)
    grid = np.unique(np.concatenate(([0.0], geometric, linear)))
    grid.flags.writeable = False  # shared: scaled copies only
    return grid


class TabulatedCurve:
    """t(V), V(t), rate and pressure from operating points on a volume grid.

    1/Q is taken as piecewise linear in V, so t(V) is piecewise quadratic and both t(V)
    and its inverse are exact on each segment. Beyond the last node the last segment is
    continued (linear 1/Q: constant pressure if the supply is at its cap there).
    """

    def __init__(self, V, pressure, flow=None, *, reciprocal_rate=None):
        self.V = np.asarray(V, dtype=float)
        self.P = np.asarray(pressure, dtype=float)
        # 1/Q as given when the caller has it (no round trip through Q)
        self.r = (np.asarray(reciprocal_rate, dtype=float) if reciprocal_rate is not None
                  else 1.0 / np.asarray(flow, dtype=float))
        V, r = self.V, self.r
        dV = V[1:] - V[:-1]
        slope = np.empty_like(r)
        np.subtract(r[1:], r[:-1], out=slope[:-1])
        slope[:-1] /= dV
        slope[-1] = slope[-2] if slope.size > 1 else 0.0
        self.slope = slope
        area = r[:-1] + r[1:]  # the trapezoids of piecewise-linear 1/Q, exact
        area *= dV
        area *= 0.5
        t = np.empty_like(r)
        t[0] = 0.0
        np.cumsum(area, out=t[1:])
        self.t = t
        # scalar calls (the cycle search asks one volume at a time) look the segment up with
        # ndarray.searchsorted and read the nodes with .item(): plain lists of the table
        # (a bisect on them) cost more to build than the few dozen scalar calls they serve
        self._V_inner, self._t_inner = self.V[1:], self.t[1:]
        # a cycle asks its time, rate and pressure at one end volume in turn: the last scalar
        # look-up kept, as one tuple (one assignment: safe when threads share the table)
        self._last = (None, 0)
        self._last_array = (None, None)

    def _i(self, v: float) -> int:
        # the count of inner nodes at or below v: the segment's index (see _segment)
        last = self._last
        if last[0] == v:
            return last[1]
        i = int(self._V_inner.searchsorted(v, "right"))
        self._last = (v, i)
        return i

    @property
    def V_max(self) -> float:
        return float(self.V[-1])

    @property
    def knots(self) -> np.ndarray:
        """Volumes where the curve changes its form [m^3]: the grid nodes (the global
        optimum search scans them)."""
        return self.V[1:]

    @property
    def has_peak(self) -> bool:
        """Whether a cycle's throughput on this table surely has a peak: 1/Q still rising at
        the end (the table continues its last segment, so the throughput falls beyond some
        volume) and finite."""
        return self.slope.item(-1) > 0.0 and np.isfinite(self.t.item(-1)) and np.isfinite(self.r.item(-1))

    def peak_volumes(self, downtime: float, wash_coefficient: float) -> np.ndarray:
        r"""Every local peak of a cycle's throughput on this table [m^3], increasing, exactly.

        With a wash time t_w = a V r(V) (r = 1/Q; a constant: the wash at the pressure
        filtration ended at) and a fixed time t_d besides, the throughput V / T,
        T = t + t_w + t_d, rises while g = T - V dT/dV > 0. On a table segment
        (h = V - V_i, r = r_i + k h, t = t_i + r_i h + k h^2/2) g is the quadratic

        .. math:: g = (t_i + t_d - V_i r_i - a k V_i^2) - k (1 + 2a) V_i h - k (1/2 + a) h^2

        falling in h for k >= 0 (rising for k < 0, where no peak can lie), so each segment's
        root is closed-form; where g turns non-positive at a node (a kink of 1/Q) the peak is
        that node. Starting on the line r = B + K V (a ConstantPressureCurve), the root is
        sqrt(t_d / (K (1/2 + a))). These are the peaks a global scan of the same table refines
        to (derived here; tested against ``peak_scan`` in tests/solver/test_cake_basis.py and
        tests/solver/test_optimum.py).

        Parameters
        ----------
        downtime : float
            t_d: every time of the cycle that does not depend on V [s].
        wash_coefficient : float
            a: wash time per V / Q at the end of filtration [-].
        """
        V, t, r, k = self.V, self.t, self.r, self.slope
        a, t_d = wash_coefficient, downtime
        C0 = t + t_d - V * r - a * k * V * V  # g at each segment's start, with its own slope
        C1 = -k * V * (1.0 + 2.0 * a)
        C2 = -k * (0.5 + a)
        width = np.append(np.diff(V), np.inf)  # the last segment continues the table
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            g_end = np.where(np.isfinite(width), C0 + (C1 + C2 * width) * width, np.where(k > 0.0, -np.inf, C0))
            # a root inside a segment: g from > 0 to <= 0 along it
            inside = (C0 > 0.0) & (g_end <= 0.0)
            # a peak at a node: g > 0 up to it, <= 0 from it
            at_node = np.zeros(V.size, dtype=bool)
            at_node[1:] = (C0[1:] <= 0.0) & (g_end[:-1] > 0.0)
            h = 2.0 * C0 / (-C1 + np.sqrt(np.maximum(C1 * C1 - 4.0 * C2 * C0, 0.0)))
        candidates = np.concatenate((V[inside] + np.minimum(h[inside], width[inside]), V[at_node]))
        return np.sort(candidates[np.isfinite(candidates)])  # with has_peak, the last segment gives one

    def first_volume_where(self, quantity: str, level: float, V_limit: float) -> float | None:
        """The first volume in [0, V_limit] [m^3] where 1/Q ("reciprocal_rate" [s/m^3]) or the
        pressure ("pressure" [Pa]) reaches ``level``, exactly on the table's segments (both
        are linear in V there: 1/Q by construction, the pressure as interpolated), else None.

        The last segment of 1/Q is continued past the table, the pressure held at its last
        node's, as :meth:`rate` and :meth:`pressure_at` do.
        """
        if quantity == "reciprocal_rate":
            y, slope = self.r, self.slope
        else:
            y = self.P
            with np.errstate(divide="ignore", invalid="ignore"):
                slope = np.append(np.diff(self.P) / np.diff(self.V), 0.0)
        n = max(int(np.searchsorted(self.V, V_limit, side="left")), 1)  # segments that start below V_limit
        V0, y0, k = self.V[:n], y[:n], slope[:n]
        ends = np.append(self.V[1:n], max(V_limit, self.V[0]))
        y_end = np.append(y[1:n], y0[-1] + k[-1] * (ends[-1] - V0[-1]))
        hits = np.flatnonzero((y0 >= level) | (y_end >= level))
        if hits.size == 0:
            return None
        i = int(hits[0])
        if y0[i] >= level:
            return float(V0[i])
        return float(min(V0[i] + (level - y0[i]) / k[i], ends[i]))

    def _segment(self, V):
        # the count of inner nodes at or below V: the segment's index, 0 below the first node
        # and the last segment beyond the end (no clipping needed). A read-only array's
        # segments are kept for the next call with the same array (a cycle's curves ask the
        # time and then the rate at the same volumes); a writeable one could change between.
        last = self._last_array
        if V is last[0]:
            return last[1]
        i = np.searchsorted(self._V_inner, V, side="right")
        if not V.flags.writeable:
            self._last_array = (V, i)
        return i

    def time(self, V):
        if isinstance(V, float):
            i = self._i(V)
            h = V - self.V.item(i)
            return self.t.item(i) + self.r.item(i) * h + 0.5 * self.slope.item(i) * h * h
        V = np.asarray(V, dtype=float)
        i = self._segment(V)
        h = V - self.V[i]
        out = self.t[i] + self.r[i] * h + 0.5 * self.slope[i] * h * h
        return out if out.ndim else float(out)

    def volume(self, t):
        t = np.asarray(t, dtype=float)
        i = np.searchsorted(self._t_inner, t, side="right")
        dt = t - self.t[i]
        r, k = self.r[i], self.slope[i]
        h = 2.0 * dt / (r + np.sqrt(np.maximum(r * r + 2.0 * k * dt, 0.0)))
        out = self.V[i] + h
        return out if out.ndim else float(out)

    def rate(self, V):
        if isinstance(V, float):
            i = self._i(V)
            return 1.0 / (self.r.item(i) + self.slope.item(i) * (V - self.V.item(i)))
        V = np.asarray(V, dtype=float)
        i = self._segment(V)
        out = 1.0 / (self.r[i] + self.slope[i] * (V - self.V[i]))
        return out if out.ndim else float(out)

    def pressure_at(self, V):
        if isinstance(V, float):
            Vn, Pn = self.V, self.P
            if V <= Vn.item(0):
                return Pn.item(0)
            if V >= Vn.item(-1):
                return Pn.item(-1)
            i = self._i(V)
            P0, V0 = Pn.item(i), Vn.item(i)
            return P0 + (Pn.item(i + 1) - P0) * (V - V0) / (Vn.item(i + 1) - V0)
        out = np.interp(V, self.V, self.P)
        return out if np.ndim(out) else float(out)


class GeneralisedInverse:
    """Q_supply(dP) for a falling pump curve dP(Q) given on increasing flows: piecewise linear
    between the points, evaluated exactly.

    Flat stretches of the curve become jumps in Q(dP) (at the jump's pressure the highest of
    its flows: the function is continuous from below); below the curve's lowest pressure the
    flow is the curve's highest flow, above its highest pressure its lowest. A uniform table
    over the pressure range points each pressure to the few nodes near it, so a lookup costs a
    few array operations and no binary search (a bisection for the operating point calls the
    supply dozens of times over a whole volume grid).
    """

    def __init__(self, flows, pressures):
        order = np.argsort(flows)
        Q = np.asarray(flows, dtype=float)[order]
        P = np.asarray(pressures, dtype=float)[order]
        self.P = P[::-1].copy()  # non-decreasing
        self.Q = Q[::-1].copy()  # decreasing
        P, Q, n = self.P, self.Q, self.P.size
        width = np.diff(P)
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = np.where(width > 0.0, np.diff(Q) / np.where(width > 0.0, width, 1.0), 0.0)
        # by j, the count of nodes below the pressure, the flow is base[j] + slope[j] (p - anchor[j]):
        # j = 0 below the curve (its highest flow), j = n above it (its lowest)
        self._base = np.concatenate(([Q[0]], Q[:-1], [Q[-1]]))
        self._anchor = np.concatenate(([P[0]], P[:-1], [P[-1]]))
        self._slope = np.concatenate(([0.0], slope, [0.0]))
        self._P_list, self._Q_list, self._base_list, self._anchor_list, self._slope_list = (
            a.tolist() for a in (P, Q, self._base, self._anchor, self._slope))
        # that count, among the distinct pressures U (a jump's nodes share one): k of them below
        # the pressure, then the nodes before U[k]
        U = np.unique(P)
        self._first = np.append(np.searchsorted(P, U, side="left"), n)
        self._U = np.append(U, np.inf)  # U[k], with +inf past the last
        self._corrections = None
        if U.size > 1:
            # buckets enough that none holds more than a few distinct pressures (or a search)
            for buckets in (4 * U.size, 32 * U.size, 256 * U.size):
                h = (U[-1] - U[0]) / buckets
                # distinct pressures below each bucket's start (a hair below it, so that rounding
                # in the bucket of a pressure never counts one at or above that pressure)
                start = np.searchsorted(U, U[0] + h * np.arange(buckets + 1) - 1e-9 * h, side="left")
                most = int(np.max(np.diff(np.append(start, U.size)))) + 1
                if most <= 3:  # one step forward for each
                    self._h, self._start, self._corrections = h, start, most
                    break
        self._nodes = {}

    def _count_below(self, p):
        """The number of nodes below each pressure (numpy's searchsorted, side "left")."""
        if self._corrections is None:
            return np.searchsorted(self.P, p, side="left")
        b = (p - self._U[0]) * (1.0 / self._h)
        k = self._start[np.clip(b, 0.0, self._start.size - 1.0).astype(np.intp)]
        U = self._U
        for _ in range(self._corrections):
            k = k + (U[k] < p)
        return self._first[k]

    def __call__(self, pressure):
        if isinstance(pressure, float):  # one pressure (a kink, the cap): a bisect on a list
            j = bisect_left(self._P_list, pressure)
            if j < len(self._P_list) and self._P_list[j] == pressure:
                return self._Q_list[j]  # a node's own flow (the line through it would round it)
            return self._base_list[j] + self._slope_list[j] * (pressure - self._anchor_list[j])
        p = np.asarray(pressure, dtype=float)
        j = self._count_below(p)
        return self._base[j] + self._slope[j] * (p - self._anchor[j])

    def nodes(self, cap: float) -> tuple[np.ndarray, np.ndarray]:
        """The function as (pressure, flow) nodes from 0 to ``cap`` [Pa], pressure non-decreasing
        (a jump: two nodes at one pressure): the highest flow held from 0, the curve's own
        points below the cap, and the flow at the cap. Exact: between nodes Q(P) is linear."""
        key = float(cap)
        cached = self._nodes.get(key)
        if cached is None:
            inside = (self.P > 0.0) & (self.P < key)
            p = np.concatenate(([0.0], self.P[inside], [key]))
            q = np.concatenate(([self.Q[0]], self.Q[inside], [self(key)]))  # (a node's own flow there)
            p.flags.writeable = q.flags.writeable = False  # kept and shared between requests: never edited
            cached = (p, q)
            if len(self._nodes) < 16:
                self._nodes[key] = cached
        return cached
