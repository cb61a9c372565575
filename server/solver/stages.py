"""The stages after filtration, in their order: wash, membrane squeeze, air blow.

Each stage is declared once here: what it needs (its settings: washing.py and washquality.py,
expression.py, blowing.py), what it takes of the cycle's time and what it does to the cake.
:class:`Treatment` runs them in the engineer's order for cycles ending at filtrate volumes V
(vectorised over V) and, under specifications (:class:`Specs`), chooses the durations left
free (squeeze, blow, wash) as short as the specifications allow. The whole cycle then adds
fill, filtration, these stages and downtime in one place (cycle.CycleFamily.stage_times).

The cake's state between stages (per unit filter area; the filter area counts both faces of
every chamber, so per face of a chamber):

- omega, its solids volume [m] (fixed by filtration: (1 - eps) v V / A);
- e, its void ratio [-] (e0 = eps / (1 - eps) after filtration, lowered by the squeeze);
- saturated until blown.

Liquid per dry solids is proportional to e (saturated cake), so the moisture after a squeeze
follows from the filtration moisture: X = e (m - 1) / e0, moisture = X / (1 + X).

Assumptions (stated on the page and in the README):

- the wash through a squeezed cake meets the cake resistance scaled by Kozeny–Carman,
  alpha ∝ (1 + e)^2 / e^3 (Carman; Coulson & Richardson Vol. 2, 5th ed., section 4.2), with the
  cloth as in filtration;
- the washed cake keeps its void ratio (a wash displaces the liquor, it does not compress);
- the blow is the last stage (a blown cake is no longer saturated: neither the wash nor the
  squeeze model applies to it); the lab blow curve, measured at the press's blow pressure,
  gives the shape of the drying in reduced liquid content (blowing.Blow.moisture_after): the
  press cake starts from its own moisture and tends to the curve's end;
- a free squeeze runs to at most U_c = 0.999 (common practice, no source: the last tenth of a
  per cent takes very long).
"""

from dataclasses import dataclass

import numpy as np

from .blowing import Blow
from .errors import SolverInputError
from .expression import Squeeze
from .washing import wash_time
from .washquality import WashModel, exit_concentration

STAGES = ("wash", "squeeze", "blow")
#: the highest consolidation ratio a squeeze is run to when the optimum chooses its time
SQUEEZE_CAP = 0.999
#: points of the search over the squeeze's consolidation ratio when the blow is free too
_U_GRID = 33
#: golden-section steps after the grid: the bracket of two grid steps shrinks to ~1e-8
_GOLDEN_STEPS = 32


@dataclass(frozen=True)
class Specs:
    """What the cake must meet at discharge: moisture at most, solute removal at least [-]."""

    max_moisture: float | None = None
    min_solute_removal: float | None = None

    def __post_init__(self):
        for name in ("max_moisture", "min_solute_removal"):
            value = getattr(self, name)
            if value is not None and not 0.0 < value < 1.0:
                raise SolverInputError(name, f"must be between 0 and 1 (exclusive); got {value:.6g}")


def stage_order(order, present) -> tuple:
    """The stages that run, in order: ``order`` lists stage names (a permutation of some of
    STAGES), ``present`` the stages the cycle has. The blow must come last."""
    order = tuple(order)
    unknown = [s for s in order if s not in STAGES]
    if unknown or len(set(order)) != len(order):
        raise SolverInputError("stages", f"list each of {', '.join(STAGES)} at most once; got {list(order)}")
    missing = [s for s in present if s not in order]
    if missing:
        raise SolverInputError("stages", f"the cycle has {' and '.join(missing)} but the stage order leaves "
                               f"{'it' if len(missing) == 1 else 'them'} out")
    run = tuple(s for s in order if s in present)
    if "blow" in run and run[-1] != "blow":
        raise SolverInputError("stages", "the blow must be the last stage: a blown cake is no longer saturated, "
                               "and neither the wash nor the squeeze model applies to it")
    return run


class Treatment:
    """The stages after filtration for cycles ending at V [m^3] (vectorised).

    Parameters
    ----------
    filtration : feeds.Filtration
        For the cake after filtration (porosity, v, m) and the cloth.
    filter_area : float
        [m^2], both faces of every chamber.
    cycle : cycle.CycleSettings
        The stages' settings and the specifications.
    curve :
        The filtration curve (final rate and pressure for the wash).
    """

    def __init__(self, filtration, filter_area: float, cycle, curve):
        self.f, self.A, self.cycle, self.curve = filtration, filter_area, cycle, curve
        eps = filtration.porosity
        self.e0 = eps / (1.0 - eps)
        self.liquid_per_void = (filtration.wet_to_dry_ratio - 1.0) / self.e0  # X = e * this
        specs = cycle.specs or Specs()
        self.specs = specs
        sq: Squeeze | None = cycle.squeeze
        if sq is not None and not sq.final_void_ratio < self.e0:
            eq = sq.final_void_ratio / (1.0 + sq.final_void_ratio)
            raise SolverInputError(
                "squeeze.final_porosity", f"the squeezed cake's equilibrium porosity {eq:.4g} is not below the "
                f"cake's porosity after filtration {eps:.4g}: the squeeze would remove nothing",
                also=("squeeze.final_moisture",))
        self.model: WashModel | None = cycle.wash_model
        # the wash ratio in pore volumes when it is fixed by a target or a specification
        self.W_fixed = None
        self.wash_free = False
        if cycle.wash_removal_target is not None:
            if self.model is None:
                raise SolverInputError("wash_model", "a wash target needs a wash model (dispersion or efficiency)",
                                       also=("wash_target",))
            self.W_fixed = self.model.wash_ratio_for(cycle.wash_removal_target, cycle.wash_target_field)
        elif specs.min_solute_removal is not None:
            if self.model is None:
                raise SolverInputError("wash_model", "a solute removal specification needs a wash model "
                                       "(dispersion or efficiency)", also=("specs.min_solute_removal",))
            if cycle.wash_ratio == 0.0:  # no wash volume given: the specification sets it
                self.W_fixed = self.model.wash_ratio_for(specs.min_solute_removal, "specs.min_solute_removal")
                self.wash_free = True
        if cycle.wash_removal_target is not None and cycle.wash_ratio > 0.0:
            raise SolverInputError("wash_target", "give the wash as a ratio or as a target, not both",
                                   also=("wash_ratio",))
        present = []
        if cycle.wash_ratio > 0.0 or self.W_fixed is not None:
            present.append("wash")
        if sq is not None:
            present.append("squeeze")
        if cycle.blow is not None:
            present.append("blow")
        self.order = stage_order(cycle.order, present)
        self.squeeze_free = sq is not None and sq.free and specs.max_moisture is not None
        self.blow_free = cycle.blow is not None and cycle.blow.free and specs.max_moisture is not None
        if sq is not None and sq.free and not self.squeeze_free:
            raise SolverInputError("squeeze.time", "give the squeeze a time or a consolidation ratio, or a "
                                   "specification of the cake moisture for the best cycle to choose it",
                                   also=("squeeze.consolidation",))
        if cycle.blow is not None and cycle.blow.free and not self.blow_free:
            raise SolverInputError("blow.time", "give the blow a time or a target moisture, or a specification of "
                                   "the cake moisture for the best cycle to choose it",
                                   also=("blow.target_moisture",))
        self._F_table = None  # (W grid, removal) for a vectorised dispersion removal
        self._W_exact = None  # the removal of a wash ratio fixed in pore volumes, exact

    # ---- the closed-form optimum still holds when the stages add nothing V-nonlinear ----
    @property
    def adds_only_wash(self) -> bool:
        """Only a wash proportional to V (no squeeze, no blow): the closed form holds."""
        return self.order in ((), ("wash",))

    def wash_per_filtrate(self) -> float:
        """Wash volume per filtrate volume for a wash through the unsqueezed cake [-]."""
        c, f = self.cycle, self.f
        if self.W_fixed is not None:
            return self.W_fixed * f.porosity * f.cake_volume_ratio
        if c.wash_basis == "filtrate" or c.wash_ratio == 0.0:
            return c.wash_ratio
        return c.wash_ratio * f.porosity * f.cake_volume_ratio

    # ---- the stages ------------------------------------------------------------------
    def _removal(self, W):
        """Solute removed after W pore volumes [-], vectorised (dispersion: a table)."""
        m = self.model
        if m.model == "efficiency":
            return m.removal(W)
        W = np.asarray(W, dtype=float)
        top = float(np.max(W, initial=0.0))
        if self._F_table is None or self._F_table[0][-1] < top:
            hi = max(4.0, 2.0 * top)
            Dn = m.dispersion_number
            width = 8.0 / np.sqrt(Dn)
            grid = np.unique(np.concatenate((np.linspace(0.0, hi, 4001),
                                             np.linspace(max(0.0, 1.0 - width), 1.0 + width, 4001))))
            c = exit_concentration(grid, Dn)
            F = np.concatenate(([0.0], np.cumsum(0.5 * (c[1:] + c[:-1]) * np.diff(grid))))
            # trapezoids leave an error of ~1e-9 here; anchor to the exact value at the top
            F *= m.removal(grid[-1]) / F[-1]
            self._F_table = (grid, F)
        grid, F = self._F_table
        return np.interp(W, grid, F)

    def evaluate(self, V, U_squeeze=None, blow_time=None, squeeze_time=None) -> dict:
        """Run the stages for cycles ending at V (vectorised): each stage's time [s] and what
        it leaves. ``U_squeeze`` (or ``squeeze_time``) / ``blow_time`` set a free squeeze's
        consolidation ratio (or its time) and a free blow's time (arrays broadcast with V)."""
        V = np.asarray(V, dtype=float)
        f, A, c = self.f, self.A, self.cycle
        zeros = np.zeros_like(V)
        omega = (1.0 - f.porosity) * f.cake_volume_ratio * V / A  # solids volume per face area
        e = np.full_like(V, self.e0)
        out = {"wash_time": zeros, "squeeze_time": zeros, "blow_time": zeros, "wash_volume": zeros,
               "wash_pore_volumes": zeros, "solute_removal": None, "squeeze_filtrate_volume": zeros,
               "consolidation": zeros, "moisture": zeros, "cake_thickness_final": zeros}
        saturated_moisture = None
        for stage in self.order:
            if stage == "wash":
                pores = A * omega * e
                if self.W_fixed is not None:
                    W = np.full_like(V, self.W_fixed)
                elif c.wash_basis == "cake_pores":
                    W = np.full_like(V, c.wash_ratio)
                else:
                    with np.errstate(divide="ignore", invalid="ignore"):
                        W = np.where(pores > 0, c.wash_ratio * V / np.where(pores > 0, pores, 1.0), 0.0)
                Vw = W * pores
                out["wash_volume"], out["wash_pore_volumes"] = Vw, W
                out["wash_time"] = self._wash_time(V, Vw, e)
                if self.model is not None:
                    if self.W_fixed is not None or c.wash_basis == "cake_pores":  # one ratio: exact
                        if self._W_exact is None:
                            self._W_exact = float(self.model.removal(float(W.flat[0]) if W.size else 0.0))
                        out["solute_removal"] = np.full_like(V, self._W_exact)
                    else:
                        out["solute_removal"] = np.asarray(self._removal(W), dtype=float) * np.ones_like(V)
            elif stage == "squeeze":
                sq = c.squeeze
                if squeeze_time is not None:
                    t = np.broadcast_to(np.asarray(squeeze_time, dtype=float), V.shape)
                    U = np.asarray(sq.ratio(t, np.where(omega > 0, omega, 1.0)), dtype=float)
                elif U_squeeze is not None:
                    U = np.broadcast_to(np.asarray(U_squeeze, dtype=float), V.shape)
                    t = np.asarray(sq.time_for(U, np.where(omega > 0, omega, 1.0)), dtype=float)
                elif sq.time is not None:
                    t = np.full_like(V, sq.time)
                    U = np.asarray(sq.ratio(t, np.where(omega > 0, omega, 1.0)), dtype=float)
                elif sq.consolidation is not None:
                    U = np.full_like(V, sq.consolidation)
                    t = np.asarray(sq.time_for(U, np.where(omega > 0, omega, 1.0)), dtype=float)
                else:
                    U, t = zeros, zeros
                e_before = e
                e = e - U * (e - sq.final_void_ratio)
                out["squeeze_time"], out["consolidation"] = t, U
                out["squeeze_filtrate_volume"] = A * omega * (e_before - e)
            elif stage == "blow":
                X = e * self.liquid_per_void
                saturated_moisture = X / (1.0 + X)
                thickness = omega * (1.0 + e)
                b: Blow = c.blow
                if blow_time is not None:
                    t = np.broadcast_to(np.asarray(blow_time, dtype=float), V.shape)
                elif b.time is not None:
                    t = np.full_like(V, b.time)
                elif b.target_moisture is not None:
                    t = np.asarray(b.time_to(b.target_moisture, np.where(thickness > 0, thickness, 1.0),
                                             saturated_moisture))
                else:
                    t = zeros
                out["blow_time"] = np.asarray(t, dtype=float) * np.ones_like(V)
        X = e * self.liquid_per_void
        moisture = X / (1.0 + X)
        thickness = omega * (1.0 + e)
        if "blow" in self.order:
            moisture = self.cycle.blow.moisture_after(out["blow_time"], np.where(thickness > 0, thickness, 1.0),
                                                      saturated_moisture)
        out["moisture"], out["cake_thickness_final"] = moisture, thickness
        out["void_ratio"] = e
        return out

    def _wash_time(self, V, Vw, e):
        """Wash time [s]: the final filtration rate, scaled for washing (through or simple),
        viscosity and pressure, and for a squeezed cake by Kozeny–Carman."""
        c, f = self.cycle, self.f
        mu = f.viscosity
        rate = self.curve.rate(V)
        if c.wash_pressure is None:
            p_end = p_w = 1.0
        else:
            p_end, p_w = self.curve.pressure_at(V), c.wash_pressure
        t = wash_time(Vw, rate, c.washing, mu, c.wash_viscosity or mu, p_end, p_w)
        if np.all(e == self.e0):
            return np.asarray(t, dtype=float) * np.ones_like(V)
        # the cake's share of the resistance at the end of filtration, then scaled
        with np.errstate(divide="ignore", invalid="ignore"):
            total = np.asarray(self.curve.pressure_at(V), dtype=float) * self.A / (mu * rate)
        cake = np.maximum(total - f.medium_resistance, 0.0)
        kozeny = ((1.0 + e) ** 2 / e ** 3) / ((1.0 + self.e0) ** 2 / self.e0 ** 3)
        with np.errstate(divide="ignore", invalid="ignore"):
            factor = np.where(total > 0, (cake * kozeny + f.medium_resistance) / total, 1.0)
        return np.asarray(t, dtype=float) * factor

    # ---- free durations under the specifications ---------------------------------------
    def run(self, V) -> dict:
        """The stages for cycles ending at V, with free durations the shortest that meet the
        moisture specification (or the closest the stages can come); adds ``meets`` and
        ``binds`` (per specification)."""
        shape = np.shape(V)
        V = np.atleast_1d(np.asarray(V, dtype=float)).ravel()
        spec = self.specs.max_moisture
        if not (self.squeeze_free or self.blow_free):
            out = self.evaluate(V)
        elif self.squeeze_free and not self.blow_free:
            out = self._free_squeeze(V, spec)
        elif self.blow_free and not self.squeeze_free:
            out = self.evaluate(V, blow_time=self._blow_needed(V, spec, None))
        else:
            out = self._free_squeeze_and_blow(V, spec)
        meets_moisture = out["moisture"] <= spec * (1 + 1e-9) if spec is not None else np.ones(V.shape, bool)
        removal = out["solute_removal"]
        need = self.specs.min_solute_removal
        meets_removal = (removal >= need * (1 - 1e-9)) if (need is not None and removal is not None) else (
            np.zeros(V.shape, bool) if need is not None else np.ones(V.shape, bool))
        out["meets_moisture"], out["meets_removal"] = meets_moisture, meets_removal
        return {k: (v.reshape(shape) if isinstance(v, np.ndarray) else v) for k, v in out.items()}

    def _blow_needed(self, V, spec, U, state=None):
        """Blow time that brings the cake to the moisture spec (or the lab curve's end), from
        the cake's state before the blow (worked out here unless given)."""
        b = self.cycle.blow
        if state is None:
            state = self.evaluate(V, U_squeeze=U, blow_time=0.0)
        thickness = np.where(state["cake_thickness_final"] > 0, state["cake_thickness_final"], 1.0)
        goal = np.maximum(spec, b.lowest_moisture)
        X = state["void_ratio"] * self.liquid_per_void
        entering = X / (1.0 + X)
        t = np.asarray(b.time_to(goal, thickness, entering), dtype=float) * np.ones_like(V)
        return np.where(entering <= spec, 0.0, t)

    def _free_squeeze(self, V, spec):
        if "blow" in self.order:  # a blow after the squeeze (its own time or target): search the split
            return self._search_squeeze(V, spec, blow_free=False)
        sq = self.cycle.squeeze
        # moisture falls linearly in e, e linearly in U: the ratio that just meets the spec
        X_spec = spec / (1.0 - spec)
        e_spec = X_spec / self.liquid_per_void
        span = self.e0 - sq.final_void_ratio
        U_needed = (self.e0 - e_spec) / span
        U = np.full(V.shape, min(max(U_needed, 0.0), SQUEEZE_CAP))
        return self.evaluate(V, U_squeeze=U)

    def _omega(self, V):
        """Solids volume per face area [m] of the cakes ending at V (never 0: a placeholder 1)."""
        f = self.f
        omega = (1.0 - f.porosity) * f.cake_volume_ratio * np.asarray(V, dtype=float) / self.A
        return np.where(omega > 0, omega, 1.0)

    def _free_squeeze_and_blow(self, V, spec):
        return self._search_squeeze(V, spec, blow_free=True)

    def _search_squeeze(self, V, spec, blow_free: bool):
        """A free squeeze followed by a blow (free, or its own time or target): the squeeze time
        of least total time that meets the moisture spec (a grid of squeeze times up to the capped
        squeeze, then golden-section steps around the best grid point). Squeeze times, not ratios,
        are searched: the squeeze's state follows from a time directly, with no inversion (creep
        makes one costly). Where none meets the spec, the cycle that comes closest in moisture
        (then the shortest) is taken."""
        V = np.asarray(V, dtype=float)
        b, sq = self.cycle.blow, self.cycle.squeeze
        om = self._omega(V)
        t_cap = np.asarray(sq.time_for(np.full(V.shape, SQUEEZE_CAP), om), dtype=float)
        xs = np.linspace(0.0, 1.0, _U_GRID) ** 2  # shares of the capped squeeze's time, denser early

        def total(x):
            if blow_free:
                st = self.evaluate(V, squeeze_time=x * t_cap, blow_time=0.0)
                t_b = self._blow_needed(V, spec, None, st)
                X = st["void_ratio"] * self.liquid_per_void
                m = b.moisture_after(t_b, np.where(st["cake_thickness_final"] > 0, st["cake_thickness_final"], 1.0),
                                     X / (1.0 + X))
            else:
                st = self.evaluate(V, squeeze_time=x * t_cap)
                t_b, m = st["blow_time"], st["moisture"]
            time = st["squeeze_time"] + st["wash_time"] + t_b
            # a cycle that misses the spec ranks after every one that meets it, by how far it misses
            miss = np.maximum(np.asarray(m) - spec * (1 + 1e-12), 0.0)
            return np.where(miss > 0.0, 1e30 * (1.0 + miss), time)

        T = np.stack([total(np.full(V.shape, x)) for x in xs])
        k = np.argmin(T, axis=0)
        a, c = xs[np.maximum(k - 1, 0)], xs[np.minimum(k + 1, xs.size - 1)]
        g = (np.sqrt(5.0) - 1.0) / 2.0
        x1, x2 = c - g * (c - a), a + g * (c - a)
        f1, f2 = total(x1), total(x2)
        for _ in range(_GOLDEN_STEPS):
            left = f1 <= f2
            c = np.where(left, x2, c)
            a = np.where(left, a, x1)
            x1n = np.where(left, c - g * (c - a), x2)
            x2n = np.where(left, x1, a + g * (c - a))
            f1n = np.where(left, total(x1n), f2)
            f2n = np.where(left, f1, total(x2n))
            x1, x2, f1, f2 = x1n, x2n, f1n, f2n
        x = np.where(f1 <= f2, x1, x2)
        x = np.where(np.minimum(f1, f2) <= T[k, np.arange(V.size)], x, xs[k])
        if not blow_free:
            return self.evaluate(V, squeeze_time=x * t_cap)
        st = self.evaluate(V, squeeze_time=x * t_cap, blow_time=0.0)
        return self.evaluate(V, squeeze_time=x * t_cap, blow_time=self._blow_needed(V, spec, None, st))
