"""A time budget for the calculation a request starts.

Costs are bounded by design (limits on readings, points, steps and thicknesses; linear
algorithms), so a calculation normally ends in well under a second. The budget is the
backstop: a calculation still running after ``Settings.solve_seconds`` is answered with a
503 in words, and the client's connection is free again. Python cannot stop a thread from
outside, so the abandoned calculation finishes in the background and its result is
dropped; the limits keep that rare and short.
"""

import functools

import anyio
from fastapi import HTTPException, Request


async def within_budget(request: Request, fn, *args, quick: bool = False, **kwargs):
    """``fn(*args, **kwargs)`` in a worker thread, answered with 503 past the time budget.

    ``quick``: a calculation whose cost the request limits bound to a few milliseconds (a
    closed form, or a table of fixed size) runs at once, on the event loop: the hop to a worker
    thread would cost a good part of it, and there is nothing to stop.
    """
    if quick:
        return fn(*args, **kwargs)
    seconds = request.app.state.settings.solve_seconds
    try:
        with anyio.fail_after(seconds):
            return await anyio.to_thread.run_sync(functools.partial(fn, *args, **kwargs), abandon_on_cancel=True)
    except TimeoutError:
        raise HTTPException(
            503, f"the calculation took longer than {seconds:g} s and was stopped: "
                 f"check the inputs (very long pump curves or many steps) and try again"
        ) from None
