r"""Constant pressure on the cake pressure basis with a power-law cake, in closed form (issue 12).

The arithmetic at each volume (the cake's share of the drop by Newton's method, the incomplete
beta part of the time by a Gauss rule or a power series) is compiled with numba and run as one
loop over the volumes: a chart's few hundred volumes in one call, where numpy needed about 80
calls, each costing more than its arithmetic in a running server. Floats and arrays run the same
compiled code, so they agree to the last bit. Compiled once and kept on disk (numba's cache,
next to this file); :func:`_warm_up` loads it when the module is imported, so no request pays
for it.

Every compiled function and the constants they read live in this one file: numba's cache is
invalidated by a change to this file only, not by a change to a module it imports.
"""

import math
from functools import lru_cache

import numpy as np
from numba import njit

#: Gauss–Jacobi nodes of the quadrature of the time's incomplete beta part below phi = 1/2 (error
#: ~ 34^-n: below round-off from 11; see :func:`_cake_basis_rules`)
CAKE_BASIS_GAUSS_NODES = 11
#: beyond phi = 1/2 the incomplete beta part is a power series in the cloth's share psi <= 1/2,
#: every term positive (:func:`_cake_basis_rules`): 48 terms leave less than 1e-18 of the sum at
#: psi = 1/2 (each term below 0.5^k/k^2), and below CAKE_BASIS_SERIES_BELOW the first
#: CAKE_BASIS_SERIES_TERMS leave less than 0.05^14 = 6e-19; below that share the cake's series
#: of as many terms replaces the Gauss rule before phi = 1/2
CAKE_BASIS_CLOTH_TERMS = 48
CAKE_BASIS_SERIES_BELOW = 0.05
CAKE_BASIS_SERIES_TERMS = 14
#: fewer of the cloth's terms where psi is smaller: (psi below, terms), each leaving less than
#: psi^n/(n^2 (1 - psi)) < 6e-19 of the sum, as the first tier (issue 12: most of a cake's curve
#: lies at psi of 0.05-0.3, where all 48 terms cost a third of the time at a volume)
CAKE_BASIS_CLOTH_TIERS = ((CAKE_BASIS_SERIES_BELOW, CAKE_BASIS_SERIES_TERMS), (0.1, 16), (0.2, 23), (0.3, 30))
#: Newton steps at most (each solve converges in well under ten; the bracket keeps it safe)
CAKE_BASIS_NEWTON_STEPS = 100
#: z = ln(phi/psi) at most (psi > e^-350: the time, ~ e^(2z), stays finite)
CAKE_BASIS_Z_MAX = 350.0
#: a Newton step in z below this is the last one taken (quadratic convergence: the next error
#: is of its square)
CAKE_BASIS_Z_TOL = 1e-10
#: the share's Newton steps stop once the next step's bound is below this share of z's scale
CAKE_BASIS_Z_ROUND_OFF = 1e-16
#: volumes are read within [1e-300, 1e260] V_0: below, the shares are 0 and 1 to round-off
#: (phi < 1e-300^(1/r)); beyond, the cloth's share is below 1e-260
CAKE_BASIS_Y_RANGE = (1e-300, 1e260)

#: division by zero gives an infinity as numpy does (no check per division)
_OPTIONS = {"nogil": True, "error_model": "numpy"}


def _compiled(function):
    """``function`` compiled by numba and kept on disk in the first writable folder numba finds
    (``NUMBA_CACHE_DIR``, ``__pycache__`` beside this file, ``~/.cache/numba``); where it finds
    none (a read-only install run by a user without a home), compiled afresh at each start
    rather than refusing to start (numba raises "no locator available" then)."""
    try:
        return njit(cache=True, **_OPTIONS)(function)
    except RuntimeError:
        return njit(**_OPTIONS)(function)


@lru_cache(maxsize=64)
def _cake_basis_rules(r: float) -> np.ndarray:
    r"""The constants of r that J(phi) = \int_0^phi u^r/(1 - u) du is summed with.

    For phi < 1/2: J = phi^(r+1) \int_0^1 w^r / (1 - phi w) dw, by Gauss–Jacobi with weight w^r
    (the integrand's pole at w = 1/phi >= 2: converges as (3 + 2 sqrt 2)^(-2n), the Bernstein
    ellipse), or below phi = 0.05 as the series sum_k phi^k/(k + r + 1). For phi >= 1/2:
    J = -ln(psi) - H_r + psi \int_0^1 g(psi m) dm, g(q) = (1 - (1 - q)^r)/q, H_r = digamma(r + 1)
    + euler_gamma = \int_0^1 (1 - u^r)/(1 - u) du, and \int_0^1 g(psi m) dm = sum_k a_k
    psi^k/(k + 1), a_0 = r, a_(k+1) = a_k (k + 1 - r)/(k + 2) (the binomial series of
    (1 - q)^r; every term positive, a_k below 1/k: Horner's rule, cheaper than a Gauss rule's
    two logarithms per node). Checked against quadrature in tests/solver/test_cake_basis_exact.py.

    Returns one read-only array, what the compiled :func:`_J` reads: the Jacobi nodes and
    weights (CAKE_BASIS_GAUSS_NODES each), the cloth's series coefficients highest power first
    (CAKE_BASIS_CLOTH_TERMS), the cake's (CAKE_BASIS_SERIES_TERMS) and H_r, at the offsets
    _NODES_AT, _WEIGHTS_AT, _CLOTH_AT, _CAKE_AT and _H_AT (one array: each array argument of a
    compiled function costs its call a few tenths of a microsecond to hand over).
    """
    from scipy.special import digamma, roots_jacobi

    x, w = roots_jacobi(CAKE_BASIS_GAUSS_NODES, 0.0, r)  # weight (1 + x)^r on [-1, 1]
    wj, Wj = 0.5 * (1.0 + x), w / 2.0 ** (r + 1.0)
    a, cloth = r, []
    for k in range(CAKE_BASIS_CLOTH_TERMS):
        cloth.append(a / (k + 1.0))
        a *= (k + 1.0 - r) / (k + 2.0)
    cake = [1.0 / (k + r + 1.0) for k in range(CAKE_BASIS_SERIES_TERMS)]
    rules = np.concatenate([wj, Wj, cloth[::-1], cake[::-1], [float(digamma(r + 1.0)) + float(np.euler_gamma)]])
    rules.flags.writeable = False  # shared by every curve of this r
    return rules


#: where each part of the rules array lies (see :func:`_cake_basis_rules`)
_NODES_AT = 0
_WEIGHTS_AT = CAKE_BASIS_GAUSS_NODES
_CLOTH_AT = 2 * CAKE_BASIS_GAUSS_NODES
_CAKE_AT = _CLOTH_AT + CAKE_BASIS_CLOTH_TERMS
_H_AT = _CAKE_AT + CAKE_BASIS_SERIES_TERMS


# ---- the compiled arithmetic -----------------------------------------------------------------

@_compiled
def _z_of(ly, s, r, last_step):
    """z = ln(phi/psi) at ln(V/V_0) = ``ly``: Newton's method on G = z - s ln(phi) - ln(V/V_0)
    (G' = 1 - s psi in [r, 1], G convex), from the root's asymptotes z = ln(V/V_0) for
    V >> V_0 and ln(V/V_0)/r for V << V_0. Newton's error after a step d is at most
    G''/(2 G') d^2 <= s/(8 r) d^2 (G' >= r, G'' <= s/4): once that is below round-off of z
    (``last_step``) the step just taken was the last needed."""
    z = ly / r if ly < 0.0 else ly
    for _ in range(CAKE_BASIS_NEWTON_STEPS):
        if z < 0.0:  # G = r z + s ln(1 + e^z) - ln(V/V_0): no cancellation of z against s z
            e = math.exp(z)
            step = (r * z + s * math.log1p(e) - ly) * (1.0 + e) / (r + e)
        else:  # G = z + s ln(1 + e^-z) - ln(V/V_0)
            e = math.exp(-z)
            step = (z + s * math.log1p(e) - ly) * (1.0 + e) / (1.0 + r * e)
        z -= step
        if abs(step) <= CAKE_BASIS_Z_TOL * (1.0 + abs(z)) or step * step <= last_step * (1.0 + abs(z)):
            break
    return z


@_compiled
def _split(z):
    """phi = 1/(1 + e^-z) and psi = 1/(1 + e^z), each to round-off for any z: z = ln(phi/psi)
    carries the shares where 1 - phi would lose them. One exponential, of -|z| (never an
    overflow): the larger share is 1/(1 + e^-|z|), the smaller e^-|z| times it."""
    e = math.exp(-abs(z))
    d = 1.0 + e
    if z >= 0.0:
        return 1.0 / d, e / d
    return e / d, 1.0 / d


@_compiled
def _J(phi, psi, r, rules):
    r"""J(phi) = \int_0^phi u^r/(1 - u) du (see :func:`_cake_basis_rules`)."""
    total = 0.0
    if phi < 0.5:
        if phi < CAKE_BASIS_SERIES_BELOW:
            for k in range(_CAKE_AT, _CAKE_AT + CAKE_BASIS_SERIES_TERMS):
                total = total * phi + rules[k]
        else:
            for k in range(CAKE_BASIS_GAUSS_NODES):
                total += rules[_WEIGHTS_AT + k] / (1.0 - phi * rules[_NODES_AT + k])
        return phi ** (r + 1.0) * total
    # the lowest powers only, as many as this psi needs (CAKE_BASIS_CLOTH_TIERS)
    terms = CAKE_BASIS_CLOTH_TERMS
    for below, fewer in CAKE_BASIS_CLOTH_TIERS:
        if psi < below:
            terms = fewer
            break
    for k in range(_CLOTH_AT + CAKE_BASIS_CLOTH_TERMS - terms, _CLOTH_AT + CAKE_BASIS_CLOTH_TERMS):
        total = total * psi + rules[k]
    return -math.log(psi) - rules[_H_AT] + psi * total


@_compiled
def _shares_at(y, s, r, last_step):
    """(phi, psi) at V = V_0 y > 0, y read within CAKE_BASIS_Y_RANGE."""
    z = _z_of(math.log(min(max(y, CAKE_BASIS_Y_RANGE[0]), CAKE_BASIS_Y_RANGE[1])), s, r, last_step)
    phi, psi = _split(z)
    return phi, psi


@_compiled
def _at_volume(y, s, r, last_step, rules):
    """(psi, t/(B V_0)) at V = V_0 y: the cloth's share of the drop and the reduced time,
    t/(B V_0) = y (1/(2 psi) + (r + s psi)/2) + r s J/2."""
    if not y > 0.0:
        return 1.0, 0.0
    phi, psi = _shares_at(y, s, r, last_step)
    J = _J(phi, psi, r, rules)
    return psi, y * (0.5 / psi + 0.5 * (r + s * psi)) + 0.5 * r * s * J


@_compiled
def _at_volumes(V, per_V0, scale, B, s, r, last_step, rules, rate_out, time_out):
    """The rate psi/B [m^3/s] and the time ``scale`` t/(B V_0) [s] at every volume V [m^3]
    (y = V ``per_V0``), into ``rate_out`` and ``time_out``: the float path's operations, one by one."""
    for i in range(V.size):
        psi, F = _at_volume(V[i] * per_V0, s, r, last_step, rules)
        rate_out[i] = psi / B
        time_out[i] = scale * F


@_compiled
def _time_in_z(z, s, r, rules):
    """(t/(B V_0), its derivative in z, y = V/V_0, phi, psi) at z."""
    phi, psi = _split(z)
    # ln(V/V_0) = z - s ln(phi), as r z + s ln(1 + e^z) where z < 0 (no cancellation)
    if z < 0.0:
        y = math.exp(r * z + s * math.log1p(math.exp(z)))
    else:
        y = math.exp(z + s * math.log1p(math.exp(-z)))
    F = y * (0.5 / psi + 0.5 * (r + s * psi)) + 0.5 * r * s * _J(phi, psi, r, rules)
    return F, y * (1.0 - s * psi) / psi, y, phi, psi


#: what the bracketed Newton solves: the z of a reduced time, or of the throughput's peak
_SOLVE_TIME, _SOLVE_PEAK = 0, 1


@_compiled
def _bracketed_newton(kind, target, a, z, floor, s, r, rules):
    """The root in z of an increasing D(z) by Newton's method, bisecting in the bracket found so
    far when a step leaves it; each z kept within [floor, CAKE_BASIS_Z_MAX] (floor = -700/r: V
    below e^-700 V_0), where every quantity is finite. ``kind`` _SOLVE_TIME: D = ln(F(z)/target),
    F the reduced time; _SOLVE_PEAK: the throughput's peak with wash coefficient ``a`` and reduced
    downtime ``target`` (see :meth:`CakeBasisPressureCurve.optimum_volume`)."""
    lo, hi = -math.inf, math.inf
    for _ in range(CAKE_BASIS_NEWTON_STEPS):
        F, dF, y, phi, psi = _time_in_z(z, s, r, rules)
        if kind == _SOLVE_TIME:
            D, dD = math.log(F / target), dF / F
        else:
            sigma = 1.0 - s * psi
            extra = 1.0 + a * phi / sigma
            D = math.log(y / psi * extra) - math.log(F + target)
            dD = sigma + phi + a * r * phi * psi / (sigma * sigma * extra) - dF / (F + target)
        if D == 0.0:
            return z
        if D < 0.0:
            lo = z
        else:
            hi = z
        new = z - D / dD if dD > 0.0 else math.nan
        if abs(new - z) <= CAKE_BASIS_Z_TOL * (1.0 + abs(z)):  # converged (quadratically): this step the last
            return new
        if not lo < new < hi:  # out of the bracket (or no slope): halve it, or walk out of one side
            new = 0.5 * (lo + hi) if math.isfinite(lo + hi) else (z + 4.0 if D < 0.0 else z - 4.0)
        z = min(max(new, floor), CAKE_BASIS_Z_MAX)
    return z


@_compiled
def _volume_at(F, s, r, last_step, rules):
    """V/V_0 at the reduced time F = t/(B V_0): Newton's method on ln F in z, from Ruth's
    equation's volume at F (exact for s = 0, and at both ends for any s)."""
    if not F > 0.0:
        return 0.0
    y = 2.0 * F / (math.sqrt(1.0 + 2.0 * F) + 1.0)
    z = _bracketed_newton(_SOLVE_TIME, F, 0.0, _z_of(math.log(y), s, r, last_step), -700.0 / r,
                          s, r, rules)
    return _time_in_z(z, s, r, rules)[2]


@_compiled
def _volumes_at(t, per_scale, V0, s, r, last_step, rules, out):
    """The volume V_0 y [m^3] at every time t [s] (F = t ``per_scale``), into ``out``."""
    for i in range(t.size):
        out[i] = V0 * _volume_at(t[i] * per_scale, s, r, last_step, rules)


@_compiled
def _peak_volume(tau, a, s, r, last_step, rules):
    """V/V_0 of the highest throughput at reduced downtime tau and wash coefficient a, from the
    s = 0 optimum (see :meth:`CakeBasisPressureCurve.optimum_volume`)."""
    y = math.sqrt(tau / (0.5 + a))
    z = _bracketed_newton(_SOLVE_PEAK, tau, a, _z_of(math.log(y), s, r, last_step), -700.0 / r,
                          s, r, rules)
    return _time_in_z(z, s, r, rules)[2]


# ---- the curve ------------------------------------------------------------------------------

class CakeBasisPressureCurve:
    r"""Constant pressure on the cake pressure basis with a power-law cake, in closed form.

    With alpha = alpha_P (dp_c/dP)^s (alpha_P at the whole drop dP), r = 1 - s, the cake's share
    of the drop phi = dp_c/dP and the cloth's psi = 1 - phi, the cake's and the cloth's Darcy
    laws in series give the volume and the rate explicitly in the share (derived here; as in
    :func:`~.feeds.held_pressure_nodes`):

    .. math:: V = V_0 \frac{\phi^r}{\psi},\quad V_0 = \frac{A R_m}{\alpha_P c},\qquad
              \frac{1}{Q} = \frac{B}{\psi},\quad B = \frac{\mu R_m}{A \Delta P}

    and t = \int B/psi dV in closed form but for an incomplete beta function (derived here,
    checked by differentiation and against quadrature in tests/solver/test_cake_basis_exact.py):

    .. math:: t = B V \left(\frac{1}{2\psi} + \frac{r + s\psi}{2}\right)
                  + \frac{r s}{2} B V_0 J(\phi),\qquad J(\phi) = \int_0^\phi \frac{u^r}{1-u} du

    (s = 0: t = B V + B V^2/(2 V_0), Ruth's equation with K_p = B/V_0). Every equation is
    solved in z = ln(phi/psi), where phi and psi are both exact to round-off: the share at a
    volume from z + s ln(1 + e^-z) = ln(V/V_0) (rising, slope 1 - s psi in [r, 1], convex),
    the volume at a time and the optimum by Newton's method in a shrinking bracket, in the
    compiled functions above (floats and arrays alike). 1/Q is convex in V, so a cycle's
    throughput has one peak (:meth:`optimum_volume`).
    """

    knots = np.empty(0)  # no change of form: the global search, if asked, scans a plain grid
    held_from = 0.0  # the pressure is held from the start

    def __init__(self, pressure: float, V0: float, medium_constant: float, compressibility: float):
        self.pressure = float(pressure)  # [Pa]
        self.V0 = float(V0)  # [m^3]
        # not called B: solve.py reports a curve's K_p and B as Ruth's constants, which this has not
        self.medium_constant = float(medium_constant)  # B [s/m^3]
        self.s = float(compressibility)
        self.r = 1.0 - self.s
        # a Newton step in z of d leaves an error of at most s/(8 r) d^2: a step whose square is
        # below this share of z's scale is the last one needed (see _z_of)
        last_step = CAKE_BASIS_Z_ROUND_OFF * 8.0 * self.r / self.s if self.s > 0.0 else math.inf
        self._rules = _cake_basis_rules(self.r)
        #: the compiled functions' arguments after the volume or time
        self._args = (self.s, self.r, last_step, self._rules)
        self._last = (None, 1.0, 0.0)  # (V, psi, t/(B V_0)) of the last float volume
        self._last_array = (None, None, None)  # the same of the last read-only array

    # -- the shares and the reduced time at volumes ----------------------------------------------
    def _point(self, V: float) -> tuple[float, float]:
        """(psi, t/(B V_0)) at a float volume V [m^3] (the last one kept: the cycle search asks
        the time and then the rate)."""
        last = self._last
        if last[0] == V:
            return last[1], last[2]
        psi, F = _at_volume(V * (1.0 / self.V0), *self._args)
        self._last = (V, psi, F)
        return psi, F

    def _points(self, V):
        """(rate [m^3/s], time [s]) at volumes V [m^3], a flat float array, in one compiled loop.
        A read-only array's are kept for the next call with the same array (a cycle's curves ask
        the time and then the rate)."""
        last = self._last_array
        if V is last[0]:
            return last[1], last[2]
        rate, time = np.empty(V.shape), np.empty(V.shape)
        _at_volumes(np.ascontiguousarray(V), 1.0 / self.V0, self.medium_constant * self.V0, self.medium_constant,
                    *self._args, rate, time)
        if not V.flags.writeable:  # kept, so shared: read-only too
            rate.flags.writeable = time.flags.writeable = False
            self._last_array = (V, rate, time)
        return rate, time

    def _share(self, V: float) -> tuple[float, float]:
        """(phi, psi) at a float volume [m^3] [-]."""
        if not V > 0.0:
            return 0.0, 1.0
        return _shares_at(V * (1.0 / self.V0), *self._args[:3])

    def _J(self, phi: float, psi: float) -> float:
        """J(phi) = \\int_0^phi u^r/(1 - u) du at a share and its complement."""
        return _J(phi, psi, self.r, self._rules)

    # -- the curve -------------------------------------------------------------------------------
    def _each(self, V, at_float, at_array):
        """``at_float(v)`` for a float volume, ``at_array(flat array)`` reshaped for an array."""
        if isinstance(V, float | int):
            return at_float(float(V))
        V = np.asarray(V, dtype=float)
        if V.ndim == 0:
            return at_float(float(V))
        if V.ndim == 1:
            return at_array(V)
        return at_array(V.ravel()).reshape(V.shape)

    def time(self, V):
        """Filtration time to collect V [m^3] [s], vectorised."""
        scale = self.medium_constant * self.V0
        if type(V) is float:  # a cycle's few volumes: no closures made for them
            return scale * self._point(V)[1]
        return self._each(V, lambda v: scale * self._point(v)[1], lambda v: self._points(v)[1])

    def rate(self, V):
        """Filtrate flow at V [m^3/s]: Q = psi / B, vectorised."""
        if type(V) is float:
            return self._point(V)[0] / self.medium_constant
        return self._each(V, lambda v: self._point(v)[0] / self.medium_constant, lambda v: self._points(v)[0])

    def pressure_at(self, V):
        """The held pressure drop at every volume [Pa]."""
        if isinstance(V, float) or np.ndim(V) == 0:
            return self.pressure
        return np.full(np.shape(V), self.pressure)

    def volume(self, t):
        """Filtrate volume at time t [s] [m^3], vectorised (see :func:`_volume_at`)."""
        per_scale = 1.0 / (self.medium_constant * self.V0)

        def at_array(t):
            out = np.empty(t.shape)
            _volumes_at(np.ascontiguousarray(t), per_scale, self.V0, *self._args, out)
            return out

        return self._each(t, lambda x: self.V0 * _volume_at(x * per_scale, *self._args), at_array)

    def optimum_volume(self, downtime: float, wash_coefficient: float) -> float:
        r"""The end volume of the highest throughput V / (t + a V/Q + t_d) [m^3].

        The throughput rises while g = T - V dT/dV = t + t_d - V/Q - a V^2 (1/Q)' > 0, falling
        in V because 1/Q is convex; in the shares (derived here)

        .. math:: g = t + t_d - \frac{B V}{\psi}\left(1 + \frac{a \phi}{1 - s\psi}\right)

        (s = 0: V^* = sqrt(t_d/(K_p (1/2 + a))), the closed form). Solved as
        ln(B V (1 + a phi/(1 - s psi))/psi) = ln(t + t_d) by Newton's method in z in a shrinking
        bracket, from the s = 0 optimum. Tested against a brute-force grid.
        """
        if not downtime > 0.0:
            return 0.0
        tau = float(downtime) / (self.medium_constant * self.V0)  # a float: one compiled kind
        return self.V0 * _peak_volume(tau, float(wash_coefficient), *self._args)

    def first_volume_where(self, quantity: str, level: float, V_limit: float) -> float | None:
        """The first volume in [0, V_limit] [m^3] where 1/Q ("reciprocal_rate" [s/m^3]) reaches
        ``level`` (psi = B/level: V explicit) or the pressure ("pressure" [Pa]) does (held: at
        once or never), else None."""
        if quantity == "pressure":
            return 0.0 if self.pressure >= level else None
        B = self.medium_constant
        if B >= level:
            return 0.0
        psi = B / level
        phi = (level - B) / level
        V = self.V0 * phi ** self.r / psi
        return V if V <= V_limit else None


def _warm_up() -> None:
    """Each compiled function loaded (or compiled, the first time) for every kind of argument a
    request passes (floats; writable and read-only arrays), so that no request pays for it."""
    curve = CakeBasisPressureCurve(7e5, 0.01, 1e9, 0.3)
    V = np.linspace(0.0, 1.0, 3)
    frozen = V.copy()
    frozen.flags.writeable = False
    for volumes in (V, frozen, 0.5):
        curve.volume(curve.time(volumes))
        curve.rate(volumes)
    curve.optimum_volume(1800.0, 0.2)
    curve._share(0.5)
    curve._J(0.5, 0.5)


_warm_up()
