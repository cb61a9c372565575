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
    if nodes is not None and filtration.local is None:
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


NEWTON_STEPS = 6  # at most; within one table segment (1e-4 of the range wide) two or three reach round-off


def _operating_point_on_nodes(p, q, V, filtration, filter_area):
    """``operating_point`` for a piecewise-linear supply Q(P) through nodes (p, q), p rising
    from 0 to the cap: exact on each segment, no iteration over the whole grid.

    The volume at which the operating pressure reaches node j is closed-form, from
    p_j = mu q_j (alpha(p_j) c V / A^2 + R_m / A); these volumes rise with p_j (the supply
    falls, alpha p^-1 falls for s < 1), so each filtrate volume's segment is a binary search
    away. On its segment Q is linear in P: an incompressible cake's operating pressure is then
    the root of a linear equation; a compressible cake's is refined by Newton's method from the
    interpolated pressure, kept inside the segment. Past the last node (the cap) the pressure
    is held and the cake sets the flow.
    """
    f = filtration
    A2 = filter_area**2
    medium = f.medium_resistance / filter_area
    cake_basis = f.on_cake_basis
    # the cloth's share of the pressure, mu R_m Q / A, per unit flow: alpha belongs to the rest
    # on the cake pressure basis (Tiller), to the whole pressure on the total basis
    cloth = f.viscosity * medium if cake_basis else 0.0
    if f.compressibility and p.size >= 2:
        # below the table the supply is flat and a compressible cake's pressure may span
        # decades: nodes in geometric steps there keep Newton's start close. With a cloth the
        # pressure never falls below the cloth's share mu q R_m / A; without, the first
        # segment is solved in closed form below. On the cake basis the steps are in the
        # cake's own pressure, which starts from zero there.
        floor = f.viscosity * q[0] * medium if medium > 0.0 else 1e-9 * p[1]
        if floor < p[1]:
            n = int(min(200, np.ceil(np.log(p[1] / floor) / np.log(1.15)))) + 1
            if cake_basis:
                extra = floor + np.geomspace(1e-9 * (p[1] - floor), p[1] - floor, n + 60)[:-1]
                extra = np.concatenate(([floor], extra))
            else:
                extra = np.geomspace(floor, p[1], n)[:-1]
            p = np.concatenate(([0.0], extra, p[1:]))
            q = np.concatenate((np.full(extra.size + 1, q[0]), q[1:]))
    cake_p = np.maximum(p - cloth * q, 0.0)
    alpha_nodes = f.specific_resistance(cake_p) if f.compressibility else np.full_like(p, f.resistance_ref)
    with np.errstate(divide="ignore", invalid="ignore"):
        V_nodes = (p / (f.viscosity * q) - medium) * A2 / (alpha_nodes * f.solids_per_filtrate)
    V_nodes = np.where(q > 0.0, np.fmax(V_nodes, 0.0), np.inf)  # 0/0 where the cake has no pressure yet: 0
    V_nodes[0] = 0.0  # zero pressure: no filtrate yet (0/0 for a compressible cake without cloth)
    V_nodes = np.maximum.accumulate(V_nodes)  # rounding must not break the order
    last = p.size - 1
    j = np.clip(np.searchsorted(V_nodes, V, side="right") - 1, 0, last - 1)
    p0, p1, q0, q1 = p[j], p[j + 1], q[j], q[j + 1]
    m = (q1 - q0) / (p1 - p0)  # <= 0
    cake_per_alpha = f.solids_per_filtrate * V / A2
    at_cap = V >= V_nodes[last]  # past the last node: the cap's pressure, set below
    if f.compressibility == 0.0:
        muR = f.viscosity * (f.resistance_ref * cake_per_alpha + medium)
        P = muR * (q0 - m * p0) / (1.0 - muR * m)
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            w = np.where(np.isfinite(V_nodes[j + 1]) & (V_nodes[j + 1] > V_nodes[j]),
                         (V - V_nodes[j]) / (V_nodes[j + 1] - V_nodes[j]), 0.0)
        P = p0 + np.clip(w, 0.0, 1.0) * (p1 - p0)
        s_, a_ref, p_ref, mu = f.compressibility, f.resistance_ref, f.reference_pressure, f.viscosity
        # Newton's method only where the pressure is not held at the cap (there it is known,
        # and a step out of the last segment would never settle)
        live = np.flatnonzero(~at_cap)
        Pl, p0l, p1l, q0l, ml, cpa = P[live], p0[live], p1[live], q0[live], m[live], cake_per_alpha[live]
        # what does not change between steps, worked out once
        a_cpa = a_ref * p_ref**-s_ * cpa  # alpha c V / A^2 = a_cpa pc^s
        s_turn = s_ * (1.0 - cloth * ml)
        tolerance = 1e-14 * p1l
        with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
            for _ in range(NEWTON_STEPS if live.size else 0):
                Q = q0l + ml * (Pl - p0l)
                pc = np.maximum(Pl - cloth * Q, 1e-300)  # the pressure alpha belongs to
                cake = a_cpa * pc**s_  # alpha c V / A^2
                R = cake + medium
                step = (Pl - mu * Q * R) / (1.0 - mu * (ml * R + Q * cake / pc * s_turn))
                if not np.all(np.isfinite(step)):
                    # out of floating-point range (a pressure next to zero): go to the segment's middle
                    step = np.where(np.isfinite(step), step, Pl - 0.5 * (p0l + p1l))
                Pl = np.clip(Pl - step, p0l, p1l)
                if np.all(np.abs(step) <= tolerance):  # converged (quadratically) to round-off
                    break
        P[live] = Pl
        if medium == 0.0:
            # the first segment without a cloth: P = mu q0 alpha_ref (P/p_ref)^s c V / A^2
            first = j == 0
            # the power may overflow for a compressibility near 1 (only on points it does not
            # concern, or on a cycle the finiteness check then refuses with a 422)
            with np.errstate(over="ignore"):
                P = np.where(first, (mu * q0 * a_ref * cake_per_alpha * p_ref**-s_) ** (1.0 / (1.0 - s_)), P)
    P = np.where(at_cap, p[last], P)
    supply = q0 + m * (P - p0)
    flow = supply.copy()
    if np.any(at_cap):  # the cake's flow at the held pressure, only where it is held
        flow[at_cap] = cake_flow(p[last], V[at_cap], filtration, filter_area)
    flow = np.where(np.isfinite(flow), np.minimum(flow, supply), supply)
    return P, flow


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
    """Q_supply(dP) for a falling pump curve dP(Q) given on increasing flows.

    Flat stretches of the curve become jumps in Q(dP); below the curve's lowest pressure
    the flow is the curve's highest flow.
    """

    def __init__(self, flows, pressures):
        order = np.argsort(flows)
        Q = np.asarray(flows, dtype=float)[order]
        P = np.asarray(pressures, dtype=float)[order]
        self.P = P[::-1]  # non-decreasing
        self.Q = Q[::-1]  # decreasing

    def __call__(self, pressure):
        p = np.asarray(pressure, dtype=float)
        j = np.searchsorted(self.P, p, side="left")
        j_hi = np.clip(j, 0, self.P.size - 1)
        j_lo = np.clip(j - 1, 0, self.P.size - 1)
        span = self.P[j_hi] - self.P[j_lo]
        with np.errstate(divide="ignore", invalid="ignore"):
            w = np.where(span > 0.0, (p - self.P[j_lo]) / span, 1.0)
        Q = self.Q[j_lo] + (self.Q[j_hi] - self.Q[j_lo]) * np.clip(w, 0.0, 1.0)
        return np.where(j == 0, self.Q[0], Q)


class UniformTable:
    """A non-increasing function of pressure tabulated on a uniform grid, for O(1) lookup.

    The root find calls the supply tens of times over the whole volume grid; a uniform
    table replaces a binary search per call with arithmetic. Below the first pressure
    the first value holds; above the last, the last.
    """

    def __init__(self, fn, p_lo: float, p_hi: float, n: int = 8193):
        self.p_lo = p_lo
        self.n = n if p_hi > p_lo else 1
        self.h = (p_hi - p_lo) / (self.n - 1) if self.n > 1 else 1.0
        self.values = np.asarray(fn(np.linspace(p_lo, p_hi, self.n)), dtype=float)
        # the step to the next value, with a zero step after the last (held beyond the table)
        self.steps = np.append(np.diff(self.values), 0.0)
        self._nodes = {}

    def nodes(self, cap: float) -> tuple[np.ndarray, np.ndarray]:
        """The table as (pressure, flow) nodes from 0 to ``cap`` [Pa]: the first value held
        below the table, the table's nodes below the cap, and the value at the cap."""
        key = float(cap)
        cached = self._nodes.get(key)
        if cached is None:
            grid = self.p_lo + self.h * np.arange(self.n) if self.n > 1 else np.array([self.p_lo])
            inside = (grid > 0.0) & (grid < cap)
            p = np.concatenate(([0.0], grid[inside], [cap]))
            cached = (p, np.asarray(self(p), dtype=float))
            if len(self._nodes) < 16:
                self._nodes[key] = cached
        return cached

    def __call__(self, pressure):
        p = np.asarray(pressure, dtype=float)
        if self.n == 1:
            return np.full_like(p, self.values[0])
        x = np.minimum(np.maximum((p - self.p_lo) * (1.0 / self.h), 0.0), self.n - 1.0)
        i = x.astype(np.intp)
        return self.values[i] + (x - i) * self.steps[i]
