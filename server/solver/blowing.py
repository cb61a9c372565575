"""Air blowing: a lab blow curve scaled to the press cake.

For one cake structure at one blow pressure the reduced saturation is a function of a
dimensionless time proportional to t / L^2 (Wakeman's correlations for gas deliquoring; Wakeman
& Tarleton, Solid/Liquid Separation). A lab curve of cake moisture against blow time, measured
on a cake of thickness L_lab, therefore gives the press cake of thickness L the same moisture at
t = t_lab (L / L_lab)^2. This holds only for the same cake structure and the same blow pressure.
Between the measured points the moisture is interpolated linearly; it is never extrapolated.
"""

from dataclasses import dataclass

import numpy as np

from .errors import SolverInputError


@dataclass(frozen=True)
class Blow:
    """A cake blow (all SI).

    Attributes
    ----------
    times : tuple of float
        Lab blow times [s], increasing, the first may be 0.
    moistures : tuple of float
        Cake moisture (liquid / wet cake mass) at each time [-], not rising.
    lab_thickness : float
        Thickness of the lab cake [m].
    time, target_moisture : float or None
        Blow for this long [s], or until this moisture; neither: the optimum chooses (under a
        moisture specification) or no blow.
    pressure : float or None
        The blow pressure [Pa], for the record: the lab curve must be measured at it.
    """

    times: tuple
    moistures: tuple
    lab_thickness: float
    time: float | None = None
    target_moisture: float | None = None
    pressure: float | None = None

    def __post_init__(self):
        t = np.asarray(self.times, dtype=float)
        m = np.asarray(self.moistures, dtype=float)
        if t.size < 2 or t.size != m.size:
            raise SolverInputError("curve", "give at least two (time, moisture) pairs")
        for j, column in ((0, t), (1, m)):  # NaN and infinity pass every comparison below
            if not np.all(np.isfinite(column)):
                raise SolverInputError(f"curve.{int(np.argmin(np.isfinite(column)))}.{j}", "must be a finite number")
        if t[0] != 0.0:
            raise SolverInputError("curve.0.0", "the lab blow curve starts at 0 s, with the cake's moisture as the "
                                   "blow begins (the curve's shape is counted from there)")
        if np.any(np.diff(t) <= 0.0):
            k = int(np.argmax(np.diff(t) <= 0.0)) + 1
            raise SolverInputError(f"curve.{k}.0", "blow times must rise from point to point")
        if np.any((m <= 0.0) | (m >= 1.0)):
            k = int(np.argmax((m <= 0.0) | (m >= 1.0)))
            raise SolverInputError(f"curve.{k}.1", "moisture must be between 0 and 1 (exclusive)")
        if np.any(np.diff(m) > 0.0):
            k = int(np.argmax(np.diff(m) > 0.0)) + 1
            raise SolverInputError(f"curve.{k}.1", "a blow never raises the moisture: moisture must not rise with time")
        if not m[-1] < m[0]:
            raise SolverInputError(f"curve.{m.size - 1}.1", "the lab blow curve never lowers the moisture: a blow "
                                   "that dries nothing (give readings where the moisture falls)")
        if not self.lab_thickness > 0.0:
            raise SolverInputError("lab_thickness", f"must be > 0 m; got {self.lab_thickness:.6g}")
        if self.time is not None and self.target_moisture is not None:
            raise SolverInputError("time", "give time or target_moisture, not both")
        if self.time is not None and not self.time > 0.0:
            raise SolverInputError("time", f"must be > 0 s; got {self.time:.6g}")
        if self.target_moisture is not None and not m[-1] <= self.target_moisture < 1.0:
            raise SolverInputError(
                "target_moisture", f"the lab curve runs from {100 * m[0]:.4g} % down to {100 * m[-1]:.4g} %: "
                f"a blow reaches no lower than {100 * m[-1]:.4g} % (the curve is never extrapolated)")

    @property
    def free(self) -> bool:
        return self.time is None and self.target_moisture is None

    @property
    def lowest_moisture(self) -> float:
        return float(self.moistures[-1])

    def _lab_time(self, t, thickness):
        return np.asarray(t, dtype=float) * (self.lab_thickness / np.asarray(thickness, dtype=float)) ** 2

    @property
    def _liquid_ends(self) -> tuple[float, float]:
        """Liquid per dry solids X = m / (1 - m) at the lab curve's start and end."""
        m0, m_end = float(self.moistures[0]), float(self.moistures[-1])
        return m0 / (1.0 - m0), m_end / (1.0 - m_end)

    def moisture_after(self, t, thickness, entering=None):
        """Cake moisture after blowing a cake of ``thickness`` [m] for t [s], vectorised.

        ``entering``: the press cake's moisture as the blow starts. The lab curve gives the
        shape of the drying as reduced liquid content, (X - X_end) / (X_start - X_end) with
        X = m / (1 - m) the liquid per dry solids, so a cake that enters wetter or drier than
        the lab cake starts from its own moisture and tends to the same end (for the same
        cake structure and pressure); at t = 0 nothing has changed. None: the lab cake's own
        start. Past the lab curve's last time its end is kept (no extrapolation).
        """
        m_lab = np.interp(self._lab_time(t, thickness), self.times, self.moistures)
        if entering is None:
            return m_lab if np.ndim(m_lab) else float(m_lab)
        X0, X_end = self._liquid_ends
        X_in = np.asarray(entering, dtype=float) / (1.0 - np.asarray(entering, dtype=float))
        if X0 > X_end:
            reduced = (m_lab / (1.0 - m_lab) - X_end) / (X0 - X_end)
        else:  # a flat curve: the blow dries nothing
            reduced = np.ones_like(m_lab)
        X = np.where(X_in > X_end, X_end + (X_in - X_end) * reduced, X_in)
        out = X / (1.0 + X)
        return out if np.ndim(out) else float(out)

    def time_to(self, moisture, thickness, entering=None):
        """Blow time [s] that brings a cake of ``thickness`` [m] down to ``moisture`` [-]
        (not below the lab curve's end), vectorised. ``entering``: the press cake's moisture
        as the blow starts (see :meth:`moisture_after`); 0 where it is already at or below
        the moisture. None: the lab cake's own start (then the curve's first time, scaled,
        where the curve starts at or below the moisture)."""
        if entering is not None:
            X0, X_end = self._liquid_ends
            e = np.asarray(entering, dtype=float)
            X_in = e / (1.0 - e)
            target = np.asarray(moisture, dtype=float)
            X_t = target / (1.0 - target)
            with np.errstate(divide="ignore", invalid="ignore"):
                reduced = np.clip((X_t - X_end) / (X_in - X_end), 0.0, 1.0)
            X_c = X_end + reduced * (X0 - X_end)  # the lab cake's moisture at the same stage of drying
            t = self.time_to(X_c / (1.0 + X_c), thickness)
            out = np.where((X_t >= X_in) | (X_in <= X_end), 0.0, t)
            return out if np.ndim(out) else float(out)
        m = np.asarray(self.moistures, dtype=float)
        t = np.asarray(self.times, dtype=float)
        moisture = np.asarray(moisture, dtype=float)
        # the first lab point at or below the moisture (on a flat stretch, its start), then
        # linear interpolation with the point before it
        k = np.clip(np.searchsorted(-m, -moisture, side="left"), 1, m.size - 1)
        m0, m1, t0, t1 = m[k - 1], m[k], t[k - 1], t[k]
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(m0 > m1, (m0 - moisture) / (m0 - m1), 1.0)
        lab = np.where(moisture >= m[0], t[0], t0 + np.clip(share, 0.0, 1.0) * (t1 - t0))
        out = lab * (np.asarray(thickness, dtype=float) / self.lab_thickness) ** 2
        return out if np.ndim(out) else float(out)
