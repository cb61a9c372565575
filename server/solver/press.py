"""Filter press geometry.

The cake grows from both faces of each chamber, so the chambers are full when each cake
is half the chamber thickness thick:

    cake thickness per face  L_c = v V / A,   chamber volume  A L / 2,
    chambers full at  V_full = f A L / (2 v)

where f is the fraction of the chamber volume the cake may take up before the press is
stopped (1 for a chamber filled solid).
"""

from dataclasses import dataclass, replace

from .errors import SolverInputError


def filter_area_from_plates(plate_face_area: float, chambers: int) -> float:
    """Filter area of a press from its plates, A = 2 x chambers x face area [m^2].

    Parameters
    ----------
    plate_face_area : float
        Filtering area of one face of one chamber [m^2].
    chambers : int
        Number of chambers (frames) [-].

    Examples
    --------
    >>> filter_area_from_plates(0.5, 30)
    30.0
    """
    if not plate_face_area > 0.0:
        raise SolverInputError("plate_face_area", f"must be > 0 m^2; got {plate_face_area:.6g}")
    if chambers < 1:
        raise SolverInputError("chambers", f"must be at least 1; got {chambers}")
    return 2.0 * chambers * plate_face_area


def chambers_full_volume(filter_area, chamber_thickness, cake_volume_ratio, fill_fraction=1.0):
    """Filtrate volume at which the cakes reach the fill fraction, V_full = f A L / (2 v) [m^3].

    Vectorised over ``chamber_thickness`` [m] (a thickness comparison or a chart).

    Examples
    --------
    >>> chambers_full_volume(50.0, 0.04, 0.5)
    2.0
    """
    return fill_fraction * 0.5 * filter_area * chamber_thickness / cake_volume_ratio


@dataclass(frozen=True)
class Press:
    """A filter press as the cycle sees it.

    Attributes
    ----------
    filter_area : float
        Total filtering area, both faces of every chamber [m^2].
    chamber_thickness : float
        Chamber (frame) thickness [m].
    fill_fraction : float
        Fraction of the chamber volume the cake may fill [-], 0 < f <= 1.
    """

    filter_area: float
    chamber_thickness: float
    fill_fraction: float = 1.0

    def __post_init__(self):
        if not self.filter_area > 0.0:
            raise SolverInputError("filter_area", f"must be > 0 m^2; got {self.filter_area:.6g}")
        if not self.chamber_thickness > 0.0:
            raise SolverInputError(
                "chamber_thickness", f"must be > 0 m; got {self.chamber_thickness:.6g}"
            )
        if not (0.0 < self.fill_fraction <= 1.0):
            raise SolverInputError(
                "fill_fraction", f"must be above 0 and at most 1; got {self.fill_fraction:.6g}"
            )

    @property
    def chamber_volume(self) -> float:
        """Total volume of all chambers, A L / 2 [m^3]."""
        return 0.5 * self.filter_area * self.chamber_thickness

    def chambers_full_volume(self, cake_volume_ratio: float) -> float:
        """Filtrate volume at which the cakes reach the fill fraction, f A L / (2 v) [m^3]."""
        return chambers_full_volume(self.filter_area, self.chamber_thickness, cake_volume_ratio, self.fill_fraction)

    def cake_thickness(self, V, cake_volume_ratio: float):
        """Cake thickness on each face after V of filtrate, v V / A [m]."""
        return cake_volume_ratio * V / self.filter_area

    def chamber_fill(self, V, cake_volume_ratio: float, chamber_thickness=None):
        """Cake volume / chamber volume after V of filtrate [-] (optionally at other thicknesses [m])."""
        L = self.chamber_thickness if chamber_thickness is None else chamber_thickness
        return cake_volume_ratio * V / (0.5 * self.filter_area * L)

    def with_thickness(self, chamber_thickness: float) -> "Press":
        """The same press with chambers of another thickness [m] (checked as the constructor
        checks it; the other fields were checked when this press was made). A thickness
        comparison makes one per thickness: a copy of the fields is a fraction of the cost of
        ``dataclasses.replace`` (issue 12)."""
        if not chamber_thickness > 0.0:
            return replace(self, chamber_thickness=chamber_thickness)  # raises the constructor's error
        other = object.__new__(Press)
        other.__dict__.update(self.__dict__, chamber_thickness=chamber_thickness)  # frozen: no __setattr__
        return other
