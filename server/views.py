"""Formatting for pages: every number a person sees carries its unit."""

import math


def fmt(value, digits: int = 3) -> str:
    """A number to ``digits`` significant figures, plainly written."""
    if value is None:
        return "–"
    if not isinstance(value, int | float) or not math.isfinite(value):
        return str(value)
    if value == 0:
        return "0"
    mag = abs(value)
    if mag >= 1e6 or mag < 1e-3:
        return f"{value:.{digits - 1}e}"
    decimals = max(digits - 1 - int(math.floor(math.log10(mag))), 0)
    return f"{value:,.{decimals}f}"


def register_filters(env) -> None:
    env.filters["fmt"] = fmt
