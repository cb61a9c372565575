"""Plant logs at the edge: CSV text -> SI arrays, and a /api/v1/press-log request -> the
solver's log fit (server/solver/logfit.py) -> plain SI data.

A press log is a CSV export, units in the headers as the lab readings take them
(server/labdata.py): comma, semicolon or tab separated; a decimal comma when the separator is
not a comma. Columns: a time (``time [s]``, or ``timestamp`` with ISO 8601 dates), the feed
pressure (``pressure [bar]``), and one of filtrate flow (``flow [L/min]``), cumulative filtrate
volume (``volume [L]``) or filtrate mass (``mass [kg]``, with the filtrate density); optionally
``cycle``. Hundreds of thousands of rows are read column by column with numpy; a cell that
does not read is found afterwards and named by its line, row and column.
"""

import io
import math
from dataclasses import dataclass
from warnings import catch_warnings, simplefilter

import numpy as np

from . import solver
from .errors import InputError
from .labdata import _HEADER, CsvError, _sep_name, _separator
from .plausibility import SLIP_MARGIN, USUAL, slip_hint, usual_range
from .scenarios import save, validate_inputs
from .schemas.presslog import PressLogRequest
from .solve import CAUTIONS, build_system, first_non_finite, solve
from .solver import logfit, planning
from .units import UnitError, parse_quantity

#: Most rows a log may have (1,000 cycles of 5,000 rows).
MAX_ROWS = 5_000_000

#: Column key -> (names people give it, quantity kind, label). Names are matched without case.
LOG_COLUMNS = {
    "time": (("time", "t", "zeit", "elapsed time", "seconds"), "time", "time"),
    "timestamp": (("timestamp", "date", "datetime", "date time", "zeitstempel"), None, "timestamp"),
    "pressure": (("pressure", "feed pressure", "p", "druck", "pressure drop", "feed pressure drop"), "pressure",
                 "feed pressure"),
    "flow": (("flow", "filtrate flow", "flow rate", "filtrate rate", "q", "filtrate flow rate"), "flow",
             "filtrate flow"),
    "volume": (("volume", "filtrate", "filtrate volume", "cumulative filtrate", "cumulative volume", "v",
                "tank volume"), "volume", "filtrate volume"),
    "mass": (("mass", "filtrate mass", "load cell", "weight", "filtrate weight"), "mass", "filtrate mass"),
    "cycle": (("cycle", "cycle number", "batch", "cycle no"), None, "cycle"),
}
#: Allowed ranges of the readings, SI (a reading outside is refused, never clamped).
RANGES = {
    "time": (0.0, 1e10, "s"), "pressure": (-1e5, 1e8, "Pa"), "flow": (-10.0, 10.0, "m³/s"),
    "volume": (-1e3, 1e6, "m³"), "mass": (-1e6, 1e9, "kg"), "cycle": (0.0, 1e9, ""),
}
EXAMPLE = "time [s], feed pressure [bar], filtrate flow [L/min]"
SAMPLE_UNITS = {"time": "s", "pressure": "bar", "flow": "L/min", "volume": "L", "mass": "kg"}

UNITS = {
    "time": "s", "pressure": "Pa", "flow": "m^3/s", "volume": "m^3", "resistance": "m/kg",
    "medium_resistance": "1/m", "growth_per_cycle": "1/m", "throughput": "m^3/s", "integral": "Pa*s",
    "residual_rms": "Pa*s", "ratio": "1", "cycle_time": "s", "filtration_time": "s", "filtrate_volume": "m^3",
    "wash_time": "s", "wash_interval": "cycles", "reference_pressure": "Pa", "filter_area": "m^2",
    "viscosity": "Pa*s", "c": "kg/m^3",
}


@dataclass(frozen=True)
class Log:
    time: np.ndarray  # s from the first row
    pressure: np.ndarray  # Pa
    volume: np.ndarray  # m^3, cumulative (from flow: integrated over the log)
    signal: str  # "flow", "volume" or "mass"
    cycle: np.ndarray | None
    dates: np.ndarray | None  # datetime64[ms] when the log gave timestamps
    flow: np.ndarray | None  # m^3/s when logged
    units: dict  # column key -> header as written
    separator: str
    decimal: str
    line_of_row: np.ndarray | None  # file line of each data row when blank or comment lines were skipped

    def where(self, row: int) -> str:
        line = int(self.line_of_row[row]) if self.line_of_row is not None else row + 2
        return f"line {line} (row {row + 1})"


def _columns(names: list[str], header_line: int, ignore: set) -> dict:
    columns = {}
    for pos, cell in enumerate(names):
        if not cell:
            continue
        m = _HEADER.match(cell)
        name = (m.group(1) if m else cell).strip().lower()
        key = next((k for k, (alias, _, _) in LOG_COLUMNS.items() if name in alias), None)
        if key is None:
            if cell in ignore or name in ignore:
                continue
            known = ", ".join(f"'{spec[0][0]}'" for spec in LOG_COLUMNS.values())
            raise CsvError(header_line, f"column {pos + 1} '{cell}' is not a press-log column (known: {known}); "
                                        "leave it out of the file or list it in ignore_columns")
        kind = LOG_COLUMNS[key][1]
        if kind is not None and not m:
            raise CsvError(header_line, f"column {pos + 1} '{cell}' has no unit: write it as, for example, "
                                        f"'{cell} [{SAMPLE_UNITS[key]}]'")
        if key in columns:
            raise CsvError(header_line, f"column {pos + 1} '{cell}': two columns give the {LOG_COLUMNS[key][2]}")
        factor = 1.0
        if kind is not None:
            unit = m.group(2)
            try:
                factor = parse_quantity(f"1 {unit}", kind)
                if kind != "time" and parse_quantity(f"0 {unit}", kind) != 0.0:
                    raise UnitError("a unit with an offset cannot be read here")
            except UnitError as exc:
                raise CsvError(header_line, f"column {pos + 1} '{cell}': [{unit}] is not a {LOG_COLUMNS[key][2]} "
                                            f"unit ({exc})") from None
        columns[key] = (pos, cell, factor)
    if "time" in columns and "timestamp" in columns:
        raise CsvError(header_line, "give either a time column or a timestamp column, not both")
    if "time" not in columns and "timestamp" not in columns:
        raise CsvError(header_line, f"no time column in the header: name the columns with their units, such as "
                                    f"'{EXAMPLE}' (or a 'timestamp' column of ISO 8601 dates)")
    if "pressure" not in columns:
        raise CsvError(header_line, f"no feed pressure column in the header, such as '{EXAMPLE}'")
    signals = [k for k in ("flow", "volume", "mass") if k in columns]
    if len(signals) != 1:
        raise CsvError(header_line, "give exactly one of a filtrate flow, a cumulative filtrate volume or a filtrate "
                                    f"mass column; got {len(signals) or 'none'}")
    return columns


def _numbers(cells: list, cell_name: str, col: int, row_at, decimal_comma: bool = False) -> np.ndarray:
    """A column of text cells -> floats; the first cell that does not read is named."""
    try:
        values = np.array(cells, dtype=float)
    except ValueError:
        for i, cell in enumerate(cells):
            try:
                float(cell)
            except ValueError:
                what = "is empty" if not cell.strip() else f"'{cell.strip()[:40]}' is not a number"
                if decimal_comma and cell.count(".") > 1:
                    what += " (the file uses decimal commas: a cell mixes a decimal comma and a point)"
                raise CsvError(None, f"{row_at(i)}, column {col + 1} '{cell_name}': {what}") from None
        raise
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        i = int(bad[0])
        raise CsvError(None, f"{row_at(i)}, column {col + 1} '{cell_name}': '{cells[i].strip()}' is not a finite "
                             "number")
    return values


def _fast_columns(data: bytes, sep: str, numeric: list) -> dict | None:
    """The numeric columns by numpy's C reader (fast, and lean on memory for tens of MB), or
    None when a cell does not read as a finite number (the slow path then names it)."""
    try:
        with catch_warnings():
            simplefilter("ignore")
            table = np.loadtxt(io.BytesIO(data), delimiter=sep, usecols=[pos for _, pos in numeric], dtype=float,
                               comments=None, ndmin=2, encoding="utf-8")
    except ValueError:
        return None
    if not np.isfinite(table).all():
        return None
    return {key: table[:, j] for j, (key, _) in enumerate(numeric)}


def _text_column(data: bytes, sep: str, pos: int) -> list:
    return np.loadtxt(io.BytesIO(data), delimiter=sep, usecols=[pos], dtype=str, comments=None, ndmin=1,
                      encoding="utf-8").tolist()


def _dates(cells: list, cell_name: str, col: int, row_at) -> np.ndarray:
    """ISO 8601 dates -> datetime64[ms]; a time zone offset ("+01:00", "Z") is taken to UTC."""
    texts = [c.strip() for c in cells]
    try:
        with catch_warnings():  # numpy warns that it converts an offset to UTC: wanted here
            simplefilter("ignore")
            return np.array(texts, dtype="datetime64[ms]")
    except ValueError:
        for i, cell in enumerate(texts):
            try:
                with catch_warnings():
                    simplefilter("ignore")
                    np.datetime64(cell, "ms")
            except ValueError:
                raise CsvError(None, f"{row_at(i)}, column {col + 1} '{cell_name}': '{cell[:40]}' is not an ISO 8601 "
                                     "date and time such as 2026-03-01 08:00:05") from None
        raise


def read_log(text: str, ignore_columns=(), filtrate_density: float | None = None) -> Log:
    """A press log in SI from CSV text; CsvError names the line, row and column of a problem.

    The rows are handled as one text, not line by line: cells per row counted with numpy on
    the bytes, the numbers read by numpy's C reader (a 2-million-row log in about a second).
    Only a file with a cell that does not read is split cell by cell, to name that cell; blank
    and comment lines take a slower path that remembers line numbers.
    """
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    pos, first = 0, 0
    while True:  # the header: the first line that is neither blank nor a comment
        end = text.find("\n", pos)
        line = text[pos:] if end < 0 else text[pos:end]
        if line.strip() and not line.lstrip().startswith("#"):
            break
        if end < 0:
            raise CsvError(None, f"the text is empty: give a header such as '{EXAMPLE}' and rows below it")
        pos, first = end + 1, first + 1
    header = line
    sep = _separator(header)
    names = [h.strip() for h in header.split(sep)]
    columns = _columns(names, first + 1, set(ignore_columns))
    body = "" if end < 0 else text[end + 1:].rstrip("\n")
    line_of_row = None
    if any(mark in body for mark in ("\n\n", "#", "\n ", "\n\t")) or body[:1] in (" ", "\t"):
        # perhaps blank or comment lines: left out, line numbers kept
        lines = body.split("\n")
        keep = [i for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")]
        line_of_row = np.asarray(keep, dtype=np.int64) + first + 2
        body = "\n".join(lines[i] for i in keep)
    if not body:
        raise CsvError(None, "no rows below the header")
    nrows = body.count("\n") + 1
    if nrows > MAX_ROWS:
        raise CsvError(None, f"at most {MAX_ROWS:,} rows; got {nrows:,}")

    def row_at(i):
        line = int(line_of_row[i]) if line_of_row is not None else i + first + 2
        return f"line {line} (row {i + 1})"

    ncols = len(names)
    data = body.encode("utf-8")
    raw = np.frombuffer(data, dtype=np.uint8)
    breaks = np.flatnonzero(raw == 10)
    seps = np.flatnonzero(raw == ord(sep))
    counts = np.bincount(np.searchsorted(breaks, seps), minlength=nrows)
    wrong = np.flatnonzero(counts != ncols - 1)
    if wrong.size:
        i = int(wrong[0])
        raise CsvError(None, f"{row_at(i)}: expected {ncols} values separated by {_sep_name(sep)}; got {counts[i] + 1}")
    del raw, breaks, seps, counts
    decimal_comma = sep != "," and b"," in data
    if decimal_comma:  # one pass over the text; a cell that mixes both no longer reads as a number
        data = data.replace(b",", b".")
    numeric = [(key, pos) for key, (pos, _, _) in columns.items() if key != "timestamp"]
    parsed = _fast_columns(data, sep, numeric)
    flat = None
    if parsed is None:  # some cell does not read: find it, cell by cell, to name it
        flat = (body.replace(",", ".") if decimal_comma else body).replace("\n", sep).split(sep)
    values, dates = {}, None
    for key, (pos, cell_name, factor) in columns.items():
        if key == "timestamp":
            cells = flat[pos::ncols] if flat is not None else _text_column(data, sep, pos)
            dates = _dates(cells, cell_name, pos, row_at)
            continue
        if parsed is not None:
            v = parsed[key] * factor
        else:
            v = _numbers(flat[pos::ncols], cell_name, pos, row_at, decimal_comma) * factor
        low, high, unit = RANGES[key]
        out = np.flatnonzero((v < low) | (v > high))
        if out.size:
            i = int(out[0])
            raise CsvError(None, f"{row_at(i)}, column {pos + 1} '{cell_name}': {v[i]:.6g} {unit} is outside the "
                                 f"allowed range {low:g} to {high:g} {unit}".replace("  ", " "))
        values[key] = v
    if dates is not None:
        t = (dates - dates[0]).astype("timedelta64[ms]").astype(np.int64) / 1000.0
        time_pos, time_name = columns["timestamp"][:2]
    else:
        t = values["time"] - values["time"][0]
        time_pos, time_name = columns["time"][:2]
    back = np.flatnonzero(np.diff(t) < 0)
    if back.size:
        i = int(back[0]) + 1
        raise CsvError(None, f"{row_at(i)}, column {time_pos + 1} '{time_name}': time goes backwards "
                             f"({t[i - 1] + (0 if dates is not None else values['time'][0]):.6g} s, then "
                             f"{t[i] + (0 if dates is not None else values['time'][0]):.6g} s); sort the rows by time")
    signal = next(k for k in ("flow", "volume", "mass") if k in values)
    flow = None
    if signal == "flow":
        flow = values["flow"]
        volume = np.concatenate(([0.0], np.cumsum(0.5 * (flow[1:] + flow[:-1]) * np.diff(t))))
    elif signal == "volume":
        volume = values["volume"]
    else:
        if filtrate_density is None:
            raise CsvError(None, "a filtrate mass column needs filtrate_density (kg/m³) to give the volume")
        volume = values["mass"] / filtrate_density
    units = {k: cell for k, (_, cell, _) in columns.items()}
    cycle = values.get("cycle")
    return Log(t, values["pressure"], volume, signal, cycle, dates, flow, units, _sep_name(sep),
               "comma" if decimal_comma else "point", line_of_row)


def _csv_error(exc: CsvError) -> InputError:
    return InputError([(("body", "csv"), str(exc))])


def _check_gaps(log: Log, cycles: logfit.Cycles, gap: float | None, use) -> None:
    """A pause in the log while the press is under pressure cannot be integrated over."""
    dt = np.diff(log.time)
    step = float(np.median(dt)) if dt.size else 0.0
    limit = gap if gap is not None else max(60.0, 20.0 * step)
    inside = np.zeros(log.time.size, dtype=bool)
    for a, b in zip(cycles.first[use], cycles.last[use]):  # a few hundred cycles: slices, not rows
        inside[a + 1:b + 1] = True
    bad = np.flatnonzero(inside[1:] & (dt > limit)) + 1
    if bad.size:
        i = int(bad[0])
        raise CsvError(None, f"{log.where(i)}, column '{log.units.get('time') or log.units.get('timestamp')}': a gap "
                             f"of {dt[i - 1]:.6g} s in the log while the press is under pressure (more than "
                             f"{limit:.6g} s): the filtration cannot be integrated over it; exclude the cycle, or "
                             "give a longer gap if the logger writes only when a value changes")


def _cycles_phrase(numbers, capital: bool = False) -> str:
    """'cycle 5', 'cycles 5 and 9', 'cycles 2, 3 and 7' (at most ten named, then '… and n more')."""
    n = [str(int(x)) for x in numbers]
    word = ("Cycle" if capital else "cycle") + ("s" if len(n) > 1 else "")
    if len(n) > 10:
        return f"{word} {', '.join(n[:10])} and {len(n) - 10} more"
    if len(n) > 1:
        return f"{word} {', '.join(n[:-1])} and {n[-1]}"
    return f"{word} {n[0]}" if n else f"no {word.lower()}"


def _cycle_parts(best: dict) -> dict:
    """What a best cycle of the model counts [s]: filtration, the stages after it (wash,
    squeeze, blow, filling) and the downtime."""
    stages = best["cycle_time"] - best["filtration_time"] - best["downtime"]
    return {"cycle_time": best["cycle_time"], "filtration_time": best["filtration_time"],
            "stage_time": max(stages, 0.0), "downtime": best["downtime"]}


def _trend(tr: logfit.Trend) -> dict:
    return {"slope": tr.slope, "slope_low": tr.slope_low, "slope_high": tr.slope_high, "intercept": tr.intercept,
            "scatter": tr.scatter}


#: A cycle's filtrate above this many times what the chambers hold (the scenario's cake volume
#: ratio) is taken for a unit slip: the cake volume ratio may be off by tens of per cent, a
#: press cannot hold three times its chambers, and a unit slip is a factor of 16.7 (L/min read as
#: m³/h), 60 or 1000.
FULL_MARGIN = 3.0
#: The units a log column's values may really be in, to name a likely slip (a volume, mass or flow).
SLIP_UNITS = {"flow": ("L/s", "L/min", "L/h", "m^3/min", "m^3/h", "gal/min"), "volume": ("L", "m^3", "gal"),
              "mass": ("kg", "t", "g", "lb"), "pressure": ("bar", "kPa", "MPa", "psi", "Pa")}


def _header_unit(cell: str) -> str:
    m = _HEADER.match(cell)
    return m.group(2) if m else ""


def _reread(value_si: float, key: str, cell: str, fits_si) -> tuple | None:
    """The unit the column's values most likely are in: (unit, value re-read in SI) for the unit
    that brings ``value_si`` into ``fits_si(v)`` (a callable: the distance from what fits, 0 inside),
    the nearest of SLIP_UNITS; None when none does."""
    kind = LOG_COLUMNS[key][1]
    unit = _header_unit(cell)
    try:
        factor = parse_quantity(f"1 {unit}", kind)
    except UnitError:
        return None
    best = None
    for cand in SLIP_UNITS[key]:
        f = parse_quantity(f"1 {cand}", kind)
        if math.isclose(f, factor, rel_tol=1e-9):
            continue
        v = value_si * f / factor
        d = fits_si(v)
        if d == 0.0 and (best is None or abs(math.log(f / factor)) < best[2]):
            best = (cand.replace("^3", "³"), v, abs(math.log(f / factor)))
    return best[:2] if best else None


def _log_checks(log: Log, fits, sel, used_numbers, inputs, V_full: float, v: float) -> dict:
    """Unit slips in the log's columns, judged against the press and the trade: a cycle's filtrate
    far beyond what the chambers hold, a pressure far outside press pressures or far above the
    scenario's feed. Each names the cycles, the column and the likely unit; when the log's values
    cannot be what they say, the calibrated copy is withheld."""
    warnings, withhold = [], False
    numbers = used_numbers[sel]
    V = fits.filtrate_volume[sel]
    over = V > FULL_MARGIN * V_full
    if over.any():
        withhold = True
        key = log.signal
        cell = log.units[key]
        V_med = float(np.median(V[over]))
        slip = _reread(V_med, key, cell, lambda v: 0.0 if 0.1 * V_full <= v <= 1.2 * V_full else 1.0)
        named = _cycles_phrase(numbers[over].tolist(), capital=True)
        each = "" if over.sum() == 1 else " each (median)"
        why = (f"read as {slip[0]}, {'it' if over.sum() == 1 else 'they'} would collect {slip[1]:.3g} m³"
               f"{each}, {100 * slip[1] / V_full:.0f} % of chambers full" if slip else "check the column's unit")
        warnings.append(
            f"{named} {'collects' if over.sum() == 1 else 'collect'} {V_med:.3g} m³ of filtrate{each}, "
            f"{V_med / V_full:.3g} times what the press's chambers hold: with the scenario's cake volume ratio "
            f"({v:.3g} m³ of cake per m³ of filtrate), the chambers are full at {V_full:.3g} m³ of filtrate. "
            f"No cycle of this press can do that: the column '{cell}' is most likely in another unit ({why}). "
            "Every value below follows the log as read and is wrong by the same factor; no calibrated copy is "
            "offered from this log. "
            "Fix the header's unit and evaluate the log again.")
    p_top = fits.max_pressure[sel]
    cell = log.units["pressure"]
    unit = _header_unit(cell)
    try:
        per_unit = parse_quantity(f"1 {unit}", "pressure")
    except UnitError:
        per_unit, unit = 1e5, "bar"
    low, high = USUAL["feed.pressure"]
    p_max = float(np.max(p_top))
    p_med = float(np.median(p_top))
    feed = _feed_pressure(inputs.feed)
    if p_max > SLIP_MARGIN * high or p_med < low / SLIP_MARGIN:
        withhold = True
        far = p_top > SLIP_MARGIN * high if p_max > SLIP_MARGIN * high else p_top < low / SLIP_MARGIN
        shown = p_max if p_max > SLIP_MARGIN * high else p_med
        slip = slip_hint(None, shown, low, high) or "check the column's unit."
        again = _reread(shown, "pressure", cell, lambda p: 0.0 if low / 3 <= p <= high else 1.0)
        reread = f" Read as {again[0]}, it would be {again[1] / 1e5:.3g} bar." if again else ""
        warnings.append(
            f"The feed pressure in {_cycles_phrase(numbers[far].tolist())} reaches {shown / per_unit:.4g} {unit}"
            f"{'' if unit == 'bar' else f' ({shown / 1e5:.4g} bar)'} as the column '{cell}' reads, far outside the "
            f"usual {usual_range('feed.pressure', unit)} of filter presses: {slip[0].lower()}{slip[1:]}{reread}"
            " The cake and cloth resistances scale with the pressure, so every value "
            "below is wrong by the same factor; no calibrated copy is offered from this log. A press is pressure "
            "equipment: never run it above its plates' rated pressure.")
    elif feed is not None and p_max > 1.5 * feed:
        warnings.append(
            f"The feed pressure in the log reaches {p_max / per_unit:.4g} {unit}"
            f"{'' if unit == 'bar' else f' ({p_max / 1e5:.4g} bar)'}, "
            f"well above the scenario's {feed / 1e5:.4g} bar: check the column's unit and that this log belongs "
            "to this scenario. A press is pressure equipment: never run it above its plates' rated pressure.")
    return {"chambers_full_volume": V_full, "cycles_beyond_chambers": numbers[over].astype(int).tolist(),
            "max_pressure": p_max, "scenario_feed_pressure": feed, "calibration_withheld": withhold,
            "warnings": warnings}


def _feed_pressure(feed) -> float | None:
    """The highest pressure the scenario's feed reaches [Pa], or None."""
    for name in ("pressure", "max_pressure"):
        value = getattr(feed, name, None)
        if value:
            return float(value)
    steps = getattr(feed, "steps", None)
    if steps:
        return float(max(s[0] for s in steps))
    points = getattr(feed, "points", None)
    if points:
        return float(max(p[1] for p in points))
    return None


def _calibrated_inputs(raw: dict, plant: dict, growth: float | None, keep_cloth: bool = False) -> dict:
    """The scenario with the plant's alpha and, unless ``keep_cloth`` (an R_m the log does not
    resolve), its clean cloth and the cloth's growth."""
    out = {**raw}
    cake = {**raw["cake"], "resistance": plant["resistance"]}
    cake.pop("resistance_stderr", None)
    if plant.get("resistance_stderr"):
        cake["resistance_stderr"] = plant["resistance_stderr"]
    out["cake"] = cake
    if keep_cloth:
        return out
    out["medium_resistance"] = plant["medium_resistance"]
    out.pop("medium_resistance_stderr", None)
    out.pop("resistance_medium_correlation", None)
    if plant.get("medium_resistance_stderr"):
        out["medium_resistance_stderr"] = plant["medium_resistance_stderr"]
    if growth is not None and growth > 0:
        out["cloth"] = {**(raw.get("cloth") or {}), "resistance_growth_per_cycle": growth}
    return out


def analyse(req: PressLogRequest, store=None) -> dict:
    """The whole /api/v1/press-log answer as plain SI data (checked finite), and the saved
    calibrated copy when asked for. Nothing is saved unless every step succeeded."""
    # the scenario: c, mu and the filter area
    parent = None
    if req.scenario_id is not None:
        if store is None:
            raise InputError([(("body", "scenario_id"), "no store to read saved scenarios from")])
        saved = store.get(req.scenario_id)
        if saved is None:
            raise InputError([(("body", "scenario_id"), f"no saved scenario {req.scenario_id!r}")])
        raw, prefix, parent = saved.inputs, ("body", "scenario_id"), saved.id
    else:
        raw, prefix = req.inputs, ("body", "inputs")
    inputs = validate_inputs(raw, prefix)
    if inputs.cake.local is not None:
        raise InputError([((*prefix, "cake", "local"), "the press log fits the cake's average resistance: give the "
                                                        "scenario's cake as resistance (with compressibility), not "
                                                        "local laws")])
    try:
        built = build_system(inputs)
    except InputError as exc:
        raise exc.within(prefix) from None
    f = built.system.filtration
    A, mu, c = built.system.press.filter_area, f.viscosity, f.solids_per_filtrate

    try:
        log = read_log(req.csv, req.ignore_columns or (), req.filtrate_density)
        cycles = logfit.find_cycles(log.time, log.pressure, log.volume if log.signal != "flow" else None,
                                    log.cycle, req.gap, req.pressure_on_share)
        if cycles.count == 0:
            raise CsvError(None, "no cycle found: the feed pressure never rises for long (check the pressure column "
                                 "and its unit)")
    except CsvError as exc:
        raise _csv_error(exc) from None
    numbers = np.arange(1, cycles.count + 1)
    if log.cycle is not None:
        numbers = log.cycle[cycles.start].astype(np.int64)
    excluded = set(req.exclude_cycles or ())
    unknown = sorted(excluded - set(numbers.tolist()))
    if unknown:
        raise InputError([(("body", "exclude_cycles"), f"no cycle {unknown[0]} in the log: cycles are numbered "
                                                        f"{numbers[0]} to {numbers[-1]}")])
    use = np.array([n not in excluded for n in numbers.tolist()])
    if use.sum() < 1:
        raise InputError([(("body", "exclude_cycles"), "every cycle is excluded: keep at least one")])
    try:
        _check_gaps(log, cycles, req.gap, use)
    except CsvError as exc:
        raise _csv_error(exc) from None
    V_phase = log.volume[cycles.last] - log.volume[cycles.first]
    empty = np.flatnonzero(use & ~(V_phase > 0))
    if empty.size:
        k = int(empty[0])
        raise InputError([(("body", "csv"), f"cycle {int(numbers[k])} ({log.where(int(cycles.first[k]))} to "
                                            f"{log.where(int(cycles.last[k]))}) collects no filtrate under pressure: "
                                            "check the flow or volume column, or exclude the cycle")])
    try:
        fits = logfit.fit_cycles(
            log.time, log.pressure, log.volume, cycles, A, mu, c, use=use, compressibility=f.compressibility,
            reference_pressure=f.reference_pressure, pressure_basis=f.pressure_basis,
            volume_scatter="integrated" if log.signal == "flow" else "reading")
    except solver.SolverInputError as exc:
        where = ("body", "exclude_cycles") if exc.parameter == "cycles" else ("body", "csv")
        msg = exc.message
        if exc.parameter == "cycles":  # the solver counts the fitted cycles from 1: name the log's number
            k = int(msg.split()[1]) - 1
            msg = msg.replace(f"cycle {k + 1} ", f"cycle {int(numbers[k])} ", 1)
        raise InputError([(where, msg)]) from None
    used_numbers = numbers[use]
    k_used = np.flatnonzero(use)
    warnings = []

    # cycle times: from one filtration start to the next
    starts = log.time[cycles.first]
    cycle_time = np.append(np.diff(starts), np.nan)

    # which fitted cycles the summaries use: physically valid fits only, each left out named
    reasons = logfit.screen_cycles(fits)
    valid = np.array([not r for r in reasons])
    left_out = [{"number": int(used_numbers[i]), "reasons": reasons[i]} for i in np.flatnonzero(~valid)]
    if left_out:
        named = "; ".join(f"cycle {c['number']}: {', '.join(c['reasons'])}" for c in left_out[:10])
        more = f"; and {len(left_out) - 10} more" if len(left_out) > 10 else ""
        if valid.any():
            verb = "is" if len(left_out) == 1 else "are"
            warnings.append(f"{_cycles_phrase([c['number'] for c in left_out], capital=True)} {verb} left out of the "
                            f"plant values, calibration, trends and cloth blinding ({named}{more}): the logged "
                            "pressure and flow do not follow the rate equation there; check the cycle or exclude it.")
        else:
            warnings.append(f"No cycle gives a physically valid fit ({named}{more}): the plant values below use every "
                            "cycle and mean little; nothing can be calibrated or saved from this log.")
            valid = np.ones_like(valid)
    sel = np.flatnonzero(valid)
    sum_numbers = used_numbers[sel]
    alpha_v, rm_v = fits.resistance[sel], fits.medium_resistance[sel]
    V_full = float(built.system.press.chambers_full_volume(f.cake_volume_ratio))
    checks = _log_checks(log, fits, sel, used_numbers, inputs, V_full, f.cake_volume_ratio)
    warnings[:0] = checks["warnings"]  # first: everything below depends on them
    patterned = used_numbers[fits.patterned]
    if patterned.size:
        warnings.append(f"In {_cycles_phrase(patterned.tolist())} the residuals of the fit follow a pattern, not "
                        "noise: the model does not describe the log there exactly (a compressibility or pressure "
                        "basis that is not the cake's, or a log step too coarse for the curve of the flow); "
                        f"{'its' if patterned.size == 1 else 'their'} standard errors are widened to allow for it.")

    # cloth washes and blinding
    if req.cloth_washes is not None:
        wash_numbers = sorted(set(req.cloth_washes))
        missing = [w for w in wash_numbers if w not in set(numbers.tolist())]
        if missing:
            raise InputError([(("body", "cloth_washes"), f"no cycle {missing[0]} in the log: cycles are numbered "
                                                         f"{numbers[0]} to {numbers[-1]}")])
        wash_pos = np.searchsorted(sum_numbers, wash_numbers)
        washes_from = "user"
    else:
        wash_pos = logfit.detect_washes(rm_v)
        washes_from = "detected"
    blinding = logfit.cloth_blinding(sum_numbers, rm_v, wash_pos)
    wash_cycles = [int(sum_numbers[p]) for p in blinding.washes] if washes_from == "detected" else wash_numbers

    # trends
    drift = logfit.alpha_drift(sum_numbers, alpha_v)
    if drift.flagged:
        warnings.append(drift.note)
    rm_trend = logfit.robust_trend(sum_numbers, rm_v)

    # does the log's step resolve the cloth? (a feed started between two rows)
    res = logfit.cloth_resolution(fits, valid, A, mu, c)
    start_term = float(np.median(fits.start_bound[sel])) / math.sqrt(12.0)  # uniform within the bound

    # the plant's values: alpha as the median of the valid cycles, the clean cloth from the blinding fit
    centre = logfit.robust_centre(alpha_v, fits.resistance_stderr[sel])
    alpha_plant, alpha_se = centre.value, centre.stderr
    clean_se = math.hypot(blinding.clean_stderr, start_term)
    plant = {"resistance": alpha_plant, "resistance_stderr": alpha_se, "medium_resistance": blinding.clean,
             "medium_resistance_stderr": clean_se, "reference_pressure": f.reference_pressure,
             "compressibility": f.compressibility, "pressure_basis": f.pressure_basis,
             "cycles_used": int(sel.size), "cycles_left_out": left_out, "medium_resistance_resolved": res.resolved,
             "medium_resistance_start_share": res.share, "log_step": res.step,
             "log_step_needed": None if math.isnan(res.step_needed) else res.step_needed}
    if not res.resolved:
        if res.step_needed >= 1.0:
            needed = f" Log at least every {res.step_needed:.2g} s while the feed starts, or mark the start of feeding."
        elif res.step_needed > 0:
            needed = (f" It would take a step of about {res.step_needed:.2g} s while the feed starts, which few "
                      "plant loggers write: the cloth is small against this cake, and its resistance is better "
                      "measured on the cloth itself (a clean-water test) or taken from the lab.")
        else:
            needed = " Log more often while the feed starts, or mark the start of feeding."
        limit = f"{100 * logfit.RESOLUTION_SHARE:.0f} %"
        warnings.append(
            f"The log's step of {res.step:.3g} s is too coarse to resolve the cloth resistance: a feed started up to "
            "one step before the first row under pressure filtrates a volume the log does not see, and the cake "
            f"resistance of that volume can reach {100 * res.share:.0f} % of the fitted R_m (which may be too high by "
            "as much; "
            f"at most {limit} resolves it).{needed} No cloth-wash interval is recommended from this R_m"
            + (" (and no calibrated copy is made from this log: see above)." if checks["calibration_withheld"]
               else ", and the calibrated copy keeps the scenario's cloth resistance."))
    if not blinding.clean > 0:
        warnings.append("The cloth resistance from the log is not above zero: the calibrated copy needs a cloth "
                        "resistance above 0, so it cannot be saved from this log.")
    lab = inputs.cake
    calibration = {
        "from_lab_fit": lab.resistance_stderr is not None or inputs.medium_resistance_stderr is not None,
        "lab_resistance": lab.resistance, "lab_medium_resistance": inputs.medium_resistance,
    }
    r, r_se = logfit.ratio_with_error(alpha_plant, alpha_se, lab.resistance, lab.resistance_stderr)
    calibration.update(resistance_ratio=r, resistance_ratio_stderr=r_se)
    if inputs.medium_resistance > 0:
        r, r_se = logfit.ratio_with_error(blinding.clean, clean_se, inputs.medium_resistance,
                                          inputs.medium_resistance_stderr)
        calibration.update(medium_resistance_ratio=r, medium_resistance_ratio_stderr=r_se)
    else:
        calibration.update(medium_resistance_ratio=None, medium_resistance_ratio_stderr=None)
        warnings.append("The scenario neglects the cloth resistance (0 1/m): no ratio for it.")

    # the wash interval from the planning model at the plant's values and typical cycle
    parts = inputs.cycle.downtime_parts
    wash_time = req.cloth_wash_time
    if wash_time is None and parts is not None and parts.cloth_wash is not None:
        wash_time = parts.cloth_wash.time
    growth = blinding.growth
    cloth = {
        "washes": wash_cycles, "washes_from": washes_from, "growth_per_cycle": growth,
        "growth_per_cycle_stderr": blinding.growth_stderr,
        "relative_growth_per_cycle": growth / blinding.clean if blinding.clean > 0 else None,
        "clean_resistance": blinding.clean, "clean_resistance_stderr": clean_se,
        "current_resistance": blinding.current, "cycles_since_wash": blinding.cycles_since_wash,
        "wash_interval": None, "resolved": res.resolved,
    }
    calibrated = calibrated_system = None
    usable = len(left_out) < fits.resistance.size  # some cycle gave a physically valid fit
    if usable and blinding.clean > 0 and alpha_plant > 0 and not checks["calibration_withheld"]:
        calibrated = _calibrated_inputs(raw, plant, growth if growth > 0 else None, keep_cloth=not res.resolved)
        try:
            calibrated_system = build_system(validate_inputs(calibrated, prefix)).system
        except InputError as exc:
            warnings.append("The scenario with the plant's values is refused ("
                            f"{exc.errors[0][1]}): no calibrated copy from this log.")
            calibrated = None
    V_typical = float(np.median(fits.filtrate_volume[sel]))
    if not res.resolved:
        pass  # said above: no advice built on an unresolved R_m
    elif wash_time is None:
        warnings.append("No cloth wash time (cloth_wash_time, or the scenario's downtime_parts.cloth_wash): no "
                        "wash interval recommended.")
    elif not growth > 0 or growth <= 2.0 * blinding.growth_stderr:
        warnings.append("The cloth resistance does not grow measurably from cycle to cycle in this log: no wash "
                        "interval recommended.")
    elif calibrated_system is not None:
        wear = planning.cloth_wear(calibrated_system, V_typical, growth, wash_time)
        cloth["wash_interval"] = {"best": wear.best_interval, "classic": wear.classic_interval,
                                  "wash_time": wash_time, "filtrate_volume": V_typical,
                                  "first_increase": wear.first_increase}

    # throughput per cycle against the model's best
    throughput = fits.filtrate_volume / cycle_time[k_used]
    try:
        best = solve(inputs).results["best"]
    except InputError as exc:
        raise exc.within(prefix) from None
    model = {"filtrate_throughput": best["filtrate_throughput"], **_cycle_parts(best)}
    plant_q = throughput[sel]
    plant_q = plant_q[np.isfinite(plant_q)]
    model["plant_filtrate_throughput"] = float(np.median(plant_q)) if plant_q.size else None
    plant_ct = cycle_time[k_used][sel]
    plant_ct = plant_ct[np.isfinite(plant_ct)]
    model["plant_cycle_time"] = float(np.median(plant_ct)) if plant_ct.size else None
    model["plant_filtration_time"] = float(np.median(fits.filtration_time[sel]))
    if calibrated is not None:
        try:
            cal_best = solve(validate_inputs(calibrated, prefix)).results["best"]
            model["calibrated_filtrate_throughput"] = cal_best["filtrate_throughput"]
            model["calibrated"] = _cycle_parts(cal_best)
        except InputError as exc:
            model["calibrated_filtrate_throughput"] = None
            warnings.append(f"The scenario with the plant's values cannot be solved ({exc.errors[0][1]}).")

    # the cycle drawn
    chart_number = req.chart_cycle if req.chart_cycle is not None else int(used_numbers[-1])
    if chart_number not in set(used_numbers.tolist()):
        raise InputError([(("body", "chart_cycle"), f"cycle {chart_number} is not among the cycles fitted ("
                                                     f"{used_numbers[0]} to {used_numbers[-1]}, less those excluded)")])
    index = int(np.flatnonzero(used_numbers == chart_number)[0])
    k = int(k_used[index])
    curves = logfit.cycle_curves(log.time, log.pressure, log.volume, cycles, k, fits, index, A, mu, c)
    if log.flow is not None:
        curves["flow"] = log.flow[cycles.first[k]:cycles.last[k] + 1]
    else:  # a flow from the volume readings, for the picture only (the fit never differentiates)
        curves["flow"] = np.gradient(curves["volume"], curves["time"]) if curves["time"].size > 1 else curves["volume"]
    chart = {"number": chart_number, **{key: np.asarray(v, dtype=float).tolist() for key, v in _thin(curves).items()}}

    rows_out = []
    fit_at = {int(kk): i for i, kk in enumerate(k_used)}
    dates = log.dates
    for kk in range(cycles.count):
        row = {"number": int(numbers[kk]), "excluded": not bool(use[kk]),
               "start_time": float(log.time[cycles.first[kk]]),
               "start_date": str(dates[cycles.first[kk]]) if dates is not None else None,
               "cycle_time": None if math.isnan(cycle_time[kk]) else float(cycle_time[kk])}
        i = fit_at.get(kk)
        if i is not None:
            row.update(
                filtration_time=float(fits.filtration_time[i]), filtrate_volume=float(fits.filtrate_volume[i]),
                mean_pressure=float(fits.mean_pressure[i]), max_pressure=float(fits.max_pressure[i]),
                resistance=float(fits.resistance[i]), resistance_stderr=float(fits.resistance_stderr[i]),
                medium_resistance=float(fits.medium_resistance[i]),
                medium_resistance_stderr=float(fits.medium_resistance_stderr[i]),
                resistance_medium_correlation=float(fits.correlation[i]), r_squared=float(fits.r_squared[i]),
                residual_rms=float(fits.residual_rms[i]), rows=int(fits.rows[i]),
                throughput=None if math.isnan(throughput[i]) else float(throughput[i]),
                after_wash=int(numbers[kk]) in set(wash_cycles), left_out=reasons[i] or None,
                medium_resistance_start_bound=float(fits.start_bound[i]), residual_pattern=bool(fits.patterned[i]))
        rows_out.append(row)

    out = {
        "cycles_found": cycles.count, "how_found": cycles.how, "rows": int(log.time.size),
        "columns": log.units, "separator": log.separator, "decimal": log.decimal, "signal": log.signal,
        "scenario": {"filter_area": A, "viscosity": mu, "c": c, "id": parent},
        "cycles": rows_out,
        "trend": {"resistance": _trend(drift.trend), "medium_resistance": _trend(rm_trend)},
        "alpha_drift": {"flagged": drift.flagged, "change": drift.change, "note": drift.note},
        "cloth": cloth, "plant": plant, "calibration": calibration, "model": model,
        "chart_cycle": chart, "calibrated_inputs": calibrated, "saved": None,
        "log_checks": checks,
        "warnings": warnings, "cautions": CAUTIONS, "units": UNITS,
    }
    bad = first_non_finite({k2: v for k2, v in out.items() if k2 not in ("cycles", "calibrated_inputs")})
    if bad is None:
        bad = next((f"cycles.{i}" for i, r in enumerate(rows_out) if first_non_finite(r) is not None), None)
    if bad is not None:
        raise InputError([(("body", "csv"), f"this log gives a result out of numeric range ({bad}): check the "
                                            "units of the columns")])
    if req.save is not None:
        if calibrated is None:
            raise InputError([(("body", "save"), "nothing to save: this log gives no usable cake and cloth "
                                                 "resistances (see the warnings)")])
        note = req.save.note or _summary(out)
        s = save(store, req.save.name, note, calibrated, parent)
        out["saved"] = {"id": s.id, "link": f"/s/{s.id}", "parent": parent}
    return out


def _summary(out: dict) -> str:
    """The source log in a sentence, for the calibrated copy's note."""
    used = [r for r in out["cycles"] if not r["excluded"]]
    first, last = used[0], used[-1]
    span = f"{first['start_date']} to {last['start_date']}" if first.get("start_date") else \
        f"{(last['start_time'] - first['start_time']) / 3600:.4g} h of log"
    plant = out["plant"]
    left = plant["cycles_left_out"]
    left_text = f", {len(left)} left out as invalid fits" if left else ""
    cloth = (f"clean cloth R_m {plant['medium_resistance']:.4g} 1/m, cloth growth "
             f"{out['cloth']['growth_per_cycle']:.3g} 1/m per cycle" if plant["medium_resistance_resolved"] else
             f"R_m not resolved at a {plant['log_step']:.3g} s log step (the scenario's kept)")
    return (f"Calibrated from a press log: {plant['cycles_used']} of {out['cycles_found']} cycles{left_text} "
            f"({first['number']}–{last['number']}, {span}; {out['rows']:,} rows; columns "
            f"{', '.join(out['columns'].values())}). Plant α {plant['resistance']:.4g} m/kg "
            f"± {plant['resistance_stderr']:.2g} (median), {cloth}.")


MAX_CHART_POINTS = 1500


def _thin(curves: dict) -> dict:
    """At most MAX_CHART_POINTS rows of a cycle for the chart (every n-th row, the last kept)."""
    n = len(curves["time"])
    if n <= MAX_CHART_POINTS:
        return curves
    idx = np.unique(np.append(np.linspace(0, n - 1, MAX_CHART_POINTS).astype(np.int64), n - 1))
    return {k: np.asarray(v)[idx] for k, v in curves.items()}
