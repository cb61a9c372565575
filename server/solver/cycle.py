"""The press cycle: filtration, washing and downtime, its optimum and the chamber limit.

Cycle time T = t_f + t_w + t_d; filtrate throughput Q = V / T; dry solids throughput
c Q. At constant pressure Q(V) has one peak: the unconstrained optimum is the tangent to
V(t) from (-t_d, 0) (the classic graphical construction), the chambers cap V at V_full, and
the best feasible cycle is at min(V*, V_full). Other feeds (pressure steps above all) may
give several peaks: their optimum is found by a global scan (:func:`peak_scan`) and the best
feasible cycle is the highest throughput in (0, V_full].

References: McCabe, Smith & Harriott, Unit Operations of Chemical Engineering, chapter
"Filtration" (cycle time of batch filters); Coulson & Richardson's Chemical Engineering
Vol. 2, 5th ed., section 7.3 and Example 7.2.
"""

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize_scalar

from .blowing import Blow
from .curves import unit_steps
from .errors import SolverInputError, in_bar, inputs_of
from .expression import Squeeze
from .feeds import Filtration
from .press import Press, chambers_full_volume
from .stages import STAGES, Specs, Treatment
from .washing import wash_rate_divisor, wash_time
from .washquality import WashModel

LIMITED_BY_OPTIMUM = "optimum"
LIMITED_BY_CHAMBERS = "chambers_full"

#: Below this chamber fill at the best cycle a warning says the cakes may discharge badly
#: (common practice, no source).
LOW_FILL_WARNING = 0.5


@dataclass(frozen=True)
class CycleSettings:
    """Everything in a cycle that is not filtration (all SI).

    Attributes
    ----------
    downtime : float
        Open, discharge, clean, close and other fixed steps per cycle [s], > 0.
    wash_ratio : float
        Wash volume per filtrate volume, or per cake pore volume with wash_basis
        "cake_pores" [-], >= 0.
    washing : str
        "through" (wash rate 1/4 of the final filtration rate) or "simple" (equal).
    wash_pressure : float or None
        [Pa]; None: the pressure at the end of filtration.
    wash_viscosity : float or None
        [Pa*s]; None: the filtrate viscosity.
    wash_basis : str
        "filtrate" or "cake_pores": what wash_ratio counts.
    wash_model : WashModel or None
        How the wash removes solute (stages.py); needed for a target or a specification.
    wash_removal_target : float or None
        Wash until this fraction of the solute is removed [-] (instead of wash_ratio).
    squeeze : Squeeze or None
        A membrane squeeze (expression.py).
    blow : Blow or None
        An air blow (blowing.py).
    order : tuple of str
        The order of the stages after filtration (names from stages.STAGES).
    specs : Specs or None
        Moisture and solute removal the discharged cake must meet.
    fill_time : float
        Filling the chambers before filtration [s], or with ``fill_flow`` worked out per press.
    fill_flow : float or None
        Fill the chamber volume plus ``manifold_volume`` at this flow [m^3/s] (a pump's maximum).
    manifold_volume : float
        [m^3] filled with the chambers.
    """

    downtime: float
    wash_ratio: float = 0.0
    washing: str = "through"
    wash_pressure: float | None = None
    wash_viscosity: float | None = None
    wash_basis: str = "filtrate"
    wash_model: WashModel | None = None
    wash_removal_target: float | None = None
    #: the input the target came from (its errors name it): solute_removal or solute_remaining
    wash_target_field: str = "wash_target.solute_removal"
    squeeze: Squeeze | None = None
    blow: Blow | None = None
    order: tuple = STAGES
    specs: Specs | None = None
    fill_time: float = 0.0
    fill_flow: float | None = None
    manifold_volume: float = 0.0

    @property
    def has_stages(self) -> bool:
        """Anything after filtration beyond a plain wash: the stages module runs the cycle."""
        return (self.squeeze is not None or self.blow is not None or self.wash_model is not None
                or self.wash_removal_target is not None or self.specs is not None)

    def fill_time_for(self, press) -> float:
        """Filling time [s] for a press: as given, or its chambers and manifold at fill_flow."""
        if self.fill_flow is None:
            return self.fill_time
        return (press.chamber_volume + self.manifold_volume) / self.fill_flow

    def __post_init__(self):
        if not self.downtime > 0.0:
            raise SolverInputError(
                "downtime", f"every press cycle has some downtime: must be > 0 s; got {self.downtime:.6g}"
            )
        if not self.wash_ratio >= 0.0:
            raise SolverInputError("wash_ratio", f"must be >= 0; got {self.wash_ratio:.6g}")
        wash_rate_divisor(self.washing)
        if self.wash_basis not in ("filtrate", "cake_pores"):
            raise SolverInputError("wash_basis", f"must be 'filtrate' or 'cake_pores'; got {self.wash_basis!r}")
        for name in ("wash_pressure", "wash_viscosity"):
            value = getattr(self, name)
            if value is not None and not value > 0.0:
                raise SolverInputError(name, f"must be > 0; got {value:.6g}")
        if not self.fill_time >= 0.0:
            raise SolverInputError("fill_time", f"must be >= 0 s; got {self.fill_time:.6g}")
        if self.fill_flow is not None and not self.fill_flow > 0.0:
            raise SolverInputError("fill_time", "filling at the pump's flow needs a pump flow above 0")


@dataclass(frozen=True)
class CycleResult:
    """One press cycle ended after ``filtrate_volume`` of filtrate (all SI)."""

    filtrate_volume: float  # m^3 per cycle
    filtration_time: float  # s
    wash_volume: float  # m^3
    wash_time: float  # s
    downtime: float  # s
    cycle_time: float  # s
    filtrate_throughput: float  # m^3/s
    solids_throughput: float  # kg/s dry solids
    cake_thickness: float  # m, per face
    chamber_fill: float  # cake volume / chamber volume
    dry_cake_mass: float  # kg per cycle
    wet_cake_mass: float  # kg per cycle
    final_rate: float  # m^3/s at the end of filtration
    final_pressure: float  # Pa at the end of filtration
    limited_by: str
    feasible: bool  # the cake fits the chambers (within the fill fraction)
    # the whole cycle's other stages (zero or None when the cycle has none)
    fill_time: float = 0.0  # s
    squeeze_time: float = 0.0  # s
    blow_time: float = 0.0  # s
    squeeze_filtrate_volume: float = 0.0  # m^3 per cycle
    consolidation: float | None = None  # U_c reached by the squeeze
    wash_pore_volumes: float | None = None  # wash ratio in cake pore volumes
    wash_filtrate_volumes: float | None = None  # wash volume / filtrate volume
    solute_removal: float | None = None  # fraction of the cake liquor's solute removed
    moisture: float | None = None  # of the discharged cake
    cake_thickness_final: float | None = None  # m per face, at discharge
    meets_specs: bool | None = None  # every specification met (None: none given)


_CYCLE_FIELDS = tuple(CycleResult.__dataclass_fields__)


def cycle_result(values) -> CycleResult:
    """The CycleResult of its field values, all of them in field order: the same object as
    ``CycleResult(*values)`` without the frozen dataclass's __init__ (one object.__setattr__
    per field, most of the cost of a closed-form cycle). Tested against the constructor in
    tests/solver/test_cycle.py."""
    result = object.__new__(CycleResult)
    result.__dict__.update(zip(_CYCLE_FIELDS, values, strict=True))
    return result


@dataclass(frozen=True)
class PressSystem:
    """Everything a scenario's cycle depends on: cake and cloth, press, feed and cycle settings."""

    filtration: Filtration
    press: Press
    feed: object  # a feed mode from feeds.py
    cycle: CycleSettings


END_CRITERIA = ("best", "chambers_full", "time", "flow", "pressure")
#: The threshold each end criterion needs: exactly one of these names.
END_THRESHOLDS = {"time": ("time",), "pressure": ("pressure",), "flow": ("flow", "flow_per_area", "flow_fraction")}


@dataclass(frozen=True)
class EndCriterion:
    """How the engineer ends filtration (all SI).

    criterion "best" (highest throughput within the chambers), "chambers_full", "time"
    (``time`` [s]), "flow" (one of ``flow`` [m^3/s], ``flow_per_area`` [m/s] or
    ``flow_fraction`` of the initial flow [-]) or "pressure" (``pressure`` [Pa]).
    """

    criterion: str = "best"
    time: float | None = None
    flow: float | None = None
    flow_per_area: float | None = None
    flow_fraction: float | None = None
    pressure: float | None = None

    def __post_init__(self):
        if self.criterion not in END_CRITERIA:
            raise SolverInputError(
                "criterion", f"must be one of {', '.join(END_CRITERIA)}; got {self.criterion!r}"
            )
        names = END_THRESHOLDS.get(self.criterion, ())
        given = [n for n in names if getattr(self, n) is not None]
        if names and len(given) != 1:
            raise SolverInputError(
                names[0], f"the {self.criterion!r} end criterion needs exactly one of {' or '.join(names)}"
            )
        for n in given:
            value = getattr(self, n)
            if not value > 0.0 or (n == "flow_fraction" and not value < 1.0):
                allowed = "between 0 and 1 (exclusive)" if n == "flow_fraction" else "> 0"
                raise SolverInputError(n, f"must be {allowed}; got {value:.6g}")


@dataclass(frozen=True)
class EndResult:
    cycle: CycleResult
    end_reason: str  # optimum, chambers_full, time, flow or pressure
    throughput_ratio_to_best: float


@dataclass(frozen=True)
class CycleSolution:
    best: CycleResult
    unconstrained_optimum: CycleResult
    chambers_full: CycleResult
    at_end: EndResult
    chambers_full_volume: float  # m^3
    matched_chamber_thickness: float  # m: the chambers just fill at the optimum
    throughput_gain_unconstrained: float  # Q*/Q_best - 1: what the chamber limit costs
    curves: dict
    K_p: float | None = None
    B: float | None = None
    warnings: list[str] = field(default_factory=list)
    #: per specification: required, achieved at the best cycle, met, binds (None: no specs)
    specs: dict | None = None
    #: the stages after filtration, in their order
    stage_order: tuple = ()


def wash_per_filtrate(c: CycleSettings, f: Filtration) -> float:
    """Wash volume per filtrate volume [-]: the wash ratio itself, or ratio x cake pores."""
    if c.wash_basis == "filtrate" or c.wash_ratio == 0.0:
        return c.wash_ratio
    if f.porosity is None:
        raise SolverInputError("cycle.wash_basis", "washing by cake pore volumes needs the cake porosity")
    return c.wash_ratio * f.porosity * f.cake_volume_ratio  # pore volume = porosity x cake volume


class CycleFamily:
    """Every cycle one feed can run: its filtration curve with the wash and downtime that
    turn each end volume V into a whole cycle (one family member per V).

    Independent of chamber thickness: one CycleFamily serves a whole thickness comparison
    and every chart series (solver/sweeps.py).
    """

    def __init__(self, filtration: Filtration, filter_area: float, feed, cycle: CycleSettings, V_needed: float,
                 fill_time: float | None = None, curve=None):
        self.filtration, self.filter_area, self.feed, self.cycle = filtration, filter_area, feed, cycle
        self.V_needed = V_needed
        #: filling before filtration [s]: as given (fill_flow: worked out per press by the caller)
        self.fill_time = cycle.fill_time if fill_time is None else float(fill_time)
        self._crossings = {}  # end criterion -> (volume span searched, crossing volume or None)
        self.curve = curve if curve is not None else feed.curve(filtration, filter_area, 4.0 * V_needed)
        self.treatment = None
        if cycle.has_stages:
            with inputs_of("cycle"):
                self.treatment = Treatment(filtration, filter_area, cycle, self.curve)
        self.wash_per_filtrate = self._wash_per_filtrate()
        self.V_star = self._optimum_volume(V_needed)
        # A tabulated curve must reach well past the optimum; extend it when it does not.
        for _ in range(8):
            limit = getattr(self.curve, "V_max", None)
            if limit is None or self.V_star <= 0.5 * limit:
                break
            self.curve = feed.curve(filtration, filter_area, 4.0 * self.V_star)
            if self.treatment is not None:
                self.treatment.curve = self.curve
            self.V_star = self._optimum_volume(V_needed)

    def at_fill(self, fill_time: float) -> "CycleFamily":
        """The same feed's cycles with another filling time [s] (the curve is shared)."""
        return CycleFamily(self.filtration, self.filter_area, self.feed, self.cycle, self.V_needed, fill_time,
                           self.curve)

    def _wash_per_filtrate(self) -> float:
        if self.treatment is not None:
            return self.treatment.wash_per_filtrate()
        return wash_per_filtrate(self.cycle, self.filtration)

    def wash_time(self, V):
        c = self.cycle
        if self.wash_per_filtrate == 0.0:
            return 0.0 if isinstance(V, float) else np.zeros_like(np.asarray(V, dtype=float))
        mu = self.filtration.viscosity
        if c.wash_pressure is None:  # washed at the pressure filtration ended at: the ratio is 1
            final_pressure = wash_pressure = 1.0
        else:
            final_pressure, wash_pressure = self.curve.pressure_at(V), c.wash_pressure
        return wash_time(
            self.wash_per_filtrate * V, self.curve.rate(V), c.washing, mu, c.wash_viscosity or mu,
            final_pressure, wash_pressure,
        )

    def stages(self, V) -> dict | None:
        """What the stages after filtration do for cycles ending at V (stages.Treatment.run),
        or None when the cycle has only a plain wash."""
        return None if self.treatment is None else self.treatment.run(V)

    def stage_times(self, V, stages: dict | None = None) -> dict:
        """Each stage's time [s] for the cycle ending at V [m^3], vectorised, in cycle order:
        fill, filtration, the stages after it in their order, downtime."""
        if self.treatment is None:
            out = {"fill": self.fill_time, "filtration": self.curve.time(V), "wash": self.wash_time(V)}
        else:
            st = self.treatment.run(V) if stages is None else stages
            out = {"fill": self.fill_time, "filtration": self.curve.time(V)}
            for name in self.treatment.order:
                out[name] = st[f"{name}_time"]
        out["downtime"] = self.cycle.downtime
        return out

    @staticmethod
    def total(stage_times: dict):
        """The whole cycle time from its stages' times [s]."""
        return sum(stage_times.values())

    def cycle_time(self, V):
        """Whole cycle time [s] for an end volume V [m^3], vectorised: fill, filtration, the
        stages after it and downtime.

        The stages are listed in one place (stage_times) and added up in one (total): the
        results, the optimum and every chart series use them.
        """
        return self.total(self.stage_times(V))

    def throughput(self, V):
        """Filtrate throughput V / T [m^3/s], vectorised."""
        return V / self.cycle_time(V)

    def objective(self, V):
        """What the best cycle maximises: the throughput, with cycles that miss a
        specification ranked below every cycle that meets them (when none does, the closest
        cycles keep their order: the best of them is shown as the closest)."""
        if self.treatment is None or self.cycle.specs is None:
            return self.throughput(V)
        st = self.treatment.run(V)
        Q = V / self.total(self.stage_times(V, st))
        return np.where(st["meets_moisture"] & st["meets_removal"], Q, Q * 1e-6)

    def _optimum_volume(self, V_scale: float) -> float:
        closed_form = getattr(self.curve, "optimum_volume", None)
        linear_wash = self.treatment is None or (self.treatment.adds_only_wash and self.cycle.specs is None)
        if not linear_wash:
            closed_form = None  # a squeeze or a blow: their times are not linear in V
        c, mu = self.cycle, self.filtration.viscosity
        if closed_form is not None:  # one peak, in closed form
            self.scan = None
            p = self.curve.pressure
            p_w = c.wash_pressure if c.wash_pressure is not None else p
            a = wash_rate_divisor(c.washing) * self.wash_per_filtrate * ((c.wash_viscosity or mu) / mu) * (p / p_w)
            return closed_form(c.downtime + self.fill_time, a)
        curve = self.curve
        if (linear_wash and getattr(curve, "has_peak", False)
                and (c.wash_pressure is None or self.wash_per_filtrate == 0.0)):
            # a table (pump, constant rate on the cake basis) with the wash at the pressure
            # filtration ended at (the ratio is 1): its peaks worked out on the table, no scan
            a = wash_rate_divisor(c.washing) * self.wash_per_filtrate * ((c.wash_viscosity or mu) / mu)
            peaks = curve.peak_volumes(c.downtime + self.fill_time, a)
            if peaks.size:
                self.scan = table_peaks(peaks, self.throughput)
                return self.scan.V_best
        self.scan = peak_scan(self.objective, V_scale, getattr(curve, "knots", ()), getattr(curve, "held_from", 0.0),
                              refine_on_grids=self.treatment is not None)
        return self.scan.V_best

    def best_volume(self, V_full):
        """End volume of the best cycle whose cake fits in chambers that fill at ``V_full``
        [m^3], vectorised over V_full: the highest throughput in (0, V_full]."""
        if self.scan is None:  # a single peak: the optimum, or full chambers before it
            if isinstance(V_full, float):
                return min(self.V_star, V_full)
            out = np.minimum(self.V_star, V_full)
            return out if np.ndim(out) else float(out)
        return self.scan.best_within(V_full, self.objective)

    def result(self, press: Press, V: float, limited_by: str) -> CycleResult:
        if self.treatment is not None:
            return self.results(press, np.array([float(V)]), press.chamber_thickness, limited_by)[0]
        # plain floats: a closed-form scenario's few cycles cost microseconds (issue 12)
        f, v = self.filtration, self.filtration.cake_volume_ratio
        V = float(V)
        times = self.stage_times(V)
        T = float(self.total(times))
        c = f.solids_per_filtrate
        fill = float(press.chamber_fill(V, v))
        w = self.wash_per_filtrate
        thickness = float(press.cake_thickness(V, v))
        # CycleResult's fields in order (see cycle_result)
        return cycle_result((
            V, float(times["filtration"]), w * V, float(times["wash"]), float(times["downtime"]), T,
            V / T, c * V / T, thickness, fill, c * V, f.wet_to_dry_ratio * c * V,
            float(self.curve.rate(V)), float(self.curve.pressure_at(V)), limited_by,
            fill <= press.fill_fraction * (1.0 + 1e-12), float(self.fill_time),
            0.0, 0.0, 0.0, None, self._pore_volumes(w), w or None, None, 1.0 - 1.0 / f.wet_to_dry_ratio, thickness,
            None,
        ))

    def _pore_volumes(self, wash_per_filtrate: float) -> float | None:
        """A plain wash counted in the cake's pore volumes [-] (the volume that displaces the
        liquor: what a wash model would take), or None without a wash or a porosity."""
        f = self.filtration
        if not wash_per_filtrate or not f.porosity:
            return None
        return wash_per_filtrate / (f.porosity * f.cake_volume_ratio)

    def results(self, press: Press, V, chamber_thickness, limited_by) -> list[CycleResult]:
        """The cycles ending at ``V`` [m^3] in chambers of ``chamber_thickness`` [m] (arrays
        of one length, or one thickness; ``limited_by`` one reason or one per cycle), worked
        out together: a thickness comparison asks for all its cycles in one go."""
        f, v = self.filtration, self.filtration.cake_volume_ratio
        V = np.asarray(V, dtype=float)
        n = V.size

        def column(x):  # one value per cycle, as a list of plain floats
            x = np.asarray(x, dtype=float)
            return x.tolist() if x.shape == V.shape else [float(x)] * n

        st = self.stages(V)
        times = self.stage_times(V, st)
        T = np.asarray(self.total(times), dtype=float)
        c = f.solids_per_filtrate
        fill = np.asarray(press.chamber_fill(V, v, chamber_thickness), dtype=float)
        feasible = (fill <= press.fill_fraction * (1.0 + 1e-12)).tolist()
        reasons = [limited_by] * n if isinstance(limited_by, str) else list(limited_by)
        thickness = column(press.cake_thickness(V, v))
        if st is None:
            wash_volume = self.wash_per_filtrate * V
            moisture = 1.0 - 1.0 / f.wet_to_dry_ratio
            pores = self._pore_volumes(self.wash_per_filtrate)
            extra = [[0.0] * n, [0.0] * n, [0.0] * n, [None] * n, [pores] * n,
                     column(self.wash_per_filtrate) if self.wash_per_filtrate else [None] * n,
                     [None] * n, [moisture] * n, thickness, [None] * n]
            wet = f.wet_to_dry_ratio * c * V
        else:
            wash_volume = st["wash_volume"]
            has = self.treatment.order
            moisture = st["moisture"]
            with np.errstate(divide="ignore", invalid="ignore"):
                per_filtrate = np.where(V > 0, wash_volume / np.where(V > 0, V, 1.0), 0.0)
            extra = [column(times.get("squeeze", 0.0)), column(times.get("blow", 0.0)),
                     column(st["squeeze_filtrate_volume"]),
                     column(st["consolidation"]) if "squeeze" in has else [None] * n,
                     column(st["wash_pore_volumes"]) if "wash" in has else [None] * n,
                     column(per_filtrate) if "wash" in has else [None] * n,
                     column(st["solute_removal"]) if st["solute_removal"] is not None else [None] * n,
                     column(moisture), column(st["cake_thickness_final"]),
                     (st["meets_moisture"] & st["meets_removal"]).tolist() if self.cycle.specs is not None
                     else [None] * n]
            wet = c * V / (1.0 - moisture)
        # columns in CycleResult's field order
        rows = zip(
            V.tolist(), column(times["filtration"]), column(wash_volume), column(times.get("wash", 0.0)),
            [float(self.cycle.downtime)] * n, T.tolist(), (V / T).tolist(), (c * V / T).tolist(),
            thickness, fill.tolist(), (c * V).tolist(), column(wet),
            column(self.curve.rate(V)), column(self.curve.pressure_at(V)), reasons, feasible,
            [float(self.fill_time)] * n, *extra, strict=True,
        )
        return [cycle_result(row) for row in rows]

    def end_volume(self, end: EndCriterion, V_best: float, V_full: float) -> tuple[float, str]:
        """Filtrate volume at which the end criterion stops filtration, and why."""
        if end.criterion == "best":
            return V_best, (LIMITED_BY_OPTIMUM if V_best < V_full else LIMITED_BY_CHAMBERS)
        if end.criterion == "chambers_full":
            return V_full, LIMITED_BY_CHAMBERS
        if end.criterion == "time":
            V = float(self.curve.volume(end.time))
            starts = getattr(self.curve, "starts", None)  # pressure steps: each step's start [s]
            if starts is not None and len(starts) > 1:
                # ended where a step starts: the step in progress is the one ending there (its
                # pressure and rate are the final ones), whichever side of the start rounding
                # put the volume (review finding: the final pressure flipped with the last bit)
                at = np.flatnonzero(np.abs(np.asarray(starts[1:]) - end.time) <= 1e-9 * max(abs(end.time), 1.0))
                if at.size:
                    V = float(np.nextafter(self.curve.V_starts[at[0] + 1], -np.inf))
            return (V, "time") if V < V_full else (V_full, LIMITED_BY_CHAMBERS)
        span = max(self.V_needed, V_full)
        known = self._crossings.get(end)
        if known is None or known[0] < span:
            # where the threshold is crossed does not depend on the chambers: found once for
            # every thickness the family serves, then capped by each one's full chambers
            V, reason = self._flow_end(end, span) if end.criterion == "flow" else self._pressure_end(end, span)
            known = (span, V if reason != LIMITED_BY_CHAMBERS else None)
            self._crossings[end] = known
        V_cross = known[1]
        if V_cross is not None and V_cross <= V_full:
            return V_cross, end.criterion
        return V_full, LIMITED_BY_CHAMBERS

    def _flow_end(self, end: EndCriterion, V_full: float) -> tuple[float, str]:
        with np.errstate(divide="ignore"):
            q0 = float(self.curve.rate(0.0))
        if end.flow_fraction is not None and not np.isfinite(q0):
            raise SolverInputError(
                "end.flow_fraction", "without cloth resistance the initial flow is unbounded: "
                "give the threshold as flow or flow_per_area instead",
            )
        if end.flow is not None:
            threshold, name = end.flow, "flow"
        elif end.flow_per_area is not None:
            threshold, name = end.flow_per_area * self.filter_area, "flow_per_area"
        else:
            threshold, name = end.flow_fraction * q0, "flow_fraction"
        if threshold >= q0:
            raise SolverInputError(
                f"end.{name}", f"the threshold {threshold * 3600:.4g} m³/h is not below the initial flow "
                f"{q0 * 3600:.4g} m³/h: filtration would end at once",
            )
        exact = getattr(self.curve, "first_volume_where", None)
        if exact is not None:  # a table: 1/Q linear on each segment, the crossing in closed form
            V = exact("reciprocal_rate", 1.0 / threshold, V_full)
            return (V_full, LIMITED_BY_CHAMBERS) if V is None else (V, "flow")
        return self._first_crossing(lambda V: threshold - self.curve.rate(V), V_full, "flow")

    def _pressure_end(self, end: EndCriterion, V_full: float) -> tuple[float, str]:
        top = float(self.feed.pressure_cap)
        start = float(self.curve.pressure_at(0.0))
        if end.pressure > top:
            raise SolverInputError(
                "end.pressure", f"the feed never reaches {in_bar(end.pressure)}: its highest pressure is {in_bar(top)}"
            )
        if start >= end.pressure:
            raise SolverInputError(
                "end.pressure", f"the feed is at {in_bar(start)} from the start, not below the terminal "
                f"pressure {in_bar(end.pressure)}: filtration would end at once",
            )
        exact = getattr(self.curve, "first_volume_where", None)
        if exact is not None:  # a table: the pressure linear on each segment, the crossing in closed form
            V = exact("pressure", end.pressure, V_full)
            return (V_full, LIMITED_BY_CHAMBERS) if V is None else (V, "pressure")
        return self._first_crossing(lambda V: self.curve.pressure_at(V) - end.pressure, V_full, "pressure")

    @staticmethod
    def _first_crossing(g, V_full: float, reason: str) -> tuple[float, str]:
        """First V in (0, V_full] where g(V) >= 0 (g rising through zero), else V_full.

        A grid of 4,097 volumes finds the first step where g turns non-negative (a dip of g
        shorter than a step could pass unseen, as between any grid's points); the same search
        inside that step, four times over with 1,025 points, narrows it to about 4e-16 of
        V_full (the floating-point resolution). Vectorised, and right where g jumps (pressure steps),
        where a root finder would not be.
        """
        grid = np.linspace(0.0, V_full, 4097)
        hits = np.nonzero(g(grid) >= 0.0)[0]
        if hits.size == 0:
            return V_full, LIMITED_BY_CHAMBERS
        k = int(hits[0])
        lo, hi = grid[max(k - 1, 0)], grid[k]
        for _ in range(4):
            if hi <= lo:
                break
            sub = np.linspace(lo, hi, 1025)
            j = int(np.argmax(g(sub) >= 0.0))  # g(hi) >= 0, so one exists
            lo, hi = sub[max(j - 1, 0)], sub[j]
        return float(hi), reason

    def curves(self, press: Press, V_full: float, n: int = 241) -> dict:
        """Equal-length arrays from the start of filtration to the chambers-full point (SI)."""
        with np.errstate(divide="ignore"):
            unbounded = not math.isfinite(self.curve.rate(0.0))  # no cloth: the first instant's flow
        V = V_full * (unit_steps(n + 1)[1:] if unbounded else unit_steps(n))
        V.flags.writeable = False  # a table then finds the segments once for all the curves
        pressure = self.curve.pressure_at(V)
        return {
            "time": self.curve.time(V),
            "filtrate_volume": V,
            "pressure": pressure if np.shape(pressure) == V.shape else np.full_like(V, pressure),
            "flow": self.curve.rate(V),
            "cake_thickness": press.cake_thickness(V, self.filtration.cake_volume_ratio),
        }


#: The best local peaks of a throughput scan that are refined (a flat tail can hold many).
MAX_REFINED_PEAKS = 24


@dataclass(frozen=True)
class ThroughputScan:
    """Throughput on a volume grid that holds every local peak, each refined.

    For feeds without a closed-form optimum the throughput may have several peaks as the
    cake builds (a low first pressure step, then a high one); the scan keeps them all, so
    the best cycle within any chamber volume is a look-up.
    """

    V: np.ndarray  # m^3, increasing
    Q: np.ndarray  # m^3/s
    best_upto: np.ndarray  # index of the highest Q at or below each V

    @property
    def V_best(self) -> float:
        return float(self.V[self.best_upto[-1]])

    def best_within(self, V_full, throughput):
        """The volume of highest throughput in (0, V_full] [m^3], vectorised over V_full."""
        V_full = np.asarray(V_full, dtype=float)
        k = np.searchsorted(self.V, V_full, side="right") - 1
        inside = self.V[self.best_upto[np.maximum(k, 0)]]
        Q_inside = np.where(k >= 0, self.Q[self.best_upto[np.maximum(k, 0)]], -np.inf)
        out = np.where(throughput(V_full) >= Q_inside, V_full, inside)
        return out if out.ndim else float(out)


#: zoom rounds of the grid refinement (each narrows a peak's bracket 16-fold: 4 rounds ~6e-8 of V)
GRID_REFINE_ROUNDS = 4


def _refine_on_grids(throughput, V, Q, peaks):
    """Each peak refined by zooming grids between its neighbours, all peaks in one vectorised
    call per round (for a throughput whose every call is costly but vectorised: a cycle whose
    free stage durations are searched at every volume)."""
    rows = np.arange(peaks.size)
    lo, up = V[np.maximum(peaks - 1, 0)], V[np.minimum(peaks + 1, V.size - 1)]
    best_V, best_Q = V[peaks].astype(float), Q[peaks].astype(float)
    share = np.linspace(0.0, 1.0, 33)
    for _ in range(GRID_REFINE_ROUNDS):
        grid = lo[:, None] + (up - lo)[:, None] * share[None, :]
        Qg = np.asarray(throughput(grid.ravel()), dtype=float).reshape(grid.shape)
        j = np.argmax(Qg, axis=1)
        found_V, found_Q = grid[rows, j], Qg[rows, j]
        better = found_Q > best_Q
        best_V, best_Q = np.where(better, found_V, best_V), np.where(better, found_Q, best_Q)
        step = (up - lo) / (share.size - 1)
        lo, up = np.maximum(best_V - step, lo), np.minimum(best_V + step, up)
    keep = best_Q > Q[peaks]
    return best_V[keep].tolist(), best_Q[keep].tolist()


def peak_scan(throughput, V_scale: float, knots=(), held_from: float = 0.0,
              refine_on_grids: bool = False) -> ThroughputScan:
    """Scan a throughput function for all its peaks, then refine each (global optimum).

    The grid runs log-spaced over nine decades up to past the last peak, with the curve's
    knots (step starts, switch points, table nodes) as extra grid points, so no peak of a
    step is passed over; every local maximum of the grid is refined by a bounded scalar
    optimiser (Brent's method) between its neighbours. Beyond ``held_from`` the feed is at
    one pressure (or moves monotonically along a pump curve) and the throughput has a single
    peak, which the upper end brackets by doubling.

    Parameters
    ----------
    throughput : callable
        Q(V) [m^3/s], vectorised over V [m^3].
    V_scale : float
        A volume of the right order, such as the chambers-full volume [m^3].
    knots : array_like
        Volumes where the filtration curve changes form [m^3]; those inside the scanned
        range become grid points.
    held_from : float
        Volume after which the throughput can have only one more peak [m^3] (the start of
        the last pressure step); the scan reaches past it.
    refine_on_grids : bool
        Refine the peaks by zooming grids (a few vectorised calls) instead of Brent's method
        (many scalar calls): for a costly throughput such as a cycle with free stages.
    """
    hi = max(V_scale, 2.0 * held_from)
    for _ in range(200):
        if throughput(2.0 * hi) <= throughput(hi):
            break
        hi *= 2.0
    hi *= 2.0
    V = np.geomspace(min(hi * 1e-9, V_scale * 1e-6), hi, 4001)
    knots = np.asarray(knots, dtype=float).ravel()
    knots = knots[np.isfinite(knots) & (knots > V[0]) & (knots < hi)]
    if knots.size:
        V = np.unique(np.concatenate((V, knots)))
    Q = np.asarray(throughput(V), dtype=float)
    rising_in = np.concatenate(([True], Q[1:] >= Q[:-1]))
    falling_out = np.concatenate((Q[:-1] >= Q[1:], [True]))
    peaks = np.nonzero(rising_in & falling_out)[0]
    peaks = peaks[np.argsort(Q[peaks])[::-1][:MAX_REFINED_PEAKS]]
    extra_V, extra_Q = [], []
    if refine_on_grids and peaks.size:
        extra_V, extra_Q = _refine_on_grids(throughput, V, Q, peaks)
        peaks = peaks[:0]
    for k in peaks:
        lo, up = V[max(k - 1, 0)], V[min(k + 1, V.size - 1)]
        res = minimize_scalar(lambda x: -throughput(x), bounds=(lo, up), method="bounded",
                              options={"xatol": up * 1e-12})
        if -res.fun > Q[k]:
            extra_V.append(float(res.x))
            extra_Q.append(float(-res.fun))
    if extra_V:
        order = np.argsort(np.concatenate((V, extra_V)), kind="stable")
        V = np.concatenate((V, extra_V))[order]
        Q = np.concatenate((Q, extra_Q))[order]
    # index of the running maximum (first of equals): the best cycle up to each volume
    running = np.maximum.accumulate(Q)
    new_best = np.concatenate(([True], running[1:] > running[:-1]))
    best_upto = np.maximum.accumulate(np.where(new_best, np.arange(V.size), 0))
    return ThroughputScan(V, Q, best_upto)


def table_peaks(V_peaks, throughput) -> ThroughputScan:
    """A :class:`ThroughputScan` of just the local peaks of the throughput, each exact (a
    table's :meth:`~.curves.TabulatedCurve.peak_volumes`): between peaks the throughput
    falls then rises, so the best cycle within any chamber volume is the best peak below it
    or the full chambers, as from a scan."""
    V = np.asarray(V_peaks, dtype=float)
    Q = np.asarray(throughput(V), dtype=float)
    running = np.maximum.accumulate(Q)
    new_best = np.concatenate(([True], running[1:] > running[:-1]))
    best_upto = np.maximum.accumulate(np.where(new_best, np.arange(V.size), 0))
    return ThroughputScan(V, Q, best_upto)


def numeric_optimum_volume(throughput, V_scale: float, knots=()) -> float:
    """Volume that maximises a throughput function over all volumes (global): the best point
    of :func:`peak_scan` (same parameters), scanned past the last knot."""
    return peak_scan(throughput, V_scale, knots, max(knots, default=0.0)).V_best


def _scalar_or_none(x):
    return float(x) if isinstance(x, float | int) else None


def solve_cycle(
    system: PressSystem, end: EndCriterion | None = None, family: CycleFamily | None = None, with_curves: bool = True
) -> CycleSolution:
    """Unconstrained optimum, chambers-full and best feasible cycles, and the cycle at the end criterion.

    ``family`` reuses a CycleFamily built for this system's feed and area; ``with_curves``
    False leaves ``curves`` empty (a thickness comparison does not need them).
    """
    end = end or EndCriterion()
    press = system.press
    v = system.filtration.cake_volume_ratio
    V_full = press.chambers_full_volume(v)
    if family is None:
        family = CycleFamily(system.filtration, press.filter_area, system.feed, system.cycle, V_full,
                             system.cycle.fill_time_for(press))
    elif system.cycle.fill_flow is not None and family.fill_time != system.cycle.fill_time_for(press):
        family = family.at_fill(system.cycle.fill_time_for(press))  # filling depends on the chambers
    V_star = family.V_star

    unconstrained = family.result(press, V_star, LIMITED_BY_OPTIMUM)
    full = family.result(press, V_full, LIMITED_BY_CHAMBERS)
    V_best = float(family.best_volume(V_full))
    if V_best == V_star:
        best = unconstrained
    elif V_best >= V_full:
        best = full
    else:  # a peak below full chambers that is not the highest of all (steps, pumps)
        best = family.result(press, V_best, LIMITED_BY_OPTIMUM)
    matched = 2.0 * v * V_star / (press.fill_fraction * press.filter_area)

    V_end, reason = family.end_volume(end, best.filtrate_volume, V_full)
    if V_end == best.filtrate_volume and reason == best.limited_by:
        end_cycle = best  # ending at the best cycle: the same cycle, not worked out again
    else:
        end_cycle = family.result(press, V_end, reason)
    at_end = EndResult(end_cycle, reason, end_cycle.filtrate_throughput / best.filtrate_throughput)

    feed_warnings = getattr(system.feed, "warnings", None)
    warnings = list(feed_warnings(system.filtration, press.filter_area)) if feed_warnings else []
    warnings += _fill_warnings(best, press.fill_fraction, matched) + _end_not_reached(end, reason, end_cycle, press)
    specs, spec_warnings = spec_report(family, best)
    warnings += spec_warnings + _through_wash_warning(family, best, press, full) + _squeeze_warning(system)
    return CycleSolution(
        best=best,
        unconstrained_optimum=unconstrained,
        chambers_full=full,
        at_end=at_end,
        chambers_full_volume=V_full,
        matched_chamber_thickness=matched,
        throughput_gain_unconstrained=unconstrained.filtrate_throughput / best.filtrate_throughput - 1.0,
        curves=family.curves(press, V_full) if with_curves else {},
        K_p=_scalar_or_none(getattr(family.curve, "K_p", None)),
        B=_scalar_or_none(getattr(family.curve, "B", None)),
        warnings=warnings,
        specs=specs,
        stage_order=family.treatment.order if family.treatment is not None else (
            ("wash",) if family.wash_per_filtrate else ()),
    )


#: A through-washed cake must fill its chamber for the wash to reach it evenly: below this
#: share of the allowed fill a warning says so (common practice, no source).
THROUGH_WASH_FILL = 0.95


def _through_wash_warning(family: CycleFamily, best: CycleResult, press: Press, full: CycleResult) -> list[str]:
    """A through-washed best cycle whose chambers are not full, with what filling them costs
    (the chambers-full cycle, which the results show beside the best: a plant-engineer check
    found the warning left the engineer without the alternative's figure)."""
    if not best.wash_volume or family.cycle.washing != "through":
        return []
    if best.chamber_fill >= THROUGH_WASH_FILL * press.fill_fraction:
        return []
    share = full.filtrate_throughput / best.filtrate_throughput
    return [f"Through-washing with chambers {100 * best.chamber_fill:.0f} % full: the wash plates wash a partly "
            "filled chamber unevenly (the wash short-cuts through the gap), so the wash time and solute "
            "removal shown are optimistic. Fill the chambers before washing (the chambers-full cycle gives "
            f"{100 * share:.0f} % of this cycle's throughput), or wash the simple way."]


def _end_not_reached(end: EndCriterion, reason: str, cycle: CycleResult, press: Press) -> list[str]:
    """An end criterion (a time, a flow, a pressure) the cycle never reaches: the chambers fill
    first, and the cycle "at your end criterion" is the chambers-full one, which says so."""
    if end.criterion not in ("time", "flow", "pressure") or reason != LIMITED_BY_CHAMBERS:
        return []
    if end.criterion == "time":
        what, there = f"after {end.time / 60:.4g} min of filtration", f"after {cycle.filtration_time / 60:.4g} min"
    elif end.criterion == "pressure":
        what, there = f"at a feed pressure of {in_bar(end.pressure)}", f"at {in_bar(cycle.final_pressure)}"
    else:
        if end.flow is not None:
            what = f"when the filtrate flow falls to {end.flow * 3600:.4g} m³/h"
        elif end.flow_per_area is not None:
            what = f"when the filtrate flow falls to {end.flow_per_area * 3.6e6:.4g} L/(m²·h) of filter area"
        else:
            what = f"when the filtrate flow falls to {100 * end.flow_fraction:.3g} % of the first flow"
        there = (f"with the filtrate still flowing at {cycle.final_rate * 3600:.4g} m³/h "
                 f"({cycle.final_rate / press.filter_area * 3.6e6:.4g} L/(m²·h))")
    return [f"Filtration would end {what}, but the chambers fill first, {there}: the cycle at your end "
            "criterion is the chambers-full cycle."]


def _squeeze_warning(system: PressSystem) -> list[str]:
    """A squeeze no harder than the feed: the membranes would add little (and the equilibrium
    given for it is then doubtful)."""
    sq = system.cycle.squeeze
    if sq is None or sq.pressure > system.feed.pressure_cap:
        return []
    return [f"The squeeze pressure {in_bar(sq.pressure)} is not above the feed pressure "
            f"{in_bar(system.feed.pressure_cap)}: membranes pressing no harder than the feed expel little; check "
            "the squeeze pressure and the equilibrium moisture or porosity given for it."]


def _moisture_advice(family: CycleFamily, best: CycleResult, need: float) -> str:
    """Why no cycle reaches the moisture specification, and what would."""
    t = family.treatment
    c = t.cycle
    said = [f"No cycle meets the moisture specification of {100 * need:.3g} %: the cycle shown is the best "
            f"throughput's, at {100 * best.moisture:.3g} %."]
    V = np.geomspace(family.V_needed * 1e-3, family.V_needed, 200)
    moisture = np.asarray(t.run(V)["moisture"], dtype=float)
    k = int(np.argmin(moisture))
    if moisture[k] < best.moisture * (1 - 1e-4):
        said.append(f"The lowest any cycle within the chambers reaches is {100 * moisture[k]:.3g} %, with a cake "
                    f"of {1000 * family.filtration.cake_volume_ratio * V[k] / family.filter_area:.3g} mm per face "
                    "(thinner cakes squeeze and blow faster).")
    if c.squeeze is not None:
        X_eq = c.squeeze.final_void_ratio * t.liquid_per_void
        m_eq = X_eq / (1.0 + X_eq)
        if need <= m_eq * (1 + 1e-9):
            said.append(f"The squeezed cake's equilibrium moisture at this squeeze pressure is {100 * m_eq:.3g} %: "
                        "no squeeze time goes below it; a higher squeeze pressure (with its own equilibrium) or a "
                        "blow would be needed.")
        elif t.squeeze_free:
            said.append("The squeeze is taken to 99.9 % of its way to equilibrium.")
        else:
            said.append("A longer squeeze (or leaving its time blank for the best cycle to choose) would help.")
    if c.blow is not None:
        if need < c.blow.lowest_moisture:
            said.append(f"The lab blow curve ends at {100 * c.blow.lowest_moisture:.3g} %: a blow reaches no lower "
                        "(the curve is never extrapolated).")
        elif t.blow_free:
            said.append("The blow is taken to the lab curve's end.")
        else:
            said.append("A longer blow (or leaving its time blank for the best cycle to choose) would help.")
    elif c.squeeze is None:
        said.append("Only a squeeze or a blow lowers the moisture of a cake: add one.")
    return " ".join(said)


def spec_report(family: CycleFamily, best: CycleResult) -> tuple[dict | None, list[str]]:
    """Each specification at the best cycle: required, achieved, met, binds; and warnings for
    any the press cannot meet (the best cycle shown is then the closest)."""
    specs = family.cycle.specs
    if specs is None:
        return None, []
    t = family.treatment
    out, warnings = {}, []
    if specs.max_moisture is not None:
        need, got = specs.max_moisture, best.moisture
        met = got <= need * (1 + 1e-9)
        free = (t.squeeze_free and best.squeeze_time > 0.0) or (t.blow_free and best.blow_time > 0.0)
        binds = met and (free or got >= need * (1 - 1e-6))
        out["max_moisture"] = {"required": need, "achieved": got, "met": met, "binds": binds}
        if not met:
            warnings.append(_moisture_advice(family, best, need))
    if specs.min_solute_removal is not None:
        need, got = specs.min_solute_removal, best.solute_removal
        met = got is not None and got >= need * (1 - 1e-9)
        binds = met and (t.wash_free or got <= need * (1 + 1e-6))
        out["min_solute_removal"] = {"required": need, "achieved": got, "met": met, "binds": binds}
        if not met:
            warnings.append(
                f"The wash removes {100 * (got or 0.0):.4g} % of the solute, short of the specification of "
                f"{100 * need:.4g} %: wash with more liquid (or give no wash ratio and the specification sets it).")
    return out, warnings


def _fill_warnings(best: CycleResult, fill_fraction: float, matched: float) -> list[str]:
    if best.chamber_fill < LOW_FILL_WARNING * fill_fraction:
        return [
            f"At the best cycle the cake fills only {100 * best.chamber_fill:.0f} % of the "
            f"chambers: soft, partly filled cakes may discharge badly. Chambers of about "
            f"{1000 * matched:.0f} mm would fill at the optimum."
        ]
    return []


def cycle_family_for(system: PressSystem, thicknesses=()) -> CycleFamily:
    """One CycleFamily that serves the system at its own and all the given thicknesses [m]."""
    L = max([system.press.chamber_thickness, *[float(x) for x in thicknesses]])
    V_needed = system.press.with_thickness(L).chambers_full_volume(system.filtration.cake_volume_ratio)
    return CycleFamily(system.filtration, system.press.filter_area, system.feed, system.cycle, V_needed,
                       system.cycle.fill_time_for(system.press))


def compare_thicknesses(
    system: PressSystem, thicknesses, end: EndCriterion | None = None, family: CycleFamily | None = None
) -> list[tuple[float, CycleSolution]]:
    """The same press and slurry at each chamber thickness [m]: its cycle solution.

    The filtration curve and the optimum do not depend on the thickness, so they are
    computed once (or taken from ``family``) for all thicknesses; a tabulated curve's cycles
    are worked out for every thickness at once (arrays), a closed form's one by one (floats).
    """
    thicknesses = [float(L) for L in thicknesses]
    if not thicknesses:
        return []
    end = end or EndCriterion()
    family = family or cycle_family_for(system, thicknesses)
    if family.scan is None or system.cycle.fill_flow is not None:
        # a closed-form curve: one plain-float solve per thickness is quicker than arrays
        return [(L, solve_cycle(PressSystem(system.filtration, system.press.with_thickness(L), system.feed,
                                            system.cycle), end, family, with_curves=False)) for L in thicknesses]
    press, f = system.press, system.filtration
    v = f.cake_volume_ratio
    Ls = np.asarray(thicknesses)
    n = Ls.size
    V_full, V_best, kinds, best_V, best_reason = _best_volumes(family, press, Ls)
    V_star = float(family.V_star)
    V_full_l = V_full.tolist()
    between = [i for i, kind in enumerate(kinds) if kind == 2]
    ends = [family.end_volume(end, best_V[i], V_full_l[i]) for i in range(n)]
    redo = [i for i, (V_end, reason) in enumerate(ends) if not (V_end == best_V[i] and reason == best_reason[i])]
    picks = list(range(n)) * 2 + between + redo  # thickness of each cycle worked out
    cycles = family.results(
        press, np.concatenate((np.full(n, V_star), V_full, V_best[between], [ends[i][0] for i in redo])),
        Ls[picks], [LIMITED_BY_OPTIMUM] * n + [LIMITED_BY_CHAMBERS] * n + [LIMITED_BY_OPTIMUM] * len(between)
        + [ends[i][1] for i in redo])
    unconstrained, full = cycles[:n], cycles[n:2 * n]
    inner = dict(zip(between, cycles[2 * n:2 * n + len(between)]))
    at_end = dict(zip(redo, cycles[2 * n + len(between):]))
    best = [(unconstrained[i], full[i], inner.get(i))[kind] for i, kind in enumerate(kinds)]
    feed_warnings = getattr(system.feed, "warnings", None)
    shared = list(feed_warnings(f, press.filter_area)) if feed_warnings else []
    matched = 2.0 * v * V_star / (press.fill_fraction * press.filter_area)
    K_p, B = _scalar_or_none(getattr(family.curve, "K_p", None)), _scalar_or_none(getattr(family.curve, "B", None))
    out = []
    for i, L in enumerate(thicknesses):
        end_cycle = at_end.get(i, best[i])
        specs, spec_warnings = spec_report(family, best[i])
        out.append((L, CycleSolution(
            best=best[i], unconstrained_optimum=unconstrained[i], chambers_full=full[i],
            at_end=EndResult(end_cycle, ends[i][1], end_cycle.filtrate_throughput / best[i].filtrate_throughput),
            chambers_full_volume=float(V_full[i]), matched_chamber_thickness=matched,
            throughput_gain_unconstrained=unconstrained[i].filtrate_throughput / best[i].filtrate_throughput - 1.0,
            curves={}, K_p=K_p, B=B, specs=specs,
            warnings=shared + _fill_warnings(best[i], press.fill_fraction, matched)
            + _end_not_reached(end, ends[i][1], end_cycle, press) + spec_warnings
            + _through_wash_warning(family, best[i], press, full[i]),
            stage_order=family.treatment.order if family.treatment is not None else (
                ("wash",) if family.wash_per_filtrate else ()),
        )))
    return out


def _best_volumes(family: CycleFamily, press: Press, Ls: np.ndarray):
    """Every thickness's chambers-full volume and best cycle's end volume, known before any
    cycle is worked out (the curve and the optimum are the same for all): (V_full array,
    V_best array, kind per thickness: 0 the optimum, 1 full chambers, 2 a lower peak inside
    them (steps, pumps), the best cycle's end volume and what limits it, as lists)."""
    V_full = np.asarray(chambers_full_volume(press.filter_area, Ls, family.filtration.cake_volume_ratio,
                                             press.fill_fraction), dtype=float)
    V_star = float(family.V_star)
    V_best = np.broadcast_to(np.asarray(family.best_volume(V_full), dtype=float), V_full.shape)
    V_best_l, V_full_l = V_best.tolist(), V_full.tolist()
    kinds = [0 if Vb == V_star else (1 if Vb >= Vf else 2) for Vb, Vf in zip(V_best_l, V_full_l)]
    best_V = [(V_star, V_full_l[i], V_best_l[i])[kind] for i, kind in enumerate(kinds)]
    best_reason = [LIMITED_BY_CHAMBERS if kind == 1 else LIMITED_BY_OPTIMUM for kind in kinds]
    return V_full, V_best, kinds, best_V, best_reason


def thickness_rows(system: PressSystem, thicknesses, family: CycleFamily | None = None,
                   optimum: CycleResult | None = None,
                   own: tuple[CycleResult, CycleResult] | None = None) -> list[tuple[float, CycleResult, CycleResult]]:
    """(chamber thickness [m], best cycle, chambers-full cycle) at each thickness: what a
    thickness comparison shows. The same cycles as :func:`compare_thicknesses` gives (tested in
    tests/solver/test_cycle.py), without each thickness's end criterion and warnings.

    On a closed-form curve with no stages and a fixed filling time, the optimum's cycle is the
    same at every thickness but for how full its chambers are: it is worked out once and its
    fill set per thickness (issue 12: a comparison of six thicknesses in a few microseconds);
    ``optimum``, the system's unconstrained optimum from :func:`solve_cycle` with this family,
    saves working it out again, and ``own``, its best and chambers-full cycles, the row of the
    press's own thickness (the same press, so the same cycles).
    """
    thicknesses = [float(L) for L in thicknesses]
    if not thicknesses:
        return []
    family = family or cycle_family_for(system, thicknesses)
    if system.cycle.fill_flow is not None:  # the filling time differs per thickness
        return [(L, s.best, s.chambers_full) for L, s in compare_thicknesses(system, thicknesses, None, family)]
    press, v = system.press, system.filtration.cake_volume_ratio
    if family.scan is not None or family.treatment is not None:
        # a table or stages: the chambers-full cycles and the other best cycles in one go
        Ls = np.asarray(thicknesses)
        n = Ls.size
        V_full, _, kinds, best_V, best_reason = _best_volumes(family, press, Ls)
        others = [i for i, kind in enumerate(kinds) if kind != 1]
        cycles = family.results(press, np.concatenate((V_full, [best_V[i] for i in others])),
                                Ls[list(range(n)) + others],
                                [LIMITED_BY_CHAMBERS] * n + [best_reason[i] for i in others])
        full, best = cycles[:n], dict(zip(others, cycles[n:]))
        return [(L, best.get(i, full[i]), full[i]) for i, L in enumerate(thicknesses)]
    V_star = float(family.V_star)
    optimum = (optimum or family.result(press, V_star, LIMITED_BY_OPTIMUM)).__dict__
    rows = []
    for L in thicknesses:
        if own is not None and L == press.chamber_thickness:
            rows.append((L, *own))
            continue
        at_L = press.with_thickness(L)
        full = family.result(at_L, at_L.chambers_full_volume(v), LIMITED_BY_CHAMBERS)
        if float(family.best_volume(full.filtrate_volume)) == V_star:  # as solve_cycle chooses
            fill = float(at_L.chamber_fill(V_star, v))
            best = cycle_result({**optimum, "chamber_fill": fill,
                                 "feasible": fill <= at_L.fill_fraction * (1.0 + 1e-12)}.values())
        else:
            best = full
        rows.append((L, best, full))
    return rows
