"""Synthetic press logs from the exact model, for the press-log tests and bench/presslog.py.

Each cycle solves Ruth's rate equation dV/dt = A dP / (mu (alpha c V / A + R_m)) for its
feed (derived here from the equation; McCabe, Smith & Harriott, 7th ed., ch. 29): the flow at
a filtrate volume is closed form for every feed below, so t(V) = int dV / Q(V) is a quadrature
of a smooth (or piecewise-linear, then exact) integrand on a dense grid, and the rows are read
off by interpolation. Then idle rows (no pressure, no flow) for the downtime. Noise is
multiplicative, seeded.
"""

from dataclasses import dataclass, field

import numpy as np

MU = 1.0e-3  # Pa s
AREA = 100.0  # m^2
C = 200.0  # kg/m^3
ALPHA = 2.0e11  # m/kg
R0 = 8.0e11  # 1/m, a clean cloth
PRESSURE = 6.0e5  # Pa


@dataclass
class Feed:
    mode: str = "constant_pressure"  # or "rate_then_pressure", "pump_curve"
    pressure: float = PRESSURE  # Pa: the held pressure, or the pump's shut-off pressure
    flow: float = 0.08  # m^3/s: the constant rate, or the pump's flow at no pressure

    def rate(self, V, alpha, R_m, area=AREA, mu=MU, c=C):
        """Filtrate flow [m^3/s] at volume V [m^3]."""
        resist = mu * (alpha * c * V / area**2 + R_m / area)  # dP = resist Q
        if self.mode == "constant_pressure":
            return self.pressure / resist
        if self.mode == "rate_then_pressure":
            return np.minimum(self.flow, self.pressure / resist)
        if self.mode == "pump_curve":  # P0 (1 - (Q/Qm)^2) = resist Q
            a = self.pressure / self.flow**2
            return (-resist + np.sqrt(resist**2 + 4.0 * a * self.pressure)) / (2.0 * a)
        raise ValueError(self.mode)


def exact_cycle(feed: Feed, alpha: float, R_m: float, filtration_time: float, step: float,
                area=AREA, mu=MU, c=C, grid=200_001, late=0.0):
    """Rows t [s] from 0 to filtration_time, with pressure [Pa], flow [m^3/s] and V [m^3].

    ``late`` [s]: the log reads its rows that long after the feed started (a start of feeding
    between two rows of the log); the rows' times still count from the first, and V counts
    from the feed's start (the first row reads the filtrate of those ``late`` seconds)."""
    V_max = 1.0
    while True:  # a volume past the end of filtration
        Vg = np.linspace(0.0, V_max, 2001)
        q = feed.rate(Vg, alpha, R_m, area, mu, c)
        tg = np.concatenate(([0.0], np.cumsum(0.5 * (1 / q[1:] + 1 / q[:-1]) * np.diff(Vg))))
        if tg[-1] > filtration_time:
            break
        V_max *= 2.0
    V_end = float(np.interp(filtration_time, tg, Vg)) * 1.01
    Vg = np.linspace(0.0, V_end, grid)
    if feed.mode == "rate_then_pressure":  # the switch volume as a grid point: 1/Q exact there
        V1 = area**2 / (alpha * c) * (feed.pressure / (mu * feed.flow) - R_m / area)
        if 0 < V1 < V_end:
            Vg = np.unique(np.concatenate((Vg, [V1])))
    q = feed.rate(Vg, alpha, R_m, area, mu, c)
    tg = np.concatenate(([0.0], np.cumsum(0.5 * (1 / q[1:] + 1 / q[:-1]) * np.diff(Vg))))
    t = np.arange(0.0, filtration_time + 0.5 * step, step)
    V = np.interp(t + late, tg, Vg)
    flow = feed.rate(V, alpha, R_m, area, mu, c)
    pressure = mu * (alpha * c * V / area**2 + R_m / area) * flow
    return t, pressure, flow, V


@dataclass
class SyntheticLog:
    time: np.ndarray
    pressure: np.ndarray
    flow: np.ndarray
    volume: np.ndarray  # cumulative in each cycle (reset to zero at its start), m^3
    cycle: np.ndarray  # 1-based cycle number of each row
    alpha: np.ndarray  # per cycle
    medium_resistance: np.ndarray  # per cycle
    washes: list = field(default_factory=list)  # cycle numbers (1-based) on a freshly washed cloth
    filtrate_volume: np.ndarray = None  # per cycle, m^3


def synthetic_log(cycles=45, feed: Feed | None = None, growth=0.02, wash_every=15, noise=0.005, seed=17,
                  filtration_time=1800.0, downtime=600.0, step=2.0, alpha=ALPHA, R0=R0, idle_rows=3,
                  alpha_of_cycle=None, area=AREA, grid=200_001, late_start=False):
    """A log of ``cycles`` cycles: R_m = R0 (1 + growth j), j cycles since the last wash (every
    ``wash_every`` cycles); multiplicative noise of relative size ``noise`` on pressure and flow.
    ``late_start``: each feed starts at a random moment (seeded, uniform) within the log step
    before its first row under pressure, as it does in a plant."""
    feed = feed or Feed()
    rng = np.random.default_rng(seed)
    parts, t0 = [], 0.0
    alphas, Rms, washes, Vends = [], [], [], []
    for k in range(cycles):
        j = k % wash_every
        if j == 0 and k > 0:
            washes.append(k + 1)
        R = R0 * (1.0 + growth * j)
        a = alpha_of_cycle(k) if alpha_of_cycle else alpha
        late = float(rng.uniform(0.0, step)) if late_start else 0.0
        t, p, q, V = exact_cycle(feed, a, R, filtration_time, step, area=area, grid=grid, late=late)
        idle_before = t0 + step * np.arange(idle_rows)
        t_f = t0 + step * idle_rows + t
        t_after = t_f[-1] + step * np.arange(1, int(downtime / step) + 1)
        tt = np.concatenate((idle_before, t_f, t_after))
        pp = np.concatenate((np.zeros(idle_rows), p, np.zeros(t_after.size)))
        qq = np.concatenate((np.zeros(idle_rows), q, np.zeros(t_after.size)))
        VV = np.concatenate((np.zeros(idle_rows), V, np.full(t_after.size, V[-1])))
        parts.append((tt, pp, qq, VV, np.full(tt.size, k + 1)))
        t0 = tt[-1] + step
        alphas.append(a)
        Rms.append(R)
        Vends.append(V[-1])
    time, p, q, V, cyc = (np.concatenate(x) for x in zip(*parts))
    if noise:
        p = p * (1.0 + noise * rng.standard_normal(p.size))
        q = q * (1.0 + noise * rng.standard_normal(q.size))
        V = V * (1.0 + noise * rng.standard_normal(V.size))
    return SyntheticLog(time, p, q, V, cyc, np.array(alphas), np.array(Rms), washes, np.array(Vends))


def to_csv(log: SyntheticLog, signal="flow", sep=",", decimal=".", with_cycle=False, density=1000.0) -> str:
    """The log as a CSV export: time [s], pressure [bar] and flow [L/min], volume [L] or mass [kg]."""
    cols = [("time [s]", log.time), ("feed pressure [bar]", log.pressure / 1e5)]
    if signal == "flow":
        cols.append(("filtrate flow [L/min]", log.flow * 60000.0))
    elif signal == "volume":
        cols.append(("filtrate volume [L]", log.volume * 1000.0))
    else:
        cols.append(("filtrate mass [kg]", log.volume * density))
    if with_cycle:
        cols.append(("cycle", log.cycle))
    header = sep.join(name for name, _ in cols)
    body = np.column_stack([v for _, v in cols])
    lines = [header]
    fmt = sep.join(["%.9g"] * len(cols))
    text = "\n".join(fmt % tuple(row) for row in body)
    if decimal == ",":
        text = text.replace(".", ",")
    lines.append(text)
    return "\n".join(lines) + "\n"
