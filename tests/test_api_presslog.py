"""POST /api/v1/press-log: synthetic plant logs from the exact model (tests/synthetic_logs.py),
bad files named by row and column, the calibrated copy, and the size limit."""

import json
import re
import time
from pathlib import Path

import numpy as np
import pytest

from server.solver import planning
from tests.synthetic_logs import ALPHA, AREA, MU, PRESSURE, R0, Feed, synthetic_log, to_csv

#: The scenario the synthetic logs belong to: c = 1000 x / (1 - 1.6 x) = 200 kg/m³ exactly at
#: x = 0.2/1.32 (the primer's mass balance), mu 1 mPa·s, 100 m²; lab values 10 % under the plant's.
SCENARIO = {
    "slurry": {"solids_mass_fraction": 0.2 / 1.32, "solids_density": 2600.0, "viscosity": "1 mPa*s",
               "liquid_density": 1000.0},
    "cake": {"resistance": 1.8e11, "resistance_stderr": 9e9, "wet_to_dry_ratio": 1.6},
    "medium_resistance": 7.2e11, "medium_resistance_stderr": 3.6e10,
    "press": {"filter_area": "100 m^2", "chamber_thickness": "40 mm"},
    "feed": {"mode": "constant_pressure", "pressure": "6 bar"},
    "cycle": {"downtime_parts": {"fixed": "10 min", "cloth_wash": {"time": "2 h", "every_cycles": 15}}},
}
ROW = re.compile(r"line (\d+) \(row (\d+)\), column (\d+) '([^']+)'")


def post(client, **body):
    return client.post("/api/v1/press-log", json={"inputs": SCENARIO, **body})


def error_of(r):
    assert r.status_code == 422, r.text[:500]
    detail = r.json()["detail"]
    assert len(detail) == 1
    return detail[0]["field"], detail[0]["msg"]


@pytest.fixture(scope="module")
def log():
    return synthetic_log(cycles=45, growth=0.02, wash_every=15, noise=0.005, seed=17)


@pytest.fixture(scope="module")
def answer(client, log):
    r = post(client, csv=to_csv(log))
    assert r.status_code == 200, r.text
    return r.json()


def test_each_cycle_gives_alpha_and_cloth_within_2_percent(answer, log):
    assert answer["cycles_found"] == 45 and answer["signal"] == "flow"
    alpha = np.array([c["resistance"] for c in answer["cycles"]])
    rm = np.array([c["medium_resistance"] for c in answer["cycles"]])
    print(f"API: alpha max error {np.max(np.abs(alpha / log.alpha - 1)):.2%}, "
          f"R_m max error {np.max(np.abs(rm / log.medium_resistance - 1)):.2%}")
    assert np.max(np.abs(alpha / log.alpha - 1)) < 0.02
    assert np.max(np.abs(rm / log.medium_resistance - 1)) < 0.02
    assert answer["scenario"]["c"] == pytest.approx(200.0, rel=1e-12)
    for c in answer["cycles"]:
        assert c["r_squared"] > 0.999 and c["resistance_stderr"] > 0 and -1 <= c["resistance_medium_correlation"] <= 1


def test_washes_growth_and_the_wash_interval_against_brute_force(answer, log):
    cloth = answer["cloth"]
    assert cloth["washes"] == log.washes == [16, 31] and cloth["washes_from"] == "detected"
    assert cloth["growth_per_cycle"] == pytest.approx(0.02 * R0, rel=0.10)
    assert cloth["relative_growth_per_cycle"] == pytest.approx(0.02, rel=0.10)
    assert cloth["cycles_since_wash"] == 15
    # brute force over N with the true cloth at the interval's volume, constant pressure:
    # T_k = t_d + K_p V^2/2 + mu (R0 + g k) V / (A dP), downtime 10 min (derived here)
    wi = cloth["wash_interval"]
    V = wi["filtrate_volume"]
    K_p = MU * ALPHA * 200.0 / (AREA**2 * PRESSURE)
    k = np.arange(500)
    T = 600.0 + K_p * V**2 / 2 + MU * R0 * (1 + 0.02 * k) * V / (AREA * PRESSURE)
    brute, _ = planning.best_interval(T, 7200.0)
    print(f"API: wash interval {wi['best']} (classic {wi['classic']:.2f}), brute force {brute}")
    assert abs(wi["best"] / brute - 1) < 0.10
    assert wi["wash_time"] == 7200.0


def test_calibration_ratios_and_calibrated_inputs(answer):
    cal, plant = answer["calibration"], answer["plant"]
    assert cal["from_lab_fit"]
    assert plant["resistance"] == pytest.approx(ALPHA, rel=0.01)
    assert plant["medium_resistance"] == pytest.approx(R0, rel=0.02)
    assert cal["resistance_ratio"] == pytest.approx(ALPHA / 1.8e11, rel=0.01)
    # the lab's 5 % error dominates the ratio's error: first-order propagation (no source)
    assert cal["resistance_ratio_stderr"] == pytest.approx(cal["resistance_ratio"] * 0.05, rel=0.05)
    assert cal["medium_resistance_ratio"] == pytest.approx(R0 / 7.2e11, rel=0.02)
    ci = answer["calibrated_inputs"]
    assert ci["cake"]["resistance"] == plant["resistance"]
    assert ci["medium_resistance"] == plant["medium_resistance"]
    assert ci["cloth"]["resistance_growth_per_cycle"] == answer["cloth"]["growth_per_cycle"]
    assert ci["press"] == SCENARIO["press"]  # the rest as entered
    assert answer["model"]["calibrated_filtrate_throughput"] > 0
    assert not answer["alpha_drift"]["flagged"]
    assert answer["chart_cycle"]["number"] == 45 and len(answer["chart_cycle"]["time"]) > 100
    assert answer["cautions"]


@pytest.mark.parametrize("signal,sep,decimal", [("volume", ";", ","), ("mass", "\t", ".")])
def test_volume_and_mass_logs_with_other_separators(client, signal, sep, decimal):
    log = synthetic_log(cycles=6, feed=Feed("pump_curve", flow=0.12), noise=0.005, seed=4)
    body = {"csv": to_csv(log, signal=signal, sep=sep, decimal=decimal)}
    if signal == "mass":
        body["filtrate_density"] = "1000 kg/m^3"
    r = post(client, **body)
    assert r.status_code == 200, r.text
    out = r.json()
    assert out["decimal"] == ("comma" if decimal == "," else "point")
    rm = np.array([c["medium_resistance"] for c in out["cycles"]])
    assert np.max(np.abs(rm / log.medium_resistance - 1)) < 0.02


def test_a_cycle_column_excluded_cycles_and_washes_given_by_the_user(client):
    log = synthetic_log(cycles=20, growth=0.02, wash_every=10, noise=0.005, seed=8)
    r = post(client, csv=to_csv(log, with_cycle=True), exclude_cycles=[3, 4], cloth_washes=[11], chart_cycle=12)
    assert r.status_code == 200, r.text
    out = r.json()
    assert out["how_found"] == "cycle column"
    excluded = [c["number"] for c in out["cycles"] if c["excluded"]]
    assert excluded == [3, 4] and out["cycles"][2]["resistance"] is None
    assert out["cloth"]["washes"] == [11] and out["cloth"]["washes_from"] == "user"
    assert out["plant"]["cycles_used"] == 18 and out["chart_cycle"]["number"] == 12


def test_timestamps_give_dates_for_the_trend(client):
    log = synthetic_log(cycles=3, noise=0.0)
    base = np.datetime64("2026-03-01T06:00:00", "ms")
    stamps = base + (log.time * 1000).astype("timedelta64[ms]")
    lines = ["timestamp, feed pressure [kPa], filtrate flow [m^3/h]"] + [
        f"{str(s).replace('T', ' ')}, {p / 1e3:.9g}, {q * 3600:.9g}" for s, p, q in zip(stamps, log.pressure, log.flow)]
    r = post(client, csv="\n".join(lines))
    assert r.status_code == 200, r.text
    assert r.json()["cycles"][0]["start_date"].startswith("2026-03-01T06:00:06")


# ---- bad files: each error names its row and column ----------------------------------------------

GOOD_HEAD = "time [s], feed pressure [bar], filtrate flow [L/min]"


def small_csv(log=None):
    log = log or synthetic_log(cycles=2, noise=0.0)
    return to_csv(log).splitlines()


@pytest.mark.parametrize("header,words", [
    ("time [s], feed pressure [bar], filtrate flow [L/min], temperature [degC]", "column 4 'temperature [degC]'"),
    ("time [s], feed pressure [L], filtrate flow [L/min]", "column 2 'feed pressure [L]'"),
    ("time [s], feed pressure [bar], filtrate flow [bar]", "column 3 'filtrate flow [bar]'"),
    ("time [s], feed pressure, filtrate flow [L/min]", "column 2 'feed pressure' has no unit"),
    ("time [s], filtrate flow [L/min]", "no feed pressure column"),
    ("time [s], feed pressure [bar], filtrate flow [L/min], filtrate volume [L]", "exactly one of"),
])
def test_bad_headers_name_the_column(client, header, words):
    lines = small_csv()
    lines[0] = header
    if header.count(",") == 3:
        lines[1:] = [ln + ", 1" for ln in lines[1:]]
    if header.count(",") == 1:
        lines[1:] = [ln.rsplit(",", 1)[0] for ln in lines[1:]]
    field, msg = error_of(post(client, csv="\n".join(lines)))
    assert field == "csv" and words in msg and "line 1" in msg


def test_an_unknown_column_listed_in_ignore_columns_is_left_out(client):
    lines = small_csv()
    lines[0] += ", temperature [degC]"
    lines[1:] = [ln + ", 21.5" for ln in lines[1:]]
    r = post(client, csv="\n".join(lines), ignore_columns=["temperature [degC]"])
    assert r.status_code == 200, r.text


@pytest.mark.parametrize("row,col,cell,words", [
    (500, 2, "abc", "'abc' is not a number"),
    (700, 3, "", "is empty"),
    (40, 1, "nan", "not a finite number"),
    (900, 2, "-5", "outside the allowed range"),
])
def test_bad_cells_name_their_line_row_and_column(client, row, col, cell, words):
    lines = small_csv()
    cells = lines[row].split(",")
    cells[col - 1] = cell
    lines[row] = ",".join(cells)
    field, msg = error_of(post(client, csv="\n".join(lines)))
    m = ROW.search(msg)
    assert field == "csv" and m, msg
    assert (int(m.group(1)), int(m.group(2)), int(m.group(3))) == (row + 1, row, col)
    assert words in msg


def test_time_going_backwards_names_row_and_column(client):
    lines = small_csv()
    cells = lines[300].split(",")
    cells[0] = "1"
    lines[300] = ",".join(cells)
    field, msg = error_of(post(client, csv="\n".join(lines)))
    m = ROW.search(msg)
    assert m and int(m.group(2)) == 300 and int(m.group(3)) == 1 and "backwards" in msg


def test_a_gap_inside_a_filtration_names_its_row(client):
    log = synthetic_log(cycles=2, noise=0.0)
    t = log.time.copy()
    t[200:] += 900.0  # 15 min missing while under pressure (rows 4..903 filter)
    log.time = t
    field, msg = error_of(post(client, csv=to_csv(log)))
    assert "gap" in msg and "line 202 (row 201)" in msg and "time [s]" in msg
    # excluding the cycle lets the rest through
    assert post(client, csv=to_csv(log), exclude_cycles=[1]).status_code == 200


def test_a_row_with_too_few_cells_and_a_mass_without_density(client):
    lines = small_csv()
    lines[10] = "18, 6"
    field, msg = error_of(post(client, csv="\n".join(lines)))
    assert "line 11 (row 10)" in msg and "expected 3 values" in msg
    log = synthetic_log(cycles=2, noise=0.0)
    field, msg = error_of(post(client, csv=to_csv(log, signal="mass")))
    assert "filtrate_density" in msg


def test_bad_requests_name_their_field(client, log):
    csv = "\n".join(small_csv())
    assert error_of(post(client, csv=csv, exclude_cycles=[9]))[0] == "exclude_cycles"
    assert error_of(post(client, csv=csv, exclude_cycles=[1, 2]))[0] == "exclude_cycles"
    assert error_of(post(client, csv=csv, chart_cycle=7))[0] == "chart_cycle"
    assert error_of(post(client, csv=csv, pressure_on_share=0.9))[0] == "pressure_on_share"
    r = client.post("/api/v1/press-log", json={"csv": csv})
    assert r.status_code == 422
    r = client.post("/api/v1/press-log", json={"csv": csv, "scenario_id": "nope"})
    assert error_of(r)[0] == "scenario_id"
    bad = {**SCENARIO, "medium_resistance": -1}
    r = client.post("/api/v1/press-log", json={"csv": csv, "inputs": bad})
    assert error_of(r)[0] == "inputs.medium_resistance"


def test_a_log_with_no_pressure_has_no_cycle(client):
    lines = small_csv()
    lines[1:] = [f"{i}, 0, 0" for i in range(1, 50)]
    field, msg = error_of(post(client, csv="\n".join(lines)))
    assert "no cycle found" in msg


# ---- the calibrated copy ------------------------------------------------------------------------


def test_save_a_calibrated_copy_of_a_saved_scenario(client):
    parent = client.post("/api/v1/scenarios", json={"name": "lab scenario", "inputs": SCENARIO})
    assert parent.status_code in (200, 201), parent.text
    pid = parent.json()["id"]
    log = synthetic_log(cycles=10, growth=0.02, wash_every=15, noise=0.005, seed=2)
    r = client.post("/api/v1/press-log", json={"scenario_id": pid, "csv": to_csv(log),
                                               "save": {"name": "calibrated from the press"}})
    assert r.status_code == 200, r.text
    out = r.json()
    assert out["saved"]["parent"] == pid and out["scenario"]["id"] == pid
    saved = client.get(f"/api/v1/scenarios/{out['saved']['id']}").json()
    assert saved["parent"] == pid and saved["name"] == "calibrated from the press"
    assert saved["inputs"]["cake"]["resistance"] == pytest.approx(ALPHA, rel=0.01)
    assert "press log" in saved["note"] and "10 of 10 cycles" in saved["note"]


def test_nothing_is_saved_when_the_log_is_refused(client):
    before = client.get("/api/v1/scenarios").json()
    lines = small_csv()
    lines[100] = "x, 1, 1"
    r = client.post("/api/v1/press-log", json={"inputs": SCENARIO, "csv": "\n".join(lines),
                                               "save": {"name": "must not appear"}})
    assert r.status_code == 422
    after = client.get("/api/v1/scenarios").json()
    assert after == before


# ---- size -------------------------------------------------------------------------------------------


def test_a_1_gb_upload_is_refused_promptly(client):
    started = time.perf_counter()
    r = client.post("/api/v1/press-log", content=b"{}", headers={"content-type": "application/json",
                                                                   "content-length": str(10**9)})
    elapsed = time.perf_counter() - started
    assert r.status_code == 413 and "larger than" in r.json()["detail"]
    print(f"1 GB declared: refused in {elapsed * 1000:.1f} ms")


@pytest.mark.slow
def test_a_1_gb_upload_to_a_real_server_is_refused_before_its_body_is_sent(tmp_path):
    # a real uvicorn: headers declaring 1 GB, then the first 1 MB of a body that never ends; the
    # answer must come at once, without waiting for the rest (the guard reads the header)
    import socket

    from tests.liveserver import LiveServer

    server = LiveServer(tmp_path / "size.sqlite3").start()
    try:
        with socket.create_connection(("127.0.0.1", server.port), timeout=10) as sock:
            started = time.perf_counter()
            sock.sendall(b"POST /api/v1/press-log HTTP/1.1\r\nHost: 127.0.0.1\r\n"
                         b"Content-Type: application/json\r\nContent-Length: 1000000000\r\n\r\n")
            sock.sendall(b" " * 1_000_000)
            answer = sock.recv(65536)
            elapsed = time.perf_counter() - started
            while b"larger than" not in answer:  # the body may follow the headers in its own packet
                more = sock.recv(65536)
                if not more:
                    break
                answer += more
    finally:
        server.stop()
    assert answer.startswith(b"HTTP/1.1 413"), answer[:200]
    assert b"larger than" in answer
    print(f"1 GB upload to a real server: 413 after {elapsed * 1000:.0f} ms")
    assert elapsed < 10  # the socket's own timeout: an answer at all, not a speed target


def test_the_other_routes_keep_their_own_limit(client):
    r = client.post("/api/v1/cycle", content=b"{}", headers={"content-type": "application/json",
                                                              "content-length": str(3_000_000)})
    assert r.status_code == 413


def test_a_cycle_without_filtrate_names_its_lines(client):
    lines = [GOOD_HEAD] + [f"{i}, {6 if 5 < i < 100 else 0}, 0" for i in range(200)]
    field, msg = error_of(post(client, csv="\n".join(lines)))
    assert field == "csv" and "cycle 1 (line 8 (row 7) to line 101 (row 100))" in msg and "no filtrate" in msg


def test_a_log_that_does_not_follow_the_rate_equation_is_said_so_and_cannot_be_saved(client):
    # flow constant while the pressure holds: nothing builds a cake; the fit gives alpha 0
    lines = [GOOD_HEAD] + [f"{i // 2}, {6 if 5 < i < 100 else 0}, 10" for i in range(200)]
    r = post(client, csv="\n".join(lines))
    assert r.status_code == 200
    assert any("No cycle gives a physically valid fit (cycle 1: α" in w and "not above zero" in w
               for w in r.json()["warnings"])
    assert r.json()["cycles"][0]["left_out"] and r.json()["calibrated_inputs"] is None
    field, msg = error_of(post(client, csv="\n".join(lines), save={"name": "x"}))
    assert field == "save" and "nothing to save" in msg


def test_timestamps_with_an_offset_are_read_in_utc(client):
    log = synthetic_log(cycles=2, noise=0.0)
    base = np.datetime64("2026-03-01T06:00:00", "ms")
    stamps = base + (log.time * 1000).astype("timedelta64[ms]")
    lines = ["timestamp; feed pressure [bar]; filtrate flow [L/min]"] + [
        f"{s}+01:00; {p / 1e5:.9g}; {q * 60000:.9g}".replace(".", ",") for s, p, q in zip(stamps, log.pressure, log.flow)]
    r = post(client, csv="\n".join(lines))
    assert r.status_code == 200, r.text[:300]
    assert r.json()["cycles"][0]["start_date"].startswith("2026-03-01T05:00:06")


def test_the_figures_have_units_on_every_axis_and_finite_data(answer):
    # the house rule of tests/test_charts.py; the cycle number is a count and has no unit
    from server.presslogcharts import presslog_figures
    from tests.test_charts import UNIT_LABELS, axes_of, numbers_in

    figs = presslog_figures(answer)
    assert set(figs) == {"cycle", "volume", "alpha", "cloth", "throughput"}
    for name, fig in figs.items():
        for key, axis in axes_of(fig["layout"]).items():
            title = axis["title"]["text"]
            if title == "Cycle number":
                continue
            unit = re.search(r"\(([^()]+)\)[^()]*$", title)
            assert unit and unit.group(1) in UNIT_LABELS, f"{name}.{key}: {title!r}"
        for trace in fig["data"]:
            values = [v for v in numbers_in(trace) if v is not None]
            assert values and all(np.isfinite(values)), (name, trace.get("name"))
    # the model drawn over the cycle follows the logged flow (0.5 % noise) within a few per cent
    ch = answer["chart_cycle"]
    q, m = np.array(ch["flow"]), np.array(ch["flow_model"])
    assert np.median(np.abs(m / q - 1)) < 0.01


def corrupted_log():
    """Nine cycles of the exact model (0.5 % noise, seeded), the flow of cycle 4 corrupted: it
    rises fourfold through the filtration at constant pressure (a stuck flow meter's drift),
    which no cake and cloth do (constructed here)."""
    log = synthetic_log(cycles=9, growth=0.0, noise=0.005, seed=51)
    rows = log.cycle == 4
    ramp = np.linspace(0.25, 2.5, rows.sum())
    log.flow[rows] *= ramp
    return log


def test_one_corrupted_cycle_is_left_out_of_every_summary_and_named(client):
    log = corrupted_log()
    r = post(client, csv=to_csv(log))
    assert r.status_code == 200, r.text[:300]
    a = r.json()
    bad = a["cycles"][3]
    print(f"corrupted cycle: alpha {bad['resistance']:.3g} m/kg, R_m {bad['medium_resistance']:.3g} 1/m; "
          f"plant alpha {a['plant']['resistance']:.4g} ± {a['plant']['resistance_stderr']:.2g}")
    assert bad["left_out"] and [c["number"] for c in a["plant"]["cycles_left_out"]] == [4]
    assert a["plant"]["cycles_used"] == 8
    assert any(w.startswith("Cycle 4 is left out of the plant values") for w in a["warnings"])
    # the plain mean over all nine would be far off: the test can fail
    assert abs(np.mean([c["resistance"] for c in a["cycles"]]) / ALPHA - 1) > 0.10
    # the summary within 1 % of the truth (alpha) and 2 % (clean cloth), its error honest
    assert a["plant"]["resistance"] == pytest.approx(ALPHA, rel=0.01)
    assert abs(a["plant"]["resistance"] - ALPHA) < 4 * a["plant"]["resistance_stderr"]
    assert a["plant"]["medium_resistance"] == pytest.approx(R0, rel=0.02)
    assert a["calibration"]["resistance_ratio"] == pytest.approx(ALPHA / 1.8e11, rel=0.01)
    assert a["cloth"]["washes"] == [] and not a["alpha_drift"]["flagged"]
    assert a["model"]["calibrated_filtrate_throughput"] == pytest.approx(a["model"]["filtrate_throughput"], rel=0.15)
    # nor is it drawn on the trend charts, which say so
    from server.presslogcharts import presslog_figures

    alpha_fig = presslog_figures(a)["alpha"]
    assert 4 not in alpha_fig["data"][0]["x"] and len(alpha_fig["data"][0]["x"]) == 8
    assert "(cycle 4 left out: invalid fit)" in alpha_fig["layout"]["title"]["text"]


def test_a_coarse_log_step_is_said_to_leave_the_cloth_unresolved(client):
    # feeds that start between two rows of a log written every 10 s: R_m cannot be told from
    # the cake resistance of the filtrate the log missed (tests/solver/test_logfit.py measures it)
    log = synthetic_log(cycles=12, growth=0.02, wash_every=6, noise=0.005, seed=53, step=10.0, late_start=True,
                        grid=50_001)
    a = post(client, csv=to_csv(log)).json()
    assert not a["plant"]["medium_resistance_resolved"] and not a["cloth"]["resolved"]
    assert a["plant"]["log_step"] == 10.0 and 0.5 < a["plant"]["log_step_needed"] < 5.0
    coarse = [w for w in a["warnings"] if "too coarse to resolve the cloth" in w]
    assert len(coarse) == 1 and "step of 10 s" in coarse[0] and "No cloth-wash interval" in coarse[0]
    assert a["cloth"]["wash_interval"] is None  # the scenario has a cloth wash time: only the step stops it
    assert a["calibrated_inputs"]["medium_resistance"] == SCENARIO["medium_resistance"]
    assert a["calibrated_inputs"]["cake"]["resistance"] == a["plant"]["resistance"]
    assert a["plant"]["resistance"] == pytest.approx(ALPHA, rel=0.01)  # alpha is resolved


@pytest.mark.parametrize("washes, words", [
    ([], "No cloth wash marked in the log (10 cycles)"),
    ([6], "Cloth wash marked before\n    cycle 6; 5 cycles since the last"),
    ([4, 8], "Cloth washes marked before\n    cycles 4 and 8; 3 cycles since the last"),
])
def test_the_page_says_cycle_or_cycles_as_the_count_wants(client, washes, words):
    log = synthetic_log(cycles=10, growth=0.02, wash_every=50, noise=0.005, seed=55)
    r = client.post("/ui/press-log", json={"inputs": SCENARIO, "csv": to_csv(log), "cloth_washes": washes})
    assert r.status_code == 200, r.text[:300]
    html = r.json()["html"]
    assert words in html
    assert "cycles 6;" not in html and "– (none)" not in html and "1 cycles" not in html
    # what each throughput counts is said beside them
    assert "They count different cycles" in html and "the scenario's downtime" in html and "as the plant ran them" in html


def test_a_calibrated_copy_from_a_log_with_a_bad_cycle_says_so_in_its_note(client):
    r = post(client, csv=to_csv(corrupted_log()), save={"name": "from a log with a bad cycle"})
    assert r.status_code == 200, r.text[:300]
    saved = client.get(f"/api/v1/scenarios/{r.json()['saved']['id']}").json()
    assert "8 of 9 cycles, 1 left out as invalid fits" in saved["note"] and "(median)" in saved["note"]
    assert saved["inputs"]["cake"]["resistance"] == pytest.approx(ALPHA, rel=0.01)


def test_the_cycle_number_axes_tick_whole_cycles_only(answer):
    # a plant engineer saw ticks at 0.5, 1.5, 2.5 on a 3-cycle log: a cycle number is a count
    from server.presslogcharts import presslog_figures

    figs = presslog_figures(answer)
    for name in ("alpha", "cloth", "throughput"):
        axis = figs[name]["layout"]["xaxis"]
        assert axis["title"]["text"] == "Cycle number"
        assert axis["tickmode"] == "linear" and axis["tick0"] == 0 and axis["tickformat"] == "d", name
        assert isinstance(axis["dtick"], int) and axis["dtick"] >= 1, name
    # three cycles: a tick at every cycle; 500 cycles: whole steps of 1, 2 or 5 times a power of ten, at most 9 ticks
    few = {**answer, "cycles": [c for c in answer["cycles"] if c["number"] <= 3]}
    assert presslog_figures(few)["alpha"]["layout"]["xaxis"]["dtick"] == 1
    many = {**answer, "cycles": [{**answer["cycles"][0], "number": k} for k in range(1, 501)]}
    assert presslog_figures(many)["throughput"]["layout"]["xaxis"]["dtick"] == 100


HYDROXIDE = json.loads((Path(__file__).resolve().parent.parent / "demo_cases" / "hydroxide_sludge.json").read_text())


def test_a_flow_or_pressure_in_the_wrong_unit_is_said_loudly_and_not_calibrated(client):
    """A plant engineer's log of the hydroxide demo (chambers full at 12.5 m³) with L/min values
    under an [m3/h] header gave cycles of 108 m³ each, and one in kPa under [bar] 600 bar, both
    with a calibrated copy and no word. Three cycles of the exact model (synthetic), well within the chambers."""
    log = synthetic_log(cycles=3, alpha=2.1e12, growth=0.0, noise=0.005, seed=5)
    csv = to_csv(log)
    body = {"inputs": HYDROXIDE["inputs"]}
    good = client.post("/api/v1/press-log", json={**body, "csv": csv}).json()
    assert good["log_checks"]["chambers_full_volume"] == pytest.approx(12.4778, rel=1e-4)
    assert good["log_checks"]["cycles_beyond_chambers"] == [] and not good["log_checks"]["calibration_withheld"]
    assert good["calibrated_inputs"] is not None
    # 1 L/min is 0.06 m³/h: read as m³/h the filtrate is 1/0.06 = 16.7 times too much
    r = client.post("/api/v1/press-log", json={**body, "csv": csv.replace("[L/min]", "[m3/h]")})
    assert r.status_code == 200, r.text[:300]
    a = r.json()
    assert a["cycles"][0]["filtrate_volume"] == pytest.approx(good["cycles"][0]["filtrate_volume"] / 0.06, rel=1e-9)
    assert a["log_checks"]["cycles_beyond_chambers"] == [1, 2, 3] and a["log_checks"]["calibration_withheld"]
    assert a["calibrated_inputs"] is None and a["model"].get("calibrated_filtrate_throughput") is None
    w = a["warnings"][0]
    V = np.median([c["filtrate_volume"] for c in a["cycles"]])
    assert V > 3 * 12.4778  # far beyond the chambers
    assert w.startswith(f"Cycles 1, 2 and 3 collect {V:.3g} m³ of filtrate") and "chambers are full at 12.5 m³" in w
    assert "'filtrate flow [m3/h]'" in w and "read as L/min" in w
    assert error_of(client.post("/api/v1/press-log", json={**body, "csv": csv.replace("[L/min]", "[m3/h]"),
                                                           "save": {"name": "x"}}))[0] == "save"
    # kPa under [bar]: 100 times the pressure
    lines = csv.strip().split("\n")
    kpa = "\n".join([lines[0]] + [f"{t},{float(p) * 100:.9g},{q}" for t, p, q in (x.split(",") for x in lines[1:])])
    a = client.post("/api/v1/press-log", json={**body, "csv": kpa}).json()
    assert a["log_checks"]["max_pressure"] == pytest.approx(100 * good["log_checks"]["max_pressure"], rel=1e-9)
    assert a["calibrated_inputs"] is None and a["log_checks"]["calibration_withheld"]
    w = a["warnings"][0]
    assert w.startswith("The feed pressure in cycles 1, 2 and 3 reaches 6") and "usual 3–20 bar" in w
    # how many times the usual top (20 bar) the highest pressure is; the likely unit named beside it
    off = f"is {round(a['log_checks']['max_pressure'] / 20e5)} times too large for the usual range"
    assert off in w and "Read as kPa" in w and "rated pressure" in w
    # nothing below contradicts it (the coarse-step warning spoke of a calibrated copy)
    assert not any("calibrated copy keeps" in x for x in a["warnings"]), a["warnings"]
    # the checks' own words, and the page shows them in a box above the results, once
    assert a["log_checks"]["warnings"] == [w]
    html = client.post("/ui/press-log", json={**body, "csv": kpa}).json()["html"]
    box = html.split('data-testid="log-checks"')[1].split("</div>")[0]
    assert off in box and "rated pressure" in box
    assert html.count(off) == 1
    good_page = client.post("/ui/press-log", json={**body, "csv": csv}).json()
    assert 'data-testid="log-checks"' not in good_page["html"] and good_page["calibrated"] is True
    # nothing to save from the slipped log: the page hides its save button (it answered "nothing to save")
    page = client.post("/ui/press-log", json={**body, "csv": kpa}).json()
    assert page["calibrated"] is False and "(the log as its headers read: see above)" in page["html"]


def test_a_pressure_well_above_the_scenarios_is_said_once_in_bar(client):
    # within the usual range of presses but twice the scenario's feed: a warning, its bar value
    # written once (a review saw "6.098 bar (6.098 bar)")
    log = synthetic_log(cycles=3, alpha=2.1e12, growth=0.0, noise=0.005, seed=5)
    lines = to_csv(log).strip().split("\n")
    doubled = "\n".join([lines[0]] + [f"{t},{float(p) * 2:.9g},{q}" for t, p, q in (x.split(",") for x in lines[1:])])
    a = client.post("/api/v1/press-log", json={"inputs": HYDROXIDE["inputs"], "csv": doubled}).json()
    said = [w for w in a["warnings"] if "well above the scenario's" in w]
    assert len(said) == 1 and said[0].count(" bar") == 2, said  # the log's figure and the scenario's
    assert not a["log_checks"]["calibration_withheld"]
