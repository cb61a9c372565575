"""The data behind every chart, in SI: sweeps over end volume, chamber thickness and time.

Each series is computed from the same :class:`~.cycle.CycleFamily` and
:class:`~.cycle.CycleSolution` that give the best cycle, through their own methods (cycle
time, throughput, chambers-full volume), so a stage added to the cycle moves the curves and
the marked optimum together. The web edge only converts these series to display units.
"""

import numpy as np

from .cycle import CycleFamily, CycleSolution, PressSystem
from .press import chambers_full_volume


def _list(a) -> list:
    return np.asarray(a, dtype=float).tolist()


#: The thickness charts run from half to twice this press's chamber thickness ...
THICKNESS_SPAN = (0.5, 2.0)
#: ... widened to take in the thickness at which the chambers just fill at the optimum (the
#: thickness the results recommend) when it lies within a factor of 4 of the chamber, with a
#: tenth to spare beyond it; further off, the chart leaves it out and says where it is.
THICKNESS_REACH, THICKNESS_SPARE = 4.0, 1.1


def thickness_grid(L_press: float, L_matched: float, n: int = 120) -> np.ndarray:
    """Chamber thicknesses [m] around this press's: half to twice it, widened to the matched
    thickness (chambers just full at the optimum) when that lies within a factor of 4; never
    below 1 mm nor above 500 mm. Holds L_press itself, and L_matched when it is in range."""
    lo, hi = THICKNESS_SPAN[0] * L_press, THICKNESS_SPAN[1] * L_press
    if L_press / THICKNESS_REACH <= L_matched <= L_press * THICKNESS_REACH:
        lo, hi = min(lo, L_matched / THICKNESS_SPARE), max(hi, L_matched * THICKNESS_SPARE)
    lo, hi = max(1e-3, min(lo, L_press)), min(0.5, max(hi, L_press))
    extra = [L_press] + ([L_matched] if lo <= L_matched <= hi else [])
    return np.unique(np.concatenate((np.linspace(lo, hi, n), extra)))


def throughput_against_time(family: CycleFamily, solution: CycleSolution) -> dict:
    """Filtrate throughput over end volumes to 1.6x past full chambers or the optimum.

    Keys: cycle_time [s], filtration_time [s], filtrate_throughput [m^3/s], feasible (the
    cake fits the chambers), and with specifications meets_specs (every one met).
    """
    V_full = solution.chambers_full_volume
    V_top = 1.6 * max(V_full, solution.unconstrained_optimum.filtrate_volume)
    V = np.concatenate((np.geomspace(V_top * 1e-3, V_full, 150), np.linspace(V_full, V_top, 90)[1:]))
    st = family.stages(V)
    T = np.asarray(family.total(family.stage_times(V, st)), dtype=float)
    out = {"cycle_time": _list(T), "filtration_time": _list(family.curve.time(V)),
           "filtrate_throughput": _list(V / T), "feasible": [bool(x) for x in V <= V_full * (1 + 1e-12)]}
    if st is not None and family.cycle.specs is not None:  # where the cycle misses a specification
        out["meets_specs"] = [bool(x) for x in st["meets_moisture"] & st["meets_removal"]]
    return out


def throughput_against_thickness(family: CycleFamily, system: PressSystem, L: np.ndarray) -> dict:
    """Best throughput [m^3/s] and the chamber fill at it [-] for each chamber thickness L [m]."""
    press, v = system.press, system.filtration.cake_volume_ratio
    V_full = chambers_full_volume(press.filter_area, L, v, press.fill_fraction)
    if system.cycle.fill_flow is not None:
        # filling grows with the chambers, so each thickness has its own optimum: the best of a
        # fine grid of end volumes (0.35 % apart) within its chambers, every thickness at once,
        # from one run of the cycle's stages (a chart's resolution; the results solve exactly)
        fills = np.array([system.cycle.fill_time_for(press.with_thickness(float(x))) for x in L])
        Vg = np.unique(np.concatenate((np.geomspace(V_full.max() * 1e-3, V_full.max(), 2000), V_full)))
        st = family.stages(Vg)
        T = np.asarray(family.total(family.stage_times(Vg, st)), dtype=float) - family.fill_time
        ok = (st["meets_moisture"] & st["meets_removal"]) if st is not None and system.cycle.specs is not None \
            else np.ones(Vg.shape, bool)
        Q = Vg[None, :] / (T[None, :] + fills[:, None])
        score = np.where(Vg[None, :] <= V_full[:, None] * (1 + 1e-12), np.where(ok, Q, Q * 1e-6), -np.inf)
        j = np.argmax(score, axis=1)
        rows = np.arange(L.size)
        V_best = Vg[j]
        return {"chamber_thickness": _list(L), "filtrate_throughput": _list(Q[rows, j]),
                "chamber_fill": _list(press.chamber_fill(V_best, v, L))}
    V_best = family.best_volume(V_full)
    return {"chamber_thickness": _list(L), "filtrate_throughput": _list(family.throughput(V_best)),
            "chamber_fill": _list(press.chamber_fill(V_best, v, L))}


def throughput_map(family: CycleFamily, system: PressSystem, solution: CycleSolution, L: np.ndarray,
                   n_times: int = 80) -> dict:
    """Throughput [m^3/s] over set filtration time x chamber thickness; the press stops at the
    set time or at full chambers, whichever comes first. Rows are thicknesses."""
    press, v = system.press, system.filtration.cake_volume_ratio
    t_top = 2.0 * max(solution.unconstrained_optimum.filtration_time, solution.chambers_full.filtration_time)
    t = np.linspace(t_top / n_times, t_top, n_times)
    V_full = chambers_full_volume(press.filter_area, L, v, press.fill_fraction)
    V = np.minimum(family.curve.volume(t)[None, :], V_full[:, None])
    if system.cycle.fill_flow is not None:  # each thickness fills its own chambers
        extra = np.array([system.cycle.fill_time_for(press.with_thickness(float(x))) for x in L]) - family.fill_time
        Q = V / (family.cycle_time(V) + extra[:, None])
    else:
        Q = family.throughput(V)
    return {"filtration_time": _list(t), "chamber_thickness": _list(L),
            "filtrate_throughput": _list(Q), "chambers_full_time": _list(family.curve.time(V_full))}


def chart_series(family: CycleFamily, system: PressSystem, solution: CycleSolution,
                 map_shape: tuple[int, int] | None = None) -> dict:
    """The data of every chart of a solved scenario, as plain lists (SI).

    ``pressure_varies`` comes from the feed itself (constant pressure or not), so the
    filtration chart draws pressure and flow only where they change. ``map_shape``
    (thicknesses, times) sets the throughput map's grid; default about 41 x 80.
    """
    L = thickness_grid(system.press.chamber_thickness, solution.matched_chamber_thickness)
    if map_shape is None:
        L_map, n_times = L[::3], 80
    else:
        L_map, n_times = thickness_grid(system.press.chamber_thickness, solution.matched_chamber_thickness,
                                        map_shape[0] - 2), map_shape[1]
    out = {
        "throughput_time": throughput_against_time(family, solution),
        "throughput_thickness": throughput_against_thickness(family, system, L),
        "throughput_map": throughput_map(family, system, solution, L_map, n_times),
        "filtration": {k: _list(x) for k, x in solution.curves.items()},
        "pressure_varies": bool(system.feed.pressure_varies),
        # the same flag under its first name, which saved scenarios and API clients read
        "pump_fed": bool(system.feed.pressure_varies),
        "chamber_thickness": system.press.chamber_thickness,
    }
    washing = wash_profile(family, solution)
    if washing is not None:
        out["washing"] = washing
    return out


def wash_profile(family: CycleFamily, solution: CycleSolution) -> dict | None:
    """Washate concentration and solute removed against the wash ratio (pore volumes), to
    past the best cycle's wash ratio, with that ratio marked; None without a wash model."""
    model = family.cycle.wash_model
    if model is None:
        return None
    W_best = solution.best.wash_pore_volumes or 0.0
    prof = model.profile(max(3.0, 1.5 * W_best))
    return {"wash_ratio": _list(prof["wash_ratio"]), "concentration": _list(prof["concentration"]),
            "removal": _list(prof["removal"]), "best_wash_ratio": W_best,
            "best_removal": solution.best.solute_removal,
            "pore_volumes_per_filtrate": (solution.best.wash_pore_volumes / solution.best.wash_filtrate_volumes
                                          if solution.best.wash_filtrate_volumes else None)}
