"""When does a saved scenario's page say the solver now gives other figures?"""

from server.scenarios import differences


def test_round_off_at_the_optimum_scans_resolution_is_not_a_change():
    # a faster path moved a pump-fed optimum's place by ~3e-9 relative (issue 12): the page
    # shows 3-4 significant figures, so that is the same figure; a change in the 4th is not
    saved = {"best": {"filtration_time": 1000.0, "limited_by": "optimum"}}
    assert differences(saved, {"best": {"filtration_time": 1000.0 * (1 + 3e-9), "limited_by": "optimum"}}) == []
    moved = differences(saved, {"best": {"filtration_time": 1000.4, "limited_by": "optimum"}})
    assert [name for name, _, _ in moved] == ["best.filtration_time"]
    assert differences(saved, {"best": {"filtration_time": 1000.0, "limited_by": "chambers_full"}})


def test_results_saved_before_the_whole_cycle_still_draw():
    """A saved page of results from before squeeze, blow and specifications (their fields
    missing) draws with the fields at their defaults, and the saved figures unchanged."""
    import json

    from server.app import create_app
    from server.display import Units
    from server.schemas.cycle import CycleRequest
    from server.solve import solve
    from server.views import render_results
    from tests.test_pages import PROJECT_ROOT

    app = create_app()
    body = json.loads((PROJECT_ROOT / "demo_cases" / "iron_oxide_pigment.json").read_text())["inputs"]
    solved = solve(CycleRequest.model_validate(body), with_chart_series=True)
    old = json.loads(json.dumps(solved.results))
    added = ["fill_time", "squeeze_time", "blow_time", "squeeze_filtrate_volume", "consolidation", "wash_pore_volumes",
             "wash_filtrate_volumes", "solute_removal", "moisture", "cake_thickness_final", "meets_specs"]
    for part in [old[k] for k in ("best", "unconstrained_optimum", "chambers_full", "at_end")] + [
            row[k] for row in old["thickness_comparison"] for k in ("best", "chambers_full")]:
        for k in added:
            part.pop(k)
    del old["stage_order"], old["specs"]
    html, figs = render_results(app.state.templates, old, solved.chart_series, Units("si"))
    assert 'data-testid="headline"' in html and "whole-cycle" not in html and "washing" not in figs
    assert "solute_removal" not in old["best"]  # the saved dict itself is not changed
