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
