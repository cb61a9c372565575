"""The cycle endpoint's own body handling (server/routers/jsonbody.py, issue 12): the same
OpenAPI contract and the same 422s as FastAPI's generic handler gave, in one short step."""

import json
from pathlib import Path

import pytest
from fastapi import APIRouter, FastAPI, Request
from fastapi.responses import JSONResponse
from fastapi.testclient import TestClient

from server.routers.jsonbody import JSONBodyRoute
from server.schemas.cycle import CycleRequest

DEMO = json.loads((Path(__file__).resolve().parents[1] / "demo_cases" / "gypsum_chamber_limited.json").read_text())


def test_the_schema_still_describes_the_body_and_the_answer(client):
    spec = client.get("/openapi.json").json()
    post = spec["paths"]["/api/v1/cycle"]["post"]
    body = post["requestBody"]
    assert body["required"] is True
    ref = body["content"]["application/json"]["schema"]["$ref"]
    name = ref.rsplit("/", 1)[1]
    assert name.startswith("CycleRequest")
    assert {"slurry", "cake", "press", "feed", "cycle"} <= set(spec["components"]["schemas"][name]["properties"])
    answer = post["responses"]["200"]["content"]["application/json"]["schema"]["$ref"]
    assert answer.rsplit("/", 1)[1].startswith("CycleResponse")
    assert "422" in post["responses"]


@pytest.mark.parametrize("body, field, words", [
    (b'{"slurry": ', "body", "the body is not valid JSON (expecting value at line 1, column 12)"),
    (b'{"slurry": 1,\n "cake": }', "body", "the body is not valid JSON (expecting value at line 2, column 10)"),
    (b'{"name": "\xc3("}', "body", "the body is not valid JSON (byte 11 is not UTF-8 text)"),
    (b"", "body", "required"),
    (b"[1, 2]", "body", "must be an object"),
    # json.loads' other refusals: found by review, each was a 500 (FastAPI answered 400)
    (b"[" * 3000 + b"]" * 3000, "body", "the body is not valid JSON (nested too deeply)"),
    (b'{"a":' * 3000 + b"1" + b"}" * 3000, "body", "the body is not valid JSON (nested too deeply)"),
    (b"1" * 5000, "body", "the body is not valid JSON (a number too long to read)"),
    (b'{"medium_resistance": ' + b"1" * 5000 + b"}", "body", "the body is not valid JSON (a number too long to read)"),
    (b'{"name": "a\x01b"}', "body", "the body is not valid JSON (invalid control character at line 1, column 12)"),
    (b'"text"', "body", "must be an object"),
])
def test_a_body_that_is_not_a_scenario_is_a_plain_422(client, body, field, words):
    r = client.post("/api/v1/cycle", content=body, headers={"content-type": "application/json"})
    assert r.status_code == 422, r.text
    detail = r.json()["detail"]
    assert detail[0]["field"] == field and detail[0]["msg"] == words, detail


def test_a_body_reads_as_the_standard_library_reads_it():
    # read_json (orjson, then json.loads for what orjson refuses) gives json.loads' data for every
    # body: strict JSON, and what only the standard library reads (issue 12; checked against
    # json.loads itself, the reference FastAPI used)
    import math
    import random
    import struct

    from server.routers.jsonbody import read_json

    bodies = [json.dumps(DEMO["inputs"]).encode(), json.dumps(DEMO["inputs"], indent=2).encode(),
              b'{"a": NaN, "b": Infinity, "c": -Infinity}', b"1e400", b"123456789012345678901234567890",
              # orjson keeps integers whole from -2^63 to 2^64 - 1 only (a review: 19 digits below)
              b"-9223372036854775809", b'{"chambers": -9999999999999999999}', b"18446744073709551616",
              b"-9223372036854775808", b"18446744073709551615",
              b'\xef\xbb\xbf{"a": 1}', b'{"a": 1, "a": 2}', b'{"a": -0.0, "b": -0}', b'"\\u00e9 \\ud83d\\ude00"',
              b"2.2250738585072011e-308", b"4.9406564584124654e-324", b"1.7976931348623157e308"]
    rng = random.Random(12)
    for _ in range(2000):  # doubles of every magnitude, written as people and programs write them
        x = struct.unpack("d", struct.pack("Q", rng.getrandbits(64)))[0]
        if math.isfinite(x):
            bodies += [repr(x).encode(), f"{x:.6g}".encode(), f"[{x:.25e}]".encode()]

    def same(a, b):
        return repr(a) == repr(b)  # NaN equal to NaN, -0.0 told from 0.0

    for body in bodies:
        assert same(read_json(body), json.loads(body)), body


def test_field_errors_keep_their_paths_under_the_body(client):
    inputs = json.loads(json.dumps(DEMO["inputs"]))
    inputs["press"]["chambers"] = 0
    del inputs["slurry"]
    inputs["surplus"] = 1
    r = client.post("/api/v1/cycle", json=inputs)
    assert r.status_code == 422
    by_field = {d["field"]: d for d in r.json()["detail"]}
    assert by_field["slurry"]["msg"] == "required"
    assert by_field["surplus"]["msg"] == "unknown field (check the spelling)"
    assert "press.chambers" in by_field and by_field["press.chambers"]["loc"][0] == "body"


def test_the_answer_is_the_solve_and_the_raw_request_is_kept_for_the_units_typed(client):
    inputs = json.loads(json.dumps(DEMO["inputs"]))
    inputs["feed"]["pressure"] = "90 bar"  # above the usual range: flagged in the unit typed
    r = client.post("/api/v1/cycle", json=inputs)
    assert r.status_code == 200
    flags = r.json()["input_warnings"]
    assert any(w["field"] == "feed.pressure" and "bar" in w["message"] for w in flags), flags


def test_only_a_request_and_one_model_are_served():
    router = APIRouter(route_class=JSONBodyRoute)

    async def two_params(request: Request, inputs: CycleRequest, page: int = 1):
        return None

    with pytest.raises(TypeError, match="other parameters"):
        router.add_api_route("/x", two_params, methods=["POST"])

    async def plain(request: Request, inputs: dict):
        return None

    with pytest.raises(TypeError, match="one pydantic model"):
        router.add_api_route("/y", plain, methods=["POST"])

    async def fine(request: Request, inputs: CycleRequest):  # returns the Response it builds
        return JSONResponse({"area": inputs.press.filter_area})

    router.add_api_route("/z", fine, methods=["POST"])
    app = FastAPI()
    app.include_router(router)
    assert TestClient(app).post("/z", json=DEMO["inputs"]).json() == {"area": 150.0}  # parsed to SI


def test_an_integer_beyond_any_float_is_a_plain_422(client):
    # found by review: a quantity given as an integer of 309+ digits was a 500 (OverflowError)
    inputs = json.loads(json.dumps(DEMO["inputs"]))
    body = json.dumps(inputs).replace('"150 m^2"', "1" + "0" * 400).encode()
    r = client.post("/api/v1/cycle", content=body, headers={"content-type": "application/json"})
    assert r.status_code == 422, r.text
    assert r.json()["detail"][0]["field"] == "press.filter_area"
    assert r.json()["detail"][0]["msg"] == "must be a finite number"


def _edge_guard(app):
    from server.guards import EdgeGuard

    layer = app.middleware_stack or app.build_middleware_stack()
    while not isinstance(layer, EdgeGuard):
        layer = layer.app
    return layer


def test_the_edge_answers_the_cycle_route_as_the_router_did(tmp_path, monkeypatch):
    # POST /api/v1/cycle is answered by the edge guard once it has the body (issue 12: past the
    # framework's routing and middlewares); the oracle is the same app answering through its
    # router, the way it answered before. Every kind of answer: a result, a body that is not
    # JSON, a field refusal, a solver refusal (InputError), the time budget's 503, and an
    # unexpected error (the guard's 500 in words)
    import server.routers.cycle as cycle_route
    from server.app import create_app
    from tests.conftest import app_settings

    bodies = [json.dumps(DEMO["inputs"]).encode(), b'{"slurry": ', b"[1, 2]",
              json.dumps({**DEMO["inputs"], "press": {**DEMO["inputs"]["press"], "chambers": 0}}).encode(),
              json.dumps({**DEMO["inputs"], "cycle": {**DEMO["inputs"]["cycle"], "fill_time": "pump"}}).encode()]
    answers = {}
    for way in ("edge", "router"):
        app = create_app(app_settings(tmp_path / way))
        with TestClient(app, raise_server_exceptions=False) as c:
            guard = _edge_guard(app)
            assert set(guard.direct) == {("POST", "/api/v1/cycle")}
            if way == "router":
                guard.direct.clear()
            got = [c.post("/api/v1/cycle", content=b, headers={"content-type": "application/json"}) for b in bodies]
            with monkeypatch.context() as m:
                m.setattr(cycle_route, "solves_quickly", lambda inputs: False)
                m.setattr(app.state.settings, "solve_seconds", 1e-9)
                got.append(c.post("/api/v1/cycle", content=bodies[0], headers={"content-type": "application/json"}))

            def planted(*args, **kwargs):
                raise RuntimeError("a fault the tests plant")

            with monkeypatch.context() as m:
                m.setattr(cycle_route, "solve", planted)
                got.append(c.post("/api/v1/cycle", content=bodies[0], headers={"content-type": "application/json"}))
        answers[way] = [(r.status_code, r.headers.get("content-type"), r.headers.get("content-security-policy"),
                         r.content) for r in got]
    assert [a[0] for a in answers["edge"]] == [200, 422, 422, 422, 422, 503, 500]
    assert b"the pump's highest flow" in answers["edge"][4][3]  # the solve's own refusal (InputError)
    assert answers["edge"] == answers["router"]


def test_the_cycle_route_keeps_its_other_methods_and_its_schema(client):
    # the route stays in the router: GET is refused as before, and the OpenAPI schema lists it
    r = client.get("/api/v1/cycle")
    assert r.status_code == 405 and r.headers["allow"] == "POST"
    assert "post" in client.get("/openapi.json").json()["paths"]["/api/v1/cycle"]
