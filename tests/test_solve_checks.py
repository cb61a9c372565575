"""The quicker checks on every answer say what the full walks say (issue 12).

``solve._any_non_finite`` (one loop per container) and ``plausibility.input_warnings`` (the SI
values looked up first, the request as sent walked only for a key with an unusual value) are
compared here with the plain recursive walks they replace, written out in this file.
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest

from server.plausibility import USUAL, ZERO_ALLOWED, _entries, _unusual, input_warnings
from server.schemas.cycle import CycleRequest
from server.solve import _TEXT_PARTS, _any_non_finite, first_non_finite, solve

DEMOS = sorted((Path(__file__).resolve().parent.parent / "demo_cases").glob("*.json"))


def walked_non_finite(x) -> bool:
    """Every number visited one by one (the oracle)."""
    if isinstance(x, dict):
        return any(walked_non_finite(v) for v in x.values())
    if isinstance(x, list | tuple):
        return any(walked_non_finite(v) for v in x)
    return isinstance(x, float) and not math.isfinite(x)


def walked_warnings(si, raw):
    """input_warnings as it was: every key's entries walked with the request as sent."""
    out = []
    for key, (low, high) in USUAL.items():
        for path, value, typed in _entries(si, raw, key):
            if not isinstance(value, float | int) or (value == 0 and key in ZERO_ALLOWED) or low <= value <= high:
                continue
            out.append({"field": path, "message": _unusual(key, value, typed, low, high)})
    return out


def _paths(x, path=()):
    """The path of every float in plain data."""
    if isinstance(x, dict):
        for k, v in x.items():
            yield from _paths(v, (*path, k))
    elif isinstance(x, list | tuple):
        for i, v in enumerate(x):
            yield from _paths(v, (*path, i))
    elif isinstance(x, float):
        yield path


def _set(data, path, value):
    for key in path[:-1]:
        data = data[key]
    if isinstance(data, tuple):
        raise TypeError
    data[path[-1]] = value


@pytest.mark.parametrize("demo", DEMOS, ids=lambda p: p.stem)
def test_a_non_finite_number_anywhere_in_an_answer_is_found(demo):
    request = CycleRequest.model_validate(json.loads(demo.read_text())["inputs"])
    results = {k: v for k, v in solve(request).results.items() if k not in _TEXT_PARTS}
    assert not _any_non_finite(results) and not walked_non_finite(results)
    paths = list(_paths(results))
    assert len(paths) > 100
    for bad in (math.nan, math.inf, -math.inf, np.float64("nan")):
        for path in paths[:: max(1, len(paths) // 60)] + paths[-3:]:
            copy = json.loads(json.dumps(results))
            try:
                _set(copy, path, bad)
            except TypeError:
                continue
            assert _any_non_finite(copy), path
            assert first_non_finite(copy) is not None


def test_non_finite_numbers_in_tuples_nested_lists_and_numpy_floats_are_found():
    for data in ({"a": [1.0, (2.0, math.nan)]}, {"a": {"b": [[np.float64(math.inf)]]}}, [{"x": -math.inf}],
                 {"a": [], "b": {}, "c": None, "d": "text", "e": True, "f": [1, 2, {"g": math.nan}]}):
        assert _any_non_finite(data) and walked_non_finite(data)
    assert not _any_non_finite({"a": [1e308, 1e308], "b": (0.0, -1.0), "c": [np.float64(2.0)], "d": 7})


@pytest.mark.parametrize("demo", DEMOS, ids=lambda p: p.stem)
@pytest.mark.parametrize("factor", [1.0, 1e3, 1e-3, 0.0])
def test_input_warnings_are_those_of_the_full_walk(demo, factor):
    request = CycleRequest.model_validate(json.loads(demo.read_text())["inputs"])
    si, raw = request.model_dump(), request._raw
    for path in _paths(si):
        scaled = json.loads(json.dumps(si))  # tuples become lists, as they may in a request
        _set(scaled, path, _get(scaled, path) * factor)
        assert input_warnings(scaled, raw) == walked_warnings(scaled, raw), path
    assert input_warnings(si, raw) == walked_warnings(si, raw)


def _get(data, path):
    for key in path:
        data = data[key]
    return data


@pytest.mark.parametrize("demo", DEMOS, ids=lambda p: p.stem)
def test_the_json_sent_is_the_plain_results(demo):
    # the API sends the answer as the solver made it (cycles as dataclasses, curves as arrays,
    # serialised once); pages and saved scenarios use the same answer as plain data (issue 12)
    solved = solve(CycleRequest.model_validate(json.loads(demo.read_text())["inputs"]))
    plain = solved.results
    assert json.loads(solved.results_json) == json.loads(json.dumps(plain, allow_nan=False))
    assert type(plain["best"]) is dict and type(plain["curves"]["time"]) is list
    assert list(plain["best"]) == list(json.loads(solved.results_json)["best"])  # fields in the same order
    assert solved.results is plain  # made once


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_a_non_finite_point_of_a_curve_is_named(monkeypatch, bad):
    # the curves are checked with one sum over all their points (issue 12): a NaN or an
    # infinity anywhere is still found and named by its curve and index
    from dataclasses import replace

    import server.solve as solve_module
    from server.errors import InputError

    real = solve_module.solver.solve_cycle

    def spoiled(*args, **kwargs):
        sol = real(*args, **kwargs)
        flow = np.array(sol.curves["flow"], dtype=float)
        flow[37] = bad
        return replace(sol, curves={**sol.curves, "flow": flow})

    monkeypatch.setattr(solve_module.solver, "solve_cycle", spoiled)
    request = CycleRequest.model_validate(json.loads(DEMOS[0].read_text())["inputs"])
    with pytest.raises(InputError, match=r"curves\.flow\.37"):
        solve(request)


def test_curves_of_huge_finite_numbers_are_not_refused(monkeypatch):
    # a sum that overflows on finite numbers is looked into, not refused
    from dataclasses import replace

    import server.solve as solve_module

    real = solve_module.solver.solve_cycle

    def huge(*args, **kwargs):
        sol = real(*args, **kwargs)
        return replace(sol, curves={**sol.curves, "time": np.full(len(sol.curves["time"]), 1e308)})

    monkeypatch.setattr(solve_module.solver, "solve_cycle", huge)
    request = CycleRequest.model_validate(json.loads(DEMOS[0].read_text())["inputs"])
    assert solve(request).results["curves"]["time"][0] == 1e308


def test_cycles_are_checked_at_once_as_the_walk_checks_them():
    # _cycles_finite adds each cycle's numeric fields up at once (issue 12): it must say what
    # the walk says, for NaN and infinities in any numeric field, huge finite numbers, numpy
    # floats and a field that is not a number
    from dataclasses import fields as dc_fields

    from server.solve import _cycles_finite
    from server.solver.cycle import cycle_result

    request = CycleRequest.model_validate(json.loads(DEMOS[0].read_text())["inputs"])
    answer = solve(request).answer
    cycles = [answer["best"], answer["chambers_full"], *(r["best"] for r in answer["thickness_comparison"])]
    assert _cycles_finite(cycles)

    def changed(cycle, **values):
        return cycle_result({**cycle.__dict__, **values}.values())

    numeric = [f.name for f in dc_fields(cycles[0]) if f.name not in ("limited_by", "feasible", "meets_specs")]
    for name in numeric:
        for bad in (math.nan, math.inf, -math.inf, np.float64("nan")):
            spoiled = [*cycles[:-1], changed(cycles[-1], **{name: bad})]
            assert not _cycles_finite(spoiled) and walked_non_finite([c.__dict__ for c in spoiled]), name
        huge = [changed(c, **{name: 1e308}) for c in cycles]
        assert _cycles_finite(huge)  # the sum overflows; the walk clears it
    assert _cycles_finite([changed(cycles[0], cycle_time=np.float64(3.0), moisture=None)])
    assert not _cycles_finite([changed(cycles[0], cycle_time="3", moisture=math.nan)])


@pytest.mark.parametrize("demo", DEMOS, ids=lambda p: p.stem)
def test_input_warnings_from_the_model_are_those_from_its_dict(demo):
    # solve passes the validated request itself (no model_dump per request, issue 12): the
    # flags must be those the request's dict gives, for usual and unusual values alike
    from pydantic import ValidationError

    from server.plausibility import derived_warnings

    request = CycleRequest.model_validate(json.loads(demo.read_text())["inputs"])
    raw = request.raw
    si = request.model_dump(exclude_none=True)
    if "temperature" in si["slurry"]:  # SI kelvin would be read back as degC: as a quantity
        si["slurry"]["temperature"] = f"{si['slurry']['temperature']} K"
    checked = 0
    for path in [p for p in _paths(si) if p != ("slurry", "temperature")]:
        for factor in (1e3, 1e-3):
            scaled = json.loads(json.dumps(si))
            _set(scaled, path, _get(scaled, path) * factor)
            try:
                model = CycleRequest.model_validate(scaled)
            except ValidationError:
                continue
            assert input_warnings(model, raw) == input_warnings(model.model_dump(), raw), path
            assert derived_warnings({"solids_density": 9e3}, model) == derived_warnings(
                {"solids_density": 9e3}, model.model_dump()), path
            checked += 1
    assert checked > 10
